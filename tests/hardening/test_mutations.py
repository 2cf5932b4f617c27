"""Mutated inputs: every reader returns or raises our error naming file (and line), within bounds.

Issue 6, item 1. What already exists elsewhere and is not repeated here: in-process byte-level
mutations of ONE real file per reader (tests/fab/test_excellon.py, test_ipc356.py,
test_jobfile.py with tests/board/fuzz.py), of one hand-written Gerber file (tests/fab/
test_gerber.py) and of one config (tests/design/test_config.py). Those run the reader in the test
process, so a hang would stop the suite and a memory bomb would take the machine, and they do not
look at the line number. This module adds:

* every real file of ../shared/corpus for each reader (small ones in the suite, all in
  bench/fuzz_long.py), and generated valid files (Gerber from test_generated_gerber's independent
  generator; Excellon, IPC-D-356, job files and configs from small writers below);
* structured mutations: bit flips, truncation, line duplication / deletion / swap, numbers made
  huge (or NaN / inf / long zero runs), insertion of the reader's own commands (step-and-repeat,
  regions, polarity, apertures, macro and block statements, repeat codes, nested JSON, ...);
* each example in a worker process (tests/hardening/__init__.py) with a time bound
  (TIME_BOUND_S per example, the parent kills the worker past it) and a memory bound
  (RLIMIT_AS = MEMORY_BOUND_BYTES inside the worker);
* the contract checked by ``problem``: the reader returns, or raises InputError / LimitError /
  ConfigError naming the file, with a line inside the file or None (the whole file); no other
  exception, no hang, no death; read_gerber's last-resort wrapper ("cannot read this Gerber file
  (...)", no line) counts as a bug too.
"""

from __future__ import annotations

import json
import random
import re
from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from sensorcheck.design.config import load_config
from sensorcheck.errors import ConfigError, InputError
from sensorcheck.fab.excellon import read_excellon
from sensorcheck.fab.gerber import read_gerber
from sensorcheck.fab.jobfile import read_jobfile

from hardening import CORPUS, MASKED_BUG_PREFIX, Reader, Worker, corpus_files, problem
from hardening.test_generated_gerber import generated_gerber, programs

#: corpus files at most this big are mutated in the suite (bench/fuzz_long.py takes every file)
SUITE_MAX_SEED_BYTES = 64 * 1024

# ----------------------------------------------------------------------------- command vocabularies

GERBER_COMMANDS = [
    "%SRX1000Y1000I0.1J0.1*%", "%SRX2Y2I1J1*%", "%SR*%", "%LPC*%", "%LPD*%", "G36*", "G37*", "G74*", "G75*",
    "G02*", "G03*", "X1I99999999J0D01*", "G03X0Y0I1J0D01*", "%ADD99C,99999*%", "%ADD98P,1X999999X0*%",
    "%ADD97R,0X0*%", "%ADD96O,1e300X1*%", "%AMBIG*4,1,99999,0,0,0,0*%", "%AMREC*$1=$1+1*1,1,$1,0,0*%",
    "%ADD95BIG*%", "%ADD94REC,1*%", "D99*", "D94*", "X999999999999Y-999999999D03*", "X-1Y-1D02*",
    "%LR45*%", "%LR1e308*%", "%LMXY*%", "%LS1000000*%", "%LS0*%", "%ABD50*%", "%AB*%", "D50*", "%MOIN*%",
    "%MOMM*%", "%FSLAX66Y66*%", "%FSLAX26Y26*%", "%TO.N,X*%", "%TD*%", "%TA.AperFunction,Conductor*%",
    "G04 #@! TO.N,GND*", "M02*", "%IPNEG*%", "%SFA2B2*%", "%OFA1B1*%", "%IR90*%", "%MIA1*%", "%INx*%",
    "G54D10*", "G70*", "G71*", "G90*", "G91*", "M00*", "M01*", "*", "%", "G01X5000000Y5000000D01*",
]
EXCELLON_COMMANDS = [
    "M48", "METRIC,TZ", "METRIC,LZ,000.000", "INCH,LZ", "T1C99999", "T2C0.0", "T3C-1", "T1", "T2", "T99",
    "R99999X1Y1", "R2000001X0.001", "R3X1", "G85X1Y1", "X1Y1G85X2Y2", "G02X10Y10A5", "G03X1Y1A0.0000001",
    "G00X1Y1", "M15", "M16", "G01X5Y5", "M17", "M30", "%", "G05", "G90", "G91", "M71", "M72", "FMAT,1",
    "FMAT,2", "T0", "X99999999999999Y1", "X-Y-", "M47,hello", ";FILE_FORMAT=9:9", "ICI,ON", "G93X1Y1",
    "; #@! TF.FileFunction,NonPlated,1,2,NPTH", "M25", "M01", "M02X1Y1", "M08", "P2", "G87",
]
IPC356_COMMANDS = [
    "P  UNITS CUST 0", "P  UNITS CUST 1", "P  UNITS SI", "P  UNITS CUST 9", "999", "C  comment",
    "317GND              VIA        MD0157PA00X+999999Y-999999X0236Y0000R000S3",
    "317                 U1    -1   D9999PA00X+000000Y+000000X9999Y9999R999S0",
    "327SIG              U1    -2         A01X-000100Y+000200X0100Y0100R045S1",
    "367N                U1    -3         A02X+000000Y+000000X0000Y0000R000S0",
    "317X", "327", "317NET" + " " * 40 + "X+Y-", "089continuation",
]
JOB_SNIPPETS = [
    '"Thickness": 1e999', '"LayerNumber": -1', '"BoardThickness": "x"', "[" * 3000 + "]" * 3000,
    '"MaterialStackup": 5', '{"Type":"Dielectric","Thickness":"x"}', "null", '"FilesAttributes": [{}]',
    '"DielectricConstant": 0.5', '"GeneralSpecs": []', "\x00", '"Path": 7', ",", "}", "{", '"', "\ufeff",
]
CONFIG_SNIPPETS = [
    "[limits]\nmax_gerber_objects = -1", "[limits]\nmax_vertices = 1e308", "[limits]\nnope = 1",
    "[[overlay.layers]]\nthickness_mm = 1e308", "[[overlay.layers]]\nepsilon_r = nan", "[estimate]\nheights = 99999999999",
    "a = " + "[" * 2000 + "]" * 2000, "[board]\nface = 'side'", "[[waivers]]\nrule = 'x'", "[finger]\ndevice_ground = -1",
    "[files]\n'[' = 'top-copper'", "[roles]\nself = ['[']", "profile = '../../../etc/passwd'", "profile = ''",
    "[[roles.place]]\nlayer = 'top-copper'\nbox_mm = [1, 2, 0, 0]\nrole = 'self'\nsensor = 'B'",
    "[rules.'gap.tx-rx-vs-overlay']\nseverity = 'loud'", "[[sensors]]\nname = 's'\nkind = 'slider'\nnets = []",
    "x = 1979-05-27T07:32:00Z", "x = 0x7fffffffffffffffffff", "\ufeff", "\x00",
]
COMMANDS: dict[Reader, list[str]] = {"gerber": GERBER_COMMANDS, "excellon": EXCELLON_COMMANDS,
                                     "ipc356": IPC356_COMMANDS, "jobfile": JOB_SNIPPETS, "config": CONFIG_SNIPPETS}
HUGE = ["9" * 20, "9" * 400, "-" + "9" * 40, "0" * 500 + "1", "1e308", "1e-308", "nan", "inf", "-0", "4294967297",
        "18446744073709551617", "1" + "0" * 5000]
EXTENSION: dict[Reader, str] = {"gerber": ".gbr", "excellon": ".drl", "ipc356": ".ipc", "jobfile": ".gbrjob",
                                "config": ".toml"}

# ----------------------------------------------------------------------------- generated valid seeds


def excellon_text(rng: random.Random) -> bytes:
    """A valid Excellon program of our own: header, tools, holes, a slot, a repeat, M30."""
    metric = rng.random() < 0.5
    unit = 1.0 if metric else 1 / 25.4
    tools = {k: round(rng.uniform(0.2, 3.0) * unit, 4) for k in range(1, rng.randint(2, 5))}
    out = ["M48", "METRIC,TZ" if metric else "INCH,TZ", "FMAT,2"]
    out += [f"T{k}C{d}" for k, d in tools.items()]
    out += ["%", "G90", "G05"]
    for k in tools:
        out.append(f"T{k}")
        for _ in range(rng.randint(1, 8)):
            out.append(f"X{rng.uniform(0, 80) * unit:.4f}Y{rng.uniform(0, 60) * unit:.4f}")
        if rng.random() < 0.3:
            out.append(f"X{1 * unit:.4f}Y{1 * unit:.4f}G85X{5 * unit:.4f}Y{1 * unit:.4f}")
        if rng.random() < 0.3:
            out.append(f"R{rng.randint(1, 5)}X{2 * unit:.4f}")
    out += ["T0", "M30", ""]
    return "\n".join(out).encode()


def ipc356_text(rng: random.Random) -> bytes:
    """A valid IPC-D-356 netlist of our own (fixed columns as in the corpus files)."""
    out = ["C  generated by tests/hardening", "P  CODE 00", "P  UNITS CUST 0"]
    for i in range(rng.randint(1, 20)):
        net = f"N{rng.randint(0, 5)}".ljust(14)[:14]
        x, y = rng.randint(0, 99999), rng.randint(0, 99999)
        out.append(f"317{net}   VIA        MD0157PA00X+{x:06d}Y-{y:06d}X0236Y0000R000S3")
        if rng.random() < 0.3:
            # same columns as corpus b01's "327RESISTIVE_KEY0   P7    -CH0        A02X+048023Y-067913..."
            out.append(f"327{net:<14}   {'U' + str(i):<6}-{'1':<4}       A01X+{x:06d}Y-{y:06d}X0100Y0100R000S1")
    out += ["999", ""]
    return "\n".join(out).encode()


def jobfile_text(rng: random.Random) -> bytes:
    layers = rng.choice([2, 4])
    doc = {
        "Header": {"GenerationSoftware": {"Vendor": "tests", "Application": "hardening", "Version": "1"}},
        "GeneralSpecs": {"LayerNumber": layers, "BoardThickness": round(rng.uniform(0.4, 3.2), 2)},
        "FilesAttributes": [{"Path": f"b-L{k}.gbr", "FileFunction": f"Copper,L{k},{'Top' if k == 1 else 'Inr'}"}
                            for k in range(1, layers + 1)],
        "MaterialStackup": [{"Type": "Copper", "Thickness": 0.035, "Name": "F.Cu"},
                            {"Type": "Dielectric", "Thickness": round(rng.uniform(0.1, 1.5), 3), "Material": "FR4",
                             "DielectricConstant": 4.5},
                            {"Type": "Copper", "Thickness": 0.035, "Name": "B.Cu"}],
    }
    return json.dumps(doc, indent=rng.choice([None, 2])).encode()


def config_text(rng: random.Random) -> bytes:
    t = rng.uniform(0.5, 4.0)
    return (f'profile = "default"\n[board]\nface = "{rng.choice(["top", "bottom"])}"\n'
            f'[[overlay.layers]]\nmaterial = "pmma"\nthickness_mm = {t:.2f}\nkind = "overlay"\n'
            f'[roles]\ntransmitter = ["TX*"]\nreceiver = ["RX*"]\nself = ["TOUCH*"]\nground = ["GND"]\n'
            f'[finger]\ncontact_diameter_mm = {rng.uniform(5, 12):.1f}\n[fabrication]\nmin_clearance_mm = 0.15\n'
            f'[estimate]\nenabled = {rng.choice(["true", "false"])}\nheights = {rng.randint(2, 20)}\n').encode()


WRITERS = {"excellon": excellon_text, "ipc356": ipc356_text, "jobfile": jobfile_text, "config": config_text}


def generated_seed(reader: Reader) -> st.SearchStrategy[tuple[str, bytes]]:
    if reader == "gerber":
        return programs.map(lambda ops: ("generated.gbr", generated_gerber(ops)))
    writer = WRITERS[reader]
    return st.randoms(use_true_random=False).map(lambda rng: (f"generated{EXTENSION[reader]}", writer(rng)))


def corpus_seed(reader: Reader, max_bytes: int | None) -> st.SearchStrategy[tuple[str, bytes]] | None:
    files = [p for p in corpus_files(reader) if max_bytes is None or p.stat().st_size <= max_bytes]
    if not files:
        return None
    return st.sampled_from(files).map(lambda p: (f"{p.parent.parent.name}-{p.name}", p.read_bytes()))


# ----------------------------------------------------------------------------- mutations


def _lines(data: bytes) -> list[bytes]:
    return data.split(b"\n")


def mutate(data: bytes, ops: list[tuple], reader: Reader) -> bytes:
    """Apply mutation ops (see ``mutation_ops``) in turn; positions wrap around the current data."""
    d = data
    for op in ops:
        kind, pos = op[0], op[1]
        if kind == "flip":
            if d:
                i = pos % len(d)
                d = d[:i] + bytes([d[i] ^ (1 << op[2])]) + d[i + 1:]
        elif kind == "truncate":
            d = d[: pos % (len(d) + 1)]
        elif kind in ("dup_line", "del_line", "swap_lines"):
            lines = _lines(d)
            i = pos % len(lines)
            if kind == "dup_line":
                lines.insert(i, lines[i])
            elif kind == "del_line":
                del lines[i]
            else:
                j = op[2] % len(lines)
                lines[i], lines[j] = lines[j], lines[i]
            d = b"\n".join(lines)
        elif kind == "huge":
            # the digit run at or after pos becomes a huge / special number
            if d:
                i = pos % len(d)
                j = i
                while j < len(d) and not chr(d[j]).isdigit():
                    j += 1
                k = j
                while k < len(d) and chr(d[k]).isdigit():
                    k += 1
                d = d[:j] + op[2].encode() + d[k:]
        elif kind == "command":
            lines = _lines(d)
            cmd = COMMANDS[reader][op[2] % len(COMMANDS[reader])]
            lines.insert(pos % (len(lines) + 1), cmd.encode())
            d = b"\n".join(lines)
        else:  # "bytes": raw insertion
            i = pos % (len(d) + 1)
            d = d[:i] + op[2] + d[i:]
    return d


def mutation_ops() -> st.SearchStrategy[list[tuple]]:
    pos = st.integers(0, 2**31)
    one = st.one_of(
        st.tuples(st.just("flip"), pos, st.integers(0, 7)),
        st.tuples(st.just("truncate"), pos),
        st.tuples(st.sampled_from(["dup_line", "del_line"]), pos),
        st.tuples(st.just("swap_lines"), pos, pos),
        st.tuples(st.just("huge"), pos, st.sampled_from(HUGE)),
        st.tuples(st.just("command"), pos, st.integers(0, 1000)),
        st.tuples(st.just("command"), pos, st.integers(0, 1000)),
        st.tuples(st.just("bytes"), pos, st.binary(min_size=1, max_size=16)),
    )
    return st.lists(one, min_size=1, max_size=5)


@dataclass(frozen=True)
class Example:
    """One mutated input; its repr (shown by hypothesis on failure) names the seed and the ops, not the bytes."""

    name: str
    data: bytes
    ops: list[tuple]

    def __repr__(self) -> str:
        ops = [tuple(v if not isinstance(v, (str, bytes)) or len(v) < 40 else f"{v[:10]!r}...({len(v)})" for v in op)
               for op in self.ops]
        return f"Example({self.name!r}, {len(self.data)} bytes, ops={ops})"


def examples(reader: Reader, max_seed_bytes: int | None) -> st.SearchStrategy[Example]:
    """Mutated real corpus files and generated valid files."""
    seeds = generated_seed(reader)
    corpus = corpus_seed(reader, max_seed_bytes)
    if corpus is not None:
        seeds = st.one_of(corpus, corpus, seeds)  # two thirds real files where there are some
    return st.tuples(seeds, mutation_ops()).map(lambda s: Example(f"m-{s[0][0]}", mutate(s[0][1], s[1], reader), s[1]))


# ----------------------------------------------------------------------------- the properties


@pytest.fixture(scope="module")
def worker() -> Iterator[Worker]:
    with Worker() as w:
        yield w


#: Reader bugs found by this fuzzing, each pinned by a strict xfail reproducer in this module
#: (when the owner fixes one, its reproducer XPASSes and fails: then delete the entry here).
#: The properties tolerate a known bug's signature so that they keep looking for new ones.
KNOWN_BUGS: dict[str, tuple[Reader, str, re.Pattern[bytes]]] = {
    # reader bugs found by these properties and not yet fixed: key -> (reader, text of the problem,
    # pattern of the input). Empty: every bug found so far is fixed, its reproducer below a plain test.
}


def known_bug(reader: Reader, found: str, data: bytes) -> str | None:
    for key, (r, text, rx) in KNOWN_BUGS.items():
        if r == reader and text in found and rx.search(data):
            return key
    return None


def check(worker: Worker, reader: Reader, name: str, data: bytes) -> str | None:
    """The contract violation for this input (None: it holds, or only a known bug showed)."""
    found = problem(worker.run(reader, data, name), name, data)
    if found is not None and known_bug(reader, found, data):
        return None
    return found


#: in-suite examples per reader: the whole module stays under about 90 s on a 2-core machine
SUITE_EXAMPLES: dict[Reader, int] = {"gerber": 300, "excellon": 250, "ipc356": 200, "jobfile": 200, "config": 200}


def _property(reader: Reader):  # type: ignore[no-untyped-def]
    @settings(max_examples=SUITE_EXAMPLES[reader], deadline=None, database=None,
              suppress_health_check=[HealthCheck.function_scoped_fixture, HealthCheck.too_slow,
                                     HealthCheck.data_too_large])
    @given(example=examples(reader, SUITE_MAX_SEED_BYTES))
    def prop(worker: Worker, example: Example) -> None:
        found = check(worker, reader, example.name, example.data)
        assert found is None, f"{reader} reader on {example!r}: {found}"

    return prop


test_mutated_gerber_files = _property("gerber")
test_mutated_excellon_files = _property("excellon")
test_mutated_ipc356_netlists = _property("ipc356")
test_mutated_job_files = _property("jobfile")
test_mutated_configs = _property("config")


# ----------------------------------------------------------------------------- reader bugs found here
# Minimal reproducers of the KNOWN_BUGS above, each strict xfail: they state the behaviour the
# contract asks for (sensorcheck/errors.py: our error, naming file and line) and fail today.

BIG = "1" + "0" * 5000  # 5001 digits: past Python's default int_max_str_digits (4300)
HEAD = "%FSLAX46Y46*%\n%MOMM*%\n%ADD10C,0.5*%\nD10*\n"


def _gerber_error(text: str) -> InputError:
    with pytest.raises(InputError) as info:
        read_gerber(text.encode(), "bug.gbr")
    return info.value


def test_bug_gerber_coordinate_overflowing_float_names_its_line() -> None:
    err = _gerber_error(HEAD + "X" + "9" * 400 + "Y0D03*\nM02*\n")
    assert err.line == 5 and not err.message.startswith(MASKED_BUG_PREFIX)


def test_bug_gerber_arc_with_zero_float_radius_names_its_line() -> None:
    # refused where the coordinate is written (line 5), before the arc could divide by its radius
    err = _gerber_error(HEAD + "X100000000000000000000000Y0D02*\nG75*\nG02X0Y0I1J0D01*\nM02*\n")
    assert err.line == 5 and not err.message.startswith(MASKED_BUG_PREFIX)


@pytest.mark.parametrize("aperture", ["C,1e300", "C,nan", "P,0.560X11Xnan"])
def test_bug_gerber_absurd_aperture_parameter_names_its_line(aperture: str) -> None:
    err = _gerber_error(f"%FSLAX46Y46*%\n%MOMM*%\n%ADD10{aperture}*%\nD10*\nX0Y0D03*\nM02*\n")
    assert err.line is not None and not err.message.startswith(MASKED_BUG_PREFIX)


def test_bug_excellon_absurd_file_format_is_an_input_error() -> None:
    text = "M48\n;FILE_FORMAT=99999999999999999999:5\nINCH,LZ\nT1C0.8\n%\nT1\nX1000Y1000\nM30\n"
    with pytest.raises(InputError) as info:
        read_excellon(text.encode(), "bug.drl")
    assert info.value.line in (2, 7)


def test_bug_excellon_coordinate_of_401_digits_is_an_input_error() -> None:
    text = "M48\nMETRIC\nT1C0.8\n%\nT1\nX1Y8" + "0" * 400 + "\nM30\n"
    with pytest.raises(InputError) as info:
        read_excellon(text.encode(), "bug.drl")
    assert info.value.line == 6


@pytest.mark.parametrize("program", [f"M48\nMETRIC\nT{BIG}C0.8\n%\nT1\nX1Y1\nM30\n",
                                     f"M48\nMETRIC\nT1C0.8\n%\nT1\nX{BIG}Y1\nM30\n",
                                     f"M48\nMETRIC\nT1C0.8\n%\nT1\nX1Y1\nR{BIG}X1\nM30\n"],
                         ids=["tool-number", "coordinate", "repeat-count"])
def test_bug_excellon_number_of_5001_digits_is_an_input_error(program: str) -> None:
    with pytest.raises(InputError) as info:
        read_excellon(program.encode(), "bug.drl")
    assert info.value.line is not None


def test_bug_job_file_integer_of_5001_digits_is_an_input_error() -> None:
    with pytest.raises(InputError):
        read_jobfile(('{"GeneralSpecs": {"LayerNumber": ' + BIG + "}}").encode(), "bug.gbrjob")


def test_bug_config_integer_of_5001_digits_is_a_config_error(tmp_path: Path) -> None:
    p = tmp_path / "sensorcheck.toml"
    p.write_text("[estimate]\nheights = " + BIG + "\n")
    with pytest.raises(ConfigError):
        load_config(p)


def test_the_harness_sees_a_hang_and_an_escaped_exception() -> None:
    # The properties above can only fail if the harness notices a foreign exception and a hang:
    # an unknown reader name makes call_reader raise ValueError (a foreign exception), and a valid
    # 20000-draw file cannot be read within a 1 ms bound (a hang, as the parent sees it).
    with Worker(time_bound_s=60) as w:
        out = w.run("nonsense", b"", "x.bin")  # type: ignore[arg-type]
        assert out.kind == "escaped" and out.error_type == "ValueError"
        assert problem(out, "x.bin", b"") is not None
    with Worker(time_bound_s=0.001) as w:
        big = b"%FSLAX46Y46*%\n%MOMM*%\n%ADD10C,0.1*%\nD10*\n" + b"X0Y0D02*\nX1000000Y1000000D01*\n" * 20000 + b"M02*\n"
        out = w.run("gerber", big, "slow.gbr")
        assert out.kind == "hang" and "hang guard" in (out.error or "")  # the message says what it is
        assert problem(out, "slow.gbr", big) is not None
        # the worker is restarted for the next example
        w.time_bound_s = 60
        assert w.run("gerber", b"%FSLAX46Y46*%%MOMM*%M02*", "ok.gbr").kind == "ok"


def test_the_memory_bound_holds_in_the_worker() -> None:
    # RLIMIT_AS inside the worker: an allocation of 4 GiB fails there (MemoryError) instead of
    # growing the machine's memory; read_gerber turns MemoryError into a LimitError, so a bomb that
    # reaches the allocator is still a clear error. Checked with a direct allocation in the worker.
    import sys

    from hang_guard import run
    from hardening import MEMORY_BOUND_BYTES, REPO

    code = ("import sys; sys.path.insert(0, sys.argv[1]); from hardening import _apply_memory_bound as a; "
            f"a({MEMORY_BOUND_BYTES}); \ntry:\n    b = bytearray(4 * 1024**3)\nexcept MemoryError:\n    print('refused')")
    out = run([sys.executable, "-c", code, str(REPO / "tests")], guard_s=300)
    assert out.stdout.strip() == "refused"


def test_the_mutations_change_their_input() -> None:
    # a mutation that leaves the file unchanged would test nothing: each kind changes a sample
    base = b"%FSLAX46Y46*%\n%MOMM*%\n%ADD10C,0.5*%\nD10*\nX100Y200D03*\nM02*\n"
    for op in [("flip", 3, 0), ("truncate", 10), ("dup_line", 2), ("del_line", 2), ("swap_lines", 1, 4),
               ("huge", 0, "9" * 30), ("command", 3, 0), ("bytes", 5, b"\xff")]:
        assert mutate(base, [op], "gerber") != base, op


def test_corpus_present_or_skip() -> None:
    if not CORPUS.is_dir():
        pytest.skip("../shared/corpus is not present: the properties fuzz generated files only")
    assert corpus_files("gerber") and corpus_files("excellon") and corpus_files("ipc356")


def seed_sizes(reader: Reader) -> list[tuple[str, int]]:
    """Names and sizes of the corpus seeds of one reader (for bench/fuzz_long.py's summary)."""
    return [(f"{p.parent.parent.name}/{p.name}", p.stat().st_size) for p in corpus_files(reader)]



@pytest.mark.parametrize("reader", ["excellon", "ipc356", "jobfile", "config"])
def test_generated_seeds_are_valid_files(reader: Reader, tmp_path: Path) -> None:
    # the "generated valid files" the mutations start from must be read without error, else the
    # fuzzing would only ever start from files the reader refuses at once
    for seed in range(25):
        data = WRITERS[reader](random.Random(seed))
        if reader == "excellon":
            assert len(read_excellon(data, "g.drl").holes) >= 2
        elif reader == "ipc356":
            from sensorcheck.fab.ipc356 import read_ipc356

            assert read_ipc356(data, "g.ipc")
        elif reader == "jobfile":
            job = read_jobfile(data, "g.gbrjob")
            assert job.board_thickness_mm is not None and job.files
        else:
            p = tmp_path / f"g{seed}.toml"
            p.write_bytes(data)
            assert load_config(p).overlay is not None
