"""File identification: X2 attributes (both forms), job file, EDA naming conventions, content.

External references:
* Gerber Layer Format Specification 2023.08 (Ucamco), section 5.6.3 ``.FileFunction`` values and
  section 5.1 (attributes in the ``G04 #@!`` comment form written by older generators).
* tracespace fixtures ``gerber-filenames.json`` (MIT, github.com/tracespace/tracespace,
  packages/fixtures @ ef2a3f0): example file names of many CAD packages with the layer each one is.
* Real headers from ../shared/corpus (KiCad, Altium) for the forms seen in the field.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from sensorcheck.errors import ConfigError
from sensorcheck.fab.identify import (
    head_file_attributes,
    identify,
    identify_name,
    job_file_functions,
    parse_layer_map,
    sniff,
)

# Gerber spec 5.6.3 examples written in both forms: the extended command and the comment form
X2_CASES = [
    (b"%TF.FileFunction,Copper,L1,Top*%\n", ("copper", "top-copper", "top", 1)),
    (b"G04 #@! TF.FileFunction,Copper,L2,Bot*\n", ("copper", "bottom-copper", "bottom", 2)),
    (b"%TF.FileFunction,Copper,L3,Inr,Plane*%\n", ("copper", "inner2-copper", "inner", 3)),
    (b"%TF.FileFunction,Soldermask,Top*%\n", ("mask", "top-mask", "top", None)),
    (b"G04 #@! TF.FileFunction,Legend,Bot*\n", ("silk", "bottom-silk", "bottom", None)),
    (b"%TF.FileFunction,Paste,Bot*%\n", ("paste", "bottom-paste", "bottom", None)),
    (b"%TF.FileFunction,Profile,NP*%\n", ("outline", "outline", "none", None)),
    (b"%TF.FileFunction,Component,L1,Top*%\n", ("components", "top-components", "top", None)),
    (b"%TF.FileFunction,AssemblyDrawing,Top*%\n", ("other", None, None, None)),
    (b"%TF.FileFunction,Plated,1,4,PTH*%\n", ("drill", "drill", "both", None)),
]


@pytest.mark.parametrize("head, expected", X2_CASES)
def test_x2_file_function_in_either_form_identifies_the_layer(head: bytes, expected: tuple) -> None:
    # a name that says something else: X2 must win over the name (the evidence order)
    ident = identify("misleading-B_SilkS.gbr", b"%FSLAX46Y46*%\n%MOMM*%\n" + head + b"D10*\nM02*\n")
    assert (ident.role, ident.layer, ident.side, ident.copper_number) == expected
    assert ident.identified_by == "x2"


def test_x2_attributes_in_excellon_comments_give_plating() -> None:
    # KiCad's Excellon header (corpus b01): "; #@! TF.FileFunction,NonPlated,1,2,NPTH"
    head = b"M48\n; #@! TF.GenerationSoftware,Kicad,Pcbnew,8.0.2-1\n; #@! TF.FileFunction,NonPlated,1,2,NPTH\nMETRIC\n%\nM30\n"
    ident = identify("x.drl", head)
    assert (ident.role, ident.kind, ident.plated, ident.identified_by) == ("drill", "excellon", False, "x2")
    assert ident.generator == "Kicad Pcbnew 8.0.2-1"
    assert head_file_attributes(head)[".FileFunction"] == ["NonPlated", "1", "2", "NPTH"]


def test_job_file_attributes_identify_files_without_x2() -> None:
    job = json.dumps({"Header": {}, "FilesAttributes": [
        {"Path": "sub/board-a.gbr", "FileFunction": "Copper,L2,Bot"},
        {"Path": "board-b.gbr", "FileFunction": "Soldermask,Top"},
    ]}).encode()
    functions = job_file_functions(job)
    plain = b"%FSLAX46Y46*%\n%MOMM*%\nM02*\n"
    a = identify("board-a.gbr", plain, job_functions=functions)
    b = identify("x/board-b.gbr", plain, job_functions=functions)
    assert (a.layer, a.identified_by) == ("bottom-copper", "jobfile")
    assert (b.layer, b.identified_by) == ("top-mask", "jobfile")


def test_override_wins_over_x2_and_rejects_unknown_layers() -> None:
    mapping = parse_layer_map(["*.gtl=bottom-copper", "odd*=inner2-copper"])
    head = b"%TF.FileFunction,Copper,L1,Top*%\n%FSLAX46Y46*%\nM02*\n"
    assert identify("a/b.GTL", head, layer_map=mapping).layer == "bottom-copper"
    inner = identify("odd.gbr", head, layer_map=mapping)
    assert (inner.layer, inner.copper_number, inner.identified_by) == ("inner2-copper", 3, "override")
    with pytest.raises(ConfigError, match="unknown layer"):
        parse_layer_map(["*.gtl=top-cooper"])
    with pytest.raises(ConfigError, match="GLOB=LAYER"):
        parse_layer_map(["*.gtl"])


# The tracespace type vocabulary -> ours (source: gerber-filenames.json, named above)
TRACESPACE_TYPE = {
    "copper": "copper", "soldermask": "mask", "silkscreen": "silk", "solderpaste": "paste",
    "outline": "outline", "drill": "drill", "drawing": "other", None: None,
}
TRACESPACE_SIDE = {"top": "top", "bottom": "bottom", "inner": "inner", "all": None, None: None}
#: where we disagree with the fixture, and why (each entry is checked to still disagree)
TRACESPACE_DISAGREE = {
    # a KiCad .pos file is a component placement list: we read it for component positions
    "board-top.pos": "components",
    "board-bottom.pos": "components",
    # a centroid CSV is a pick-and-place file: read for component positions
    "board_centroid.csv": "components",
    # the fixture lists "board.DRD" as an OrCAD outline and "board.drd" as an Eagle drill file:
    # the same name cannot be both; by name we say drill, and the content decides on real files
    "board.DRD": "drill",
    # gEDA's "fab" layer is the fabrication drawing (drill symbols and notes), not an Excellon file
    "board.fab.gbr": "other",
}


def _tracespace_cases(shared: Path) -> list[tuple[str, str, dict]]:
    doc = json.loads((shared / "gerber-suites/tracespace-fixtures/gerber-filenames.json").read_text())
    return [(c["cad"], f["name"], f) for c in doc for f in c["files"]]


def test_file_names_of_common_eda_tools_match_tracespace_fixture(shared_dir: Path) -> None:
    cases = _tracespace_cases(shared_dir)
    assert len(cases) > 100
    wrong = []
    for cad, name, entry in cases:
        ident = identify_name(name)
        expected_role = TRACESPACE_TYPE[entry["type"]]
        if name in TRACESPACE_DISAGREE:
            assert ident.role == TRACESPACE_DISAGREE[name] != expected_role, name
            continue
        side_ok = expected_role not in ("copper", "mask", "silk", "paste") or ident.side == TRACESPACE_SIDE[entry["side"]]
        if ident.role != expected_role or not side_ok:
            wrong.append((cad, name, entry["type"], entry["side"], ident.role, ident.side))
    assert not wrong


def test_inner_layer_numbers_from_names() -> None:
    # KiCad In1_Cu, Eagle .ly2 (layer 2 = first inner), Altium .G1 (mid layer 1), DipTrace Inner2
    assert identify_name("b-In1_Cu.gbr").copper_number == 1
    assert identify_name("b-In2.Cu.g3").copper_number == 2
    assert identify_name("board.ly2").copper_number == 1
    assert identify_name("board.G1").copper_number == 1
    assert identify_name("Inner2.gbr").copper_number == 2
    assert identify_name("button-board-CuIn2.gbr").copper_number == 2


@pytest.mark.parametrize(
    "name, expected",
    [
        ("Gerber_TopLayer.GTL", ("copper", "top")),  # EasyEDA
        ("Gerber_BottomSolderMaskLayer.GBS", ("mask", "bottom")),  # EasyEDA
        ("Gerber_TopPasteMaskLayer.GTP", ("paste", "top")),  # EasyEDA: "paste mask" is paste
        ("Gerber_BoardOutlineLayer.GKO", ("outline", "none")),  # EasyEDA
        ("CADCAM Top Copper.GBR", ("copper", "top")),  # Proteus
        ("CADCAM Bottom Solder Resist.GBR", ("mask", "bottom")),  # Proteus
        ("CADCAM Top Silk Screen.GBR", ("silk", "top")),  # Proteus
        ("CADCAM Top SMT Paste.GBR", ("paste", "top")),  # Proteus
        ("board.GP1", ("copper", "inner")),  # Altium internal plane 1
        ("board-NPTH.drl", ("drill", "both")),
        ("SOLDERMASK_TOP.art", ("mask", "top")),  # OrCAD/Allegro artwork names (from memory)
        ("PASTEMASK_BOTTOM.art", ("paste", "bottom")),  # Allegro: "paste mask" is paste
        ("x-t-B_Cu.gbr", ("copper", "bottom")),  # a one-letter project-name word is not a side
        ("my-b-board-F_Mask.gbr", ("mask", "top")),
    ],
)
def test_more_eda_conventions(name: str, expected: tuple) -> None:
    ident = identify_name(name)
    assert (ident.role, ident.side) == expected


def test_plating_from_drill_file_names() -> None:
    assert identify_name("board-PTH.drl").plated is True
    assert identify_name("board-NPTH.drl").plated is False
    assert identify_name("board.drl").plated is None


def test_content_sniffing() -> None:
    assert sniff(b"M48\nMETRIC,TZ\nT1C0.3\n%\nT1\nX1Y1\nM30\n") == "excellon"
    assert sniff(b"G04 comment*\n%FSLAX24Y24*%\n%MOIN*%\n") == "gerber"
    assert sniff(b"P  JOB x\nP  UNITS CUST 0\n317GND              VIA         D  24PA00X  14900Y   1450X 396Y 396\n999\n") == "ipc356"
    assert sniff(b'{"Header": {}, "FilesAttributes": []}') == "gbrjob"
    assert sniff(b"$HEADER\nGENCAD 1.4\n") == "gencad"
    assert sniff(b"\x00\x01\x02\x89PNG") == "binary"
    assert sniff(b"Ref,Val,Package,PosX,PosY,Rot,Side\n") == "pnp"
    assert sniff(b"PCB thickness: 1.0 mm\nPCB color: green\n") == "text"


def test_weak_drill_extension_needs_excellon_content() -> None:
    note = identify("board-info.txt", b"PCB thickness: 1.0 mm\nPCB color: green\n")
    assert note.role is None and note.note
    drill = identify("board.txt", b"M48\n;TYPE=PLATED\nINCH,LZ\nT01C0.01\n%\nT01\nX00825Y-00425\nM30\n")
    assert (drill.role, drill.kind) == ("drill", "excellon")


def test_garbage_in_a_file_named_drill_is_still_handed_to_the_drill_reader() -> None:
    # the reader then reports what it expected, with a line: never silently "not understood"
    ident = identify("board.drl", b"\x89PNG\r\n\x1a\n\x00\x00garbage")
    assert (ident.role, ident.kind) == ("drill", "excellon")


def test_gerber_without_layer_hint_is_not_understood_but_says_what_to_do() -> None:
    ident = identify("mystery.gbr", b"%FSLAX46Y46*%\n%MOMM*%\nM02*\n")
    assert ident.role is None and ident.kind == "gerber" and "layer map" in (ident.note or "")


@pytest.mark.parametrize(
    "board, expected",
    [
        # from reading each file's head in ../shared/corpus (b07: Altium, names only; its drill file
        # is a .TXT, its reports .DRR/.LDP/.RUL/.EXTREP/.apr are not fabrication data)
        ("b07-slider-inch", {
            "TouchSlider_ESP32_CAP1208.GTL": "top-copper", "TouchSlider_ESP32_CAP1208.GBL": "bottom-copper",
            "TouchSlider_ESP32_CAP1208.GM3": "outline", "TouchSlider_ESP32_CAP1208.TXT": "drill",
            "TouchSlider_ESP32_CAP1208.DRR": None, "TouchSlider_ESP32_CAP1208.RUL": None,
            "TouchSlider_ESP32_CAP1208-macro.APR_LIB": None, "TouchSlider_ESP32_CAP1208.EXTREP": None,
        }),
        ("b08-usb-key", {
            "fido2-lpc55-Front.gtl": "top-copper", "fido2-lpc55-Back.gbl": "bottom-copper",
            "nk3an133-gaia.cad": None, "nk3an133-gaia-PCB-info.txt": None, "fido2-lpc55-PTH.drl": "drill",
        }),
    ],
)
def test_corpus_heads(shared_dir: Path, board: str, expected: dict) -> None:
    fab = shared_dir / "corpus" / board / "fab"
    for name, layer in expected.items():
        ident = identify(name, (fab / name).read_bytes()[:65536])
        assert ident.layer == layer, name
        if layer is None:
            assert ident.note, name


def test_real_boards_of_the_tracespace_fixtures_by_name_and_content(shared_dir: Path) -> None:
    # tracespace fixtures boards/*/manifest.json: eight real boards (Eagle, KiCad, Altium-style names),
    # each file with the layer type and side its authors state; identified here from the file's
    # name AND head, as the board loader does
    manifests = sorted((shared_dir / "gerber-suites/tracespace-fixtures/boards").glob("*/manifest.json"))
    assert len(manifests) == 8
    checked = 0
    for mf in manifests:
        for entry in json.loads(mf.read_text())["layers"]:
            head = (mf.parent / entry["name"]).read_bytes()[:65536]
            ident = identify(entry["name"], head)
            expected = TRACESPACE_TYPE[entry.get("type")]
            assert ident.role == expected, (mf.parent.name, entry["name"], ident)
            if expected in ("copper", "mask", "silk", "paste"):
                assert ident.side == TRACESPACE_SIDE[entry.get("side")], (mf.parent.name, entry["name"])
            checked += 1
    assert checked > 60


# --- robustness: mutated real files either read or raise our InputError (issue 6, item 1) ----------
from hypothesis import HealthCheck, given, settings  # noqa: E402

from board.fuzz import MUTATIONS, apply  # noqa: E402  (tests/board/fuzz.py)


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(ops=MUTATIONS)
def test_identification_of_mutated_heads_never_raises(shared_dir: Path, ops: list) -> None:
    src = (shared_dir / "corpus/b01-slider-proto/fab/slider_rev_1_0-PTH.drl").read_bytes()
    ident = identify("x.gbr", apply(src, ops))
    assert ident.role is None or ident.kind is not None or ident.role in ("other",)


@pytest.mark.parametrize("name", ["sensorcheck.toml", "hw/fab/sensorcheck.toml", "fab/SensorCheck.TOML"])
def test_our_own_config_is_known_not_a_stray_text_file(name: str) -> None:
    # The config sits beside the fabrication files (README: "finds hw/fab/sensorcheck.toml"), and
    # `init --output` writes one there: it is known and not used as fab data, not "not understood".
    ident = identify(name, b"profile = 'default'\n[board]\nface = 'top'\n")
    assert ident.role == "other" and ident.kind is None and "config" in (ident.note or "")
    other = identify("hw/fab/settings.toml", b"profile = 'default'\n")
    assert other.role is None and "no fabrication format" in (other.note or "")
# --- issue 18: names reported from public export suites of about 25 EDA tools ---------------------
# (the issue lists the names that were missed or mistaken; what each one is follows the tools'
# naming conventions, from memory: "L<n>"/"Layer<n>"/"lyr<n>"/"art<nnn>" number layers from the top)

@pytest.mark.parametrize(
    "name, expected",
    [
        ("board_L01.gbr", ("copper", "top-copper", 1, True)),
        ("board_L02.gbr", ("copper", "inner1-copper", 2, True)),
        ("board_L11.gbr", ("copper", "inner10-copper", 11, True)),
        ("copper_inner_l2.gbr", ("copper", "inner1-copper", 2, True)),
        ("Layer2.pho", ("copper", "inner1-copper", 2, True)),
        ("board.lyr3", ("copper", "inner2-copper", 3, True)),
        ("lyr9.gbr", ("copper", "inner8-copper", 9, True)),
        ("l2_gnd.art", ("copper", "inner1-copper", 2, True)),
        ("art002.pho", ("copper", "inner1-copper", 2, True)),  # PADS-style artwork numbering
        ("MidLayer1.gbr", ("copper", "inner1-copper", 1, False)),  # Altium mid layer 1 (relative)
        ("GND2.art", ("copper", "inner-copper", 2, False)),  # Allegro artwork named after the plane
        ("PWR.art", ("copper", "inner-copper", None, False)),
        ("board.G1", ("copper", "inner1-copper", 1, False)),
    ],
)
def test_numbered_and_plane_inner_layers_in_any_spelling(name: str, expected: tuple) -> None:
    ident = identify_name(name)
    assert (ident.role, ident.layer, ident.copper_number, ident.copper_number_absolute) == expected


@pytest.mark.parametrize(
    "name, expected",
    [
        ("board.PasteTop", ("paste", "top-paste", False)),  # words in the extension
        ("board.StopBot", ("mask", "bottom-mask", False)),
        ("board.Outline", ("outline", "outline", False)),
        ("b.CopperTop", ("copper", "top-copper", False)),
        ("board-PCB_Edges.gbr", ("outline", "outline", False)),  # KiCad 2012-era edge layer
        ("board.GM1", ("outline", "outline", True)),  # Altium mechanical: the outline only if it encloses the copper
        ("board.GM13", ("outline", "outline", True)),
        ("board.FAB", ("outline", "outline", True)),  # OrCAD fabrication layer: likewise
        ("TopStencil.gbr", ("paste", "top-paste", False)),  # a stencil is paste, never the solder mask
        ("board.stencil_bottom.gbr", ("paste", "bottom-paste", False)),
        ("board.g0", (None, None, False)),  # no Altium mid layer 0
    ],
)
def test_words_in_extensions_and_layers_the_content_must_confirm(name: str, expected: tuple) -> None:
    ident = identify_name(name)
    assert (ident.role, ident.layer, ident.tentative) == expected


def test_layer_hints_in_g04_comments(shared_dir: Path) -> None:
    # pcb-tools resources "example_guess_by_content.g0": "G04 Layer name: Bottom *" (an ULTIpost header)
    path = shared_dir / "gerber-suites/pcb-tools-resources/example_guess_by_content.g0"
    ident = identify(path.name, path.read_bytes()[:65536])
    assert (ident.layer, ident.identified_by) == ("bottom-copper", "content")
    # tracespace usbvil: Altium writes "G04 Layer_Physical_Order=2*" in the bottom copper
    head = (shared_dir / "gerber-suites/tracespace-fixtures/boards/usbvil/pic18f14k50.gbl").read_bytes()[:65536]
    assert identify("pic18f14k50.gbl", head).copper_number == 2
    # an Altium mid layer: the physical order gives its place in the stack
    mid = identify("board.G2", b"%FSLAX24Y24*%\n%MOIN*%\nG04 Layer_Physical_Order=3*\nM02*\n")
    assert (mid.layer, mid.copper_number, mid.copper_number_absolute) == ("inner2-copper", 3, True)
