"""Config loading: the full contract example, every section's bad input, profiles, find_config."""

from __future__ import annotations

import textwrap
from pathlib import Path

import pytest

from sensorcheck.design.config import find_config, load_config
from sensorcheck.errors import ConfigError
from sensorcheck.limits import Limits

FULL = """
profile = "default"
[board]
face = "top"
[[overlay.layers]]
material = "pmma"
thickness_mm = 2.0
[[overlay.layers]]
material = "psa"
thickness_mm = 0.1
[[overlay.layers]]
kind = "air"
thickness_mm = 0.2
[stackup]
board_thickness_mm = 1.6
[[stackup.layers]]
name = "F.Cu"
kind = "copper"
thickness_mm = 0.035
copper_layer = "top-copper"
[[stackup.layers]]
name = "core"
kind = "dielectric"
thickness_mm = 1.53
material = "fr4"
[[stackup.layers]]
name = "B.Cu"
kind = "copper"
thickness_mm = 0.035
copper_layer = "bottom-copper"
[roles]
transmitter = ["TX*"]
receiver = ["RX*"]
self = ["TOUCH*", {pattern = "SL*", sensor = "volume"}]
shield = []
guard = []
ground = ["GND"]
aggressor = [{pattern = "LED*", kind = "led"}, "CLK"]
[[roles.place]]
layer = "top-copper"
point_mm = [10.0, 20.0]
role = "self"
sensor = "B1"
[[roles.place]]
layer = "bottom-copper"
box_mm = [0, 0, 5, 5]
role = "ground"
[[sensors]]
name = "volume"
kind = "slider"
nets = ["SL0", "SL1", "SL2"]
[[sensors]]
name = "pad"
kind = "matrix"
rows = ["X0", "X1"]
columns = ["Y0", "Y1"]
[finger]
contact_diameter_mm = 9.0
body_capacitance_pf = 150.0
device_ground = 2.5
[controller]
max_parasitic_pf = 30.0
pin_capacitance_pf = 5.0
max_shield_load_pf = 100.0
[fabrication]
min_clearance_mm = 0.15
min_width_mm = 0.15
[esd]
level_kv = 8.0
mode = "contact"
[files]
"*.gtl" = "top-copper"
"*.drl" = "drill"
[limits]
max_holes = 1000
max_compression_ratio = 50
[estimate]
enabled = false
max_height_mm = 15.0
heights = 8
[rules."gap.tx-rx-vs-overlay"]
severity = "warning"
ratio = 0.6
[[waivers]]
rule = "gap.tx-rx-vs-overlay"
sensor = "K1"
reason = "accepted on the prototype"
expires = 2027-06-30
[[waivers]]
rule = "gap.tx-rx-vs-overlay"
layer = "top-copper"
box_mm = [1, 2, 3, 4]
reason = "fixture hole"
"""

KNOWN = {"gap.tx-rx-vs-overlay": {"ratio": float}, "zone.foreign-net": {"distance_mm": float, "count": int}}


def write(tmp_path: Path, text: str, name: str = "sensorcheck.toml") -> Path:
    p = tmp_path / name
    p.write_text(textwrap.dedent(text), encoding="utf-8")
    return p


def err(tmp_path: Path, text: str, **kw: object) -> ConfigError:
    p = write(tmp_path, text)
    with pytest.raises(ConfigError) as info:
        load_config(p, profiles_dir=tmp_path / "no-profiles", **kw)  # type: ignore[arg-type]
    assert info.value.file == str(p)
    return info.value


def test_full_contract_example_loads(tmp_path: Path) -> None:
    c = load_config(write(tmp_path, FULL), known_rules=KNOWN, profiles_dir=tmp_path)
    assert c.overlay is not None
    assert [layer.kind for layer in c.overlay.layers] == ["overlay", "adhesive", "air"]
    # geometric thickness is the plain sum; electrical thickness sum(t/eps) (definition, layout-rules 1.1)
    assert c.overlay.thickness_mm == pytest.approx(2.3)
    assert c.overlay.d_eff_mm == pytest.approx(2.0 / 2.8 + 0.1 / 3.0 + 0.2 / 1.0006)
    assert c.overlay.layers[0].epsilon_source.startswith("handbook")
    assert c.stackup_override.source == "config"
    assert c.stackup_override.copper_z_mm()["top-copper"] == pytest.approx(1.6)
    assert c.stackup_override.layers[1].epsilon_r == pytest.approx(4.5)
    roles = {(r.pattern, r.role, r.aggressor_kind, r.sensor) for r in c.roles}
    assert ("SL*", "self", None, "volume") in roles
    assert ("LED*", "aggressor", "led", None) in roles
    assert ("CLK", "aggressor", "other", None) in roles
    assert c.roles_by_place[0].point_mm == (10.0, 20.0) and c.roles_by_place[1].box_mm == (0, 0, 5, 5)
    assert c.groups[0].nets == ("SL0", "SL1", "SL2") and c.groups[1].columns == ("Y0", "Y1")
    assert c.finger is not None and c.finger.contact_diameter_mm == 9.0
    assert c.finger.device_ground_coupling_pf == 2.5
    assert c.controller["max_shield_load_pf"] == 100.0 and c.fabrication["min_width_mm"] == 0.15
    assert (c.esd_kv, c.esd_mode) == (8.0, "contact")
    assert c.file_overrides == {"*.gtl": "top-copper", "*.drl": "drill"}
    assert c.limits == Limits(max_holes=1000, max_compression_ratio=50.0)
    assert c.estimate == {"enabled": False, "max_height_mm": 15.0, "heights": 8}
    assert c.severities == {"gap.tx-rx-vs-overlay": "warning"}
    assert c.rule_params("gap.tx-rx-vs-overlay") == {"ratio": 0.6}
    assert c.waivers[0].expires == "2027-06-30" and c.waivers[0].sensor == "K1"
    assert c.waivers[1].box_mm == (1, 2, 3, 4) and c.waivers[1].index == 1


def test_expansion_limit_from_the_config_is_honoured(tmp_path: Path) -> None:
    # [limits] overrides sensorcheck.limits.Limits fields (config contract); the reader then holds a
    # file to it. Gerber spec 2023.08 s. 4.11.1: SR X2Y2 of a block of one flash makes 3 copies;
    # X2Y3 makes 5, past a limit of 3, refused at the SR line (5).
    from sensorcheck.errors import LimitError
    from sensorcheck.fab.gerber import read_gerber

    assert load_config(None).limits.max_expanded_objects == Limits().max_expanded_objects
    c = load_config(write(tmp_path, "[limits]\nmax_expanded_objects = 3\n"), profiles_dir=tmp_path)
    assert c.limits == Limits(max_expanded_objects=3)
    sr = "%FSLAX46Y46*%\n%MOMM*%\n%ADD10C,0.1*%\nD10*\n%SRX2Y{y}I1J1*%\nX0Y0D03*\n%SR*%\nM02*\n"
    assert read_gerber(sr.format(y=2).encode(), "ok.gbr", limits=c.limits).object_count == 4
    with pytest.raises(LimitError) as info:
        read_gerber(sr.format(y=3).encode(), "over.gbr", limits=c.limits)
    assert (info.value.file, info.value.line) == ("over.gbr", 5)
    assert "limits.max_expanded_objects = 3" in info.value.message


def test_polarity_work_limit_from_the_config_is_honoured(tmp_path: Path) -> None:
    # [limits] max_polarity_work reaches the polarity sweep through the reader. Five 1 mm squares,
    # each 1 um further on: dark, clear, dark, clear, dark (spec 2023.08 s. 4.9.2: each clear one
    # clears what came before it). Sweeping back from the end, the clear square on
    # line 12 is met by the dark one on line 10, then again (with the clear one on line 8) by the
    # dark one on line 6: the first work counted, past a limit of 1, refused at line 6.
    from sensorcheck.errors import LimitError
    from sensorcheck.fab.gerber import read_gerber

    assert load_config(None).limits.max_polarity_work == Limits().max_polarity_work
    c = load_config(write(tmp_path, "[limits]\nmax_polarity_work = 1\n"), profiles_dir=tmp_path)
    assert c.limits == Limits(max_polarity_work=1)
    text = "%FSLAX46Y46*%\n%MOMM*%\n%ADD10R,1X1*%\nD10*\n" + "".join(
        ("%LPD*%\n" if k % 2 == 0 else "%LPC*%\n") + f"X{k * 1000}Y0D03*\n" for k in range(5)) + "M02*\n"
    assert read_gerber(text.encode(), "ok.gbr").object_count == 5  # the default reads it
    with pytest.raises(LimitError) as info:
        read_gerber(text.encode(), "over.gbr", limits=c.limits)
    assert (info.value.file, info.value.line) == ("over.gbr", 6)
    assert "limits.max_polarity_work = 1" in info.value.message


def test_defaults_without_a_file() -> None:
    c = load_config(None)
    assert c.file is None and c.overlay is None and c.roles == []
    # IEC 61000-4-2 discharge network: 150 pF (standard); fingertip disc 8 mm (common practice)
    assert c.finger is not None
    assert c.finger.body_capacitance_pf == 150.0
    assert c.finger.contact_diameter_mm == 8.0
    assert c.finger.device_ground_coupling_pf is None  # earthed unless said


@pytest.mark.parametrize(
    ("text", "key"),
    [
        ("colour = 1\n", "colour"),
        ("[board]\nside = 'top'\n", "board.side"),
        ("[[overlay.layers]]\nmaterial='pmma'\nthickness_mm=1\ncolor='red'\n", "overlay.layers[0].color"),
        ("[overlay]\nthick = 1\n", "overlay.thick"),
        ("[stackup]\nboard_thickness_mm=1.6\nfoo=1\n", "stackup.foo"),
        ("[[stackup.layers]]\nname='a'\nkind='copper'\nthickness_mm=0.03\nweight=1\n", "stackup.layers[0].weight"),
        ("[roles]\ntransmiter=['TX*']\n", "roles.transmiter"),
        ("[roles]\naggressor=[{pattern='LED*', type='led'}]\n", "roles.aggressor[0].type"),
        ("[[roles.place]]\nlayer='top-copper'\npoint_mm=[1,2]\nrole='self'\nnet='A'\n", "roles.place[0].net"),
        ("[[sensors]]\nname='a'\nkind='self-button'\nnets=['A']\norder=1\n", "sensors[0].order"),
        ("[finger]\nsize=8\n", "finger.size"),
        ("[controller]\nmax_parasitic=3\n", "controller.max_parasitic"),
        ("[fabrication]\nmin_gap_mm=0.1\n", "fabrication.min_gap_mm"),
        ("[esd]\nlevel=8\n", "esd.level"),
        ("[limits]\nmax_files=3\n", "limits.max_files"),
        ("[estimate]\nsteps=3\n", "estimate.steps"),
        ("[[waivers]]\nrule='a.b'\nreason='x'\nsensor='K'\nwho='me'\n", "waivers[0].who"),
        ("[rules.'gap.tx-rx-vs-overlay']\nratio=0.5\nfactor=2\n", 'rules."gap.tx-rx-vs-overlay".factor'),
    ],
)
def test_unknown_keys_at_every_level(tmp_path: Path, text: str, key: str) -> None:
    e = err(tmp_path, text, known_rules=KNOWN)
    assert e.key == key
    assert "unknown" in e.message


@pytest.mark.parametrize(
    ("text", "key", "words"),
    [
        ("profile = 3\n", "profile", "expected a string"),
        ("[board]\nface='front'\n", "board.face", "one of"),
        ("[[overlay.layers]]\nmaterial='pmma'\nthickness_mm='2'\n", "overlay.layers[0].thickness_mm", "number"),
        ("[[overlay.layers]]\nmaterial=2.8\nthickness_mm=2\n", "overlay.layers[0].material", "string"),
        ("[[overlay.layers]]\nepsilon_r=true\nthickness_mm=2\n", "overlay.layers[0].epsilon_r", "number"),
        ("[roles]\nself='TOUCH*'\nground=3\n", "roles.ground", "array"),
        ("[roles]\nself=[1]\n", "roles.self[0]", "pattern"),
        ("[[sensors]]\nname='a'\nkind='slider'\nnets='SL0'\n", "sensors[0].nets", "array of strings"),
        ("[finger]\ndevice_ground=true\n", "finger.device_ground", "earthed"),
        ("[finger]\ndevice_ground='floating'\n", "finger.device_ground", "one of"),
        ("[estimate]\nenabled='yes'\n", "estimate.enabled", "true or false"),
        ("[estimate]\nheights=12.5\n", "estimate.heights", "integer"),
        ("[limits]\nmax_holes=1.5\n", "limits.max_holes", "integer"),
        ("[limits]\nmax_expanded_objects='20000'\n", "limits.max_expanded_objects", "integer"),
        ("[limits]\nmax_expanded_objects=2e4\n", "limits.max_expanded_objects", "integer"),
        ("[limits]\nmax_expanded_objects=true\n", "limits.max_expanded_objects", "integer"),
        ("[files]\n'*.gtl'='top copper'\n", 'files."*.gtl"', "layer names"),
        ("[esd]\nmode='hand'\n", "esd.mode", "one of"),
        ("sensors = 3\n", "sensors", "array of tables"),
        ("[rules.'gap.tx-rx-vs-overlay']\nratio='0.6'\n", 'rules."gap.tx-rx-vs-overlay".ratio', "float"),
        ("[rules.'zone.foreign-net']\ncount=2.0\n", 'rules."zone.foreign-net".count', "int"),
        ("[rules.'gap.tx-rx-vs-overlay']\nseverity='fatal'\n", 'rules."gap.tx-rx-vs-overlay".severity', "one of"),
        ("[[waivers]]\nrule='gap.tx-rx-vs-overlay'\nreason='r'\nsensor='K'\nexpires=2027-06-30T10:00:00\n",
         "waivers[0].expires", "date"),
        ("[[waivers]]\nrule='gap.tx-rx-vs-overlay'\nreason='r'\nsensor='K'\nexpires='2027-13-01'\n",
         "waivers[0].expires", "date like"),
        ("[[waivers]]\nrule='gap.tx-rx-vs-overlay'\nreason='r'\nsensor='K'\nexpires=20270630\n",
         "waivers[0].expires", "date like"),
    ],
)
def test_wrong_types(tmp_path: Path, text: str, key: str, words: str) -> None:
    e = err(tmp_path, text, known_rules=KNOWN)
    assert e.key == key
    assert words in e.message


@pytest.mark.parametrize(
    ("text", "key"),
    [
        ("[[overlay.layers]]\nmaterial='pmma'\nthickness_mm=0\n", "overlay.layers[0].thickness_mm"),
        ("[[overlay.layers]]\nmaterial='pmma'\nthickness_mm=-1\n", "overlay.layers[0].thickness_mm"),
        ("[[overlay.layers]]\nmaterial='pmma'\nthickness_mm=nan\n", "overlay.layers[0].thickness_mm"),
        ("[[overlay.layers]]\nepsilon_r=0.9\nthickness_mm=1\n", "overlay.layers[0].epsilon_r"),
        ("[[overlay.layers]]\nepsilon_r=inf\nthickness_mm=1\n", "overlay.layers[0].epsilon_r"),
        ("[stackup]\nboard_thickness_mm=0\n", "stackup.board_thickness_mm"),
        ("[finger]\nbody_capacitance_pf=-150\n", "finger.body_capacitance_pf"),
        ("[finger]\ndevice_ground=0\n", "finger.device_ground"),
        ("[finger]\ncontact_diameter_mm=0.1\n", "finger.contact_diameter_mm"),
        ("[controller]\nmax_parasitic_pf=-1\n", "controller.max_parasitic_pf"),
        ("[fabrication]\nmin_clearance_mm=0\n", "fabrication.min_clearance_mm"),
        ("[esd]\nlevel_kv=-8\n", "esd.level_kv"),
        ("[estimate]\nheights=1\n", "estimate.heights"),
        ("[limits]\nmax_holes=0\n", "limits.max_holes"),
        ("[limits]\nmax_expanded_objects=-5\n", "limits.max_expanded_objects"),
        ("[[roles.place]]\nlayer='top-copper'\nbox_mm=[5,0,1,4]\nrole='self'\n", "roles.place[0].box_mm"),
        ("[rules.'zone.foreign-net']\ndistance_mm=-2.0\n", 'rules."zone.foreign-net".distance_mm'),
    ],
)
def test_out_of_range(tmp_path: Path, text: str, key: str) -> None:
    e = err(tmp_path, text, known_rules=KNOWN)
    assert e.key == key


@pytest.mark.parametrize(
    ("text", "key", "words"),
    [
        ("[[waivers]]\nrule='gap.tx-rx-vs-overlay'\nsensor='K1'\n", "waivers[0].reason", "reason"),
        ("[[waivers]]\nrule='gap.tx-rx-vs-overlay'\nsensor='K1'\nreason='  '\n", "waivers[0].reason", "empty"),
        ("[[waivers]]\nrule='gap.tx-rx-vs-overlay'\nreason='r'\n", "waivers[0]", "say where"),
        ("[[waivers]]\nrule='gap.tx-rx-vs-overlay'\nreason='r'\nbox_mm=[0,0,1,1]\n", "waivers[0].box_mm", "layer"),
        ("[[waivers]]\nrule='no.such-rule'\nreason='r'\nsensor='K'\n", "waivers[0].rule", "unknown rule"),
        ("[[waivers]]\nreason='r'\nsensor='K'\n", "waivers[0].rule", "missing"),
        ("[rules.'gap.tx-rx-vs-overlya']\nratio=0.5\n", 'rules."gap.tx-rx-vs-overlya"', "did you mean"),
        ("[rules.'Gap TX']\nratio=0.5\n", 'rules."Gap TX"', "rule ids"),
        ("[[overlay.layers]]\nmaterial='unobtainium'\nthickness_mm=1\n", "overlay.layers[0].material", "unknown material"),
        ("[[overlay.layers]]\nthickness_mm=1\n", "overlay.layers[0]", "material"),
        ("[[overlay.layers]]\nmaterial='pmma'\n", "overlay.layers[0].thickness_mm", "missing"),
        ("[[roles.place]]\nlayer='top-copper'\nrole='self'\n", "roles.place[0]", "exactly one"),
        ("[[roles.place]]\nlayer='top-mask'\npoint_mm=[1,2]\nrole='self'\n", "roles.place[0].layer", "copper"),
        ("[[sensors]]\nname='a'\nkind='wheel'\nnets=['A','B']\n", "sensors[0].nets", "at least 3"),
        ("[[sensors]]\nname='a'\nkind='mutual-button'\ntx=['A']\n", "sensors[0].rx", "receiver"),
        ("[[sensors]]\nname='a'\nkind='matrix'\nrows=['A']\nnets=['B']\n", "sensors[0].nets", "not nets"),
        ("[[sensors]]\nname='a'\nkind='slider'\nnets=['A','A']\n", "sensors[0].nets[1]", "twice"),
        ("[[sensors]]\nname='a'\nkind='self-button'\nnets=['A']\nface='back'\n", "sensors[0].face", "'bottom'"),
        ("[[sensors]]\nname='a'\nkind='self-button'\nnets=['A']\nface=1\n", "sensors[0].face", "a string"),
        ("[[sensors]]\nname='a'\nkind='self-button'\nnets=['A']\n[[sensors]]\nname='a'\nkind='self-button'\nnets=['B']\n",
         "sensors[1].name", "twice"),
        ("profile = 'paranoid'\n", "profile", "no shipped profile"),
        ("profile = 'missing.toml'\n", "profile", "not found"),
    ],
)
def test_bad_values(tmp_path: Path, text: str, key: str, words: str) -> None:
    e = err(tmp_path, text, known_rules=KNOWN)
    assert e.key == key
    assert words in e.message


@pytest.mark.parametrize(
    ("text", "line"),
    [
        ("[board]\nface = 'top'\nface = 'bottom'\n", 3),
        ("[board]\n\n\nface = top\n", 4),
        ("[[overlay.layers]]\nthickness_mm = 2,0\n", 2),
        ("x = 1\n[esd\n", 2),
    ],
)
def test_bad_toml_names_the_line(tmp_path: Path, text: str, line: int) -> None:
    e = err(tmp_path, text)
    assert e.key == f"line {line}"
    assert "TOML syntax error" in e.message
    assert f"{line}" in e.describe()


def test_not_utf8(tmp_path: Path) -> None:
    p = tmp_path / "sensorcheck.toml"
    p.write_bytes(b"profile = 'default'\nx = '\xff'\n")
    with pytest.raises(ConfigError) as info:
        load_config(p)
    assert info.value.key == "line 2"


def test_explicit_epsilon_overrides_material_and_air_kind(tmp_path: Path) -> None:
    p = write(tmp_path, """
        [[overlay.layers]]
        material = "glass"
        epsilon_r = 7.75
        thickness_mm = 3
        [[overlay.layers]]
        kind = "air"
        thickness_mm = 1
        """)
    c = load_config(p, profiles_dir=tmp_path)
    assert c.overlay is not None
    glass, air = c.overlay.layers
    assert glass.name == "soda-lime-glass" and glass.epsilon_r == 7.75 and glass.epsilon_source.startswith("config")
    assert air.epsilon_r == pytest.approx(1.0, abs=1e-3) and air.kind == "air"
    # layout-rules 2.1 (derived there): 3 mm glass + 1 mm air keeps ~30 % of the 3 mm glass signal
    # (signal ~ 1/d_eff); with eps 7.75 here: (3/7.75) / (3/7.75 + 1)
    assert (3 / 7.75) / c.overlay.d_eff_mm == pytest.approx(0.279, abs=0.01)


def test_profile_then_config_override(tmp_path: Path) -> None:
    pdir = tmp_path / "rules"
    pdir.mkdir()
    (pdir / "default.toml").write_text(
        "description = 'base'\n[rules.'gap.tx-rx-vs-overlay']\nratio = 0.6\nseverity = 'warning'\n"
        "[rules.'zone.foreign-net']\ndistance_mm = 2.0\ncount = 1\n"
    )
    (pdir / "strict.toml").write_text("profile = 'default'\n[rules.'gap.tx-rx-vs-overlay']\nseverity = 'error'\n")
    p = write(tmp_path, "profile = 'strict'\n[rules.'zone.foreign-net']\ndistance_mm = 3\n")
    c = load_config(p, known_rules=KNOWN, profiles_dir=pdir)
    assert c.profile == "strict"
    assert c.severities["gap.tx-rx-vs-overlay"] == "error"  # strict over default
    assert c.rule_params("gap.tx-rx-vs-overlay") == {"ratio": 0.6}  # inherited
    assert c.rule_params("zone.foreign-net") == {"distance_mm": 3.0, "count": 1}  # config over profile
    assert isinstance(c.rule_params("zone.foreign-net")["distance_mm"], float)
    # a profile file with an unknown rule names the profile file, not the config
    (pdir / "bad.toml").write_text("[rules.'no.rule']\nx = 1\n")
    with pytest.raises(ConfigError) as info:
        load_config(write(tmp_path, "profile = 'bad'\n"), known_rules=KNOWN, profiles_dir=pdir)
    assert info.value.file == str(pdir / "bad.toml")
    # profiles in a circle
    (pdir / "a.toml").write_text("profile = 'b'\n")
    (pdir / "b.toml").write_text("profile = 'a'\n")
    with pytest.raises(ConfigError, match="circle"):
        load_config(write(tmp_path, "profile = 'a'\n"), profiles_dir=pdir)


def test_profile_by_path(tmp_path: Path) -> None:
    (tmp_path / "mine.toml").write_text("[rules.'gap.tx-rx-vs-overlay']\nratio = 0.5\n")
    c = load_config(write(tmp_path, "profile = 'mine.toml'\n"), known_rules=KNOWN, profiles_dir=tmp_path / "x")
    assert c.rule_params("gap.tx-rx-vs-overlay") == {"ratio": 0.5}


def test_shipped_profiles_load_when_present() -> None:
    """rules/*.toml of this repo (written by the rules engineer) must load under our validation."""
    from sensorcheck.design.config import default_profiles_dir

    pdir = default_profiles_dir()
    shipped = sorted(pdir.glob("*.toml")) if pdir.is_dir() else []
    if not shipped:
        pytest.skip("no shipped profiles yet")
    try:
        from sensorcheck.rules.engine import known_rules
    except ImportError:
        known = None
    else:
        known = known_rules()
    from sensorcheck.design.config import _load_profile

    for p in shipped:
        thresholds: dict[str, dict[str, object]] = {}
        severities: dict[str, str] = {}
        _load_profile(p, known, pdir, thresholds, severities)  # raises ConfigError when invalid
        assert set(severities.values()) <= {"error", "warning", "note", "off"}


def test_find_config(tmp_path: Path) -> None:
    repo = tmp_path / "repo"
    board = repo / "hw" / "rev-b" / "gerbers"
    board.mkdir(parents=True)
    (repo / ".git").mkdir()
    assert find_config(board) is None
    (repo / "sensorcheck.toml").write_text("")
    assert find_config(board) == (repo / "sensorcheck.toml").resolve()
    (board.parent / "sensorcheck.toml").write_text("")
    assert find_config(board) == (board.parent / "sensorcheck.toml").resolve()
    (board / "sensorcheck.toml").write_text("")
    assert find_config(board) == (board / "sensorcheck.toml").resolve()
    # a .zip: the config beside it
    z = board.parent / "fab.zip"
    z.write_bytes(b"PK")
    assert find_config(z) == (board.parent / "sensorcheck.toml").resolve()
    # above the repository root is never searched
    (tmp_path / "sensorcheck.toml").write_text("")
    (repo / "sensorcheck.toml").unlink()
    (board.parent / "sensorcheck.toml").unlink()
    (board / "sensorcheck.toml").unlink()
    assert find_config(board) is None
    # outside a repository only PATH itself
    loose = tmp_path / "loose" / "fab"
    loose.mkdir(parents=True)
    assert find_config(loose) is None


# --------------------------------------------------------------------------- robustness

from hypothesis import HealthCheck, given, settings  # noqa: E402
from hypothesis import strategies as st  # noqa: E402


@settings(max_examples=200, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(data=st.data())
def test_mutated_config_gives_config_error_or_config(tmp_path: Path, data: st.DataObject) -> None:
    """Byte-level mutations of the full example: a Config or a ConfigError, never another exception."""
    raw = bytearray(FULL.encode())
    for _ in range(data.draw(st.integers(1, 4))):
        op = data.draw(st.sampled_from(["delete", "insert", "replace"]))
        pos = data.draw(st.integers(0, len(raw) - 1))
        if op == "delete":
            del raw[pos : pos + data.draw(st.integers(1, 12))]
        else:
            chunk = data.draw(st.sampled_from([b"-", b"0", b"[", b"]", b"'", b'"', b"=", b"\n", b"x", b"1e999",
                                               b"true", b"{", b"}", b",", b"\xff", b"nan", b"[[", b"."]))
            if op == "insert":
                raw[pos:pos] = chunk
            else:
                raw[pos : pos + len(chunk)] = chunk
    p = tmp_path / "mutated.toml"
    p.write_bytes(bytes(raw))
    try:
        load_config(p, known_rules=KNOWN, profiles_dir=tmp_path)
    except ConfigError as exc:
        assert exc.file == str(p)
        assert exc.describe().startswith(str(p))


def test_bom_accepted_and_huge_or_missing_files_refused(tmp_path: Path) -> None:
    p = tmp_path / "bom.toml"
    p.write_bytes(b"\xef\xbb\xbf[board]\nface = 'bottom'\n")
    assert load_config(p, profiles_dir=tmp_path).face == "bottom"
    big = tmp_path / "big.toml"
    big.write_bytes(b"# " + b"x" * (2 * 1024 * 1024) + b"\n")
    with pytest.raises(ConfigError, match="KiB"):
        load_config(big)
    with pytest.raises(ConfigError, match="cannot read"):
        load_config(tmp_path / "absent.toml")
    with pytest.raises(ConfigError, match="cannot read"):
        load_config(tmp_path)  # a folder


def test_profile_path_may_not_leave_the_repository(tmp_path: Path) -> None:
    # A board config may come from a merge request: its profile stays inside the repository the
    # config sits in (the folder holding .git), else inside the config's own folder.
    repo = tmp_path / "repo"
    (repo / ".git").mkdir(parents=True)
    (repo / "hw").mkdir()
    (tmp_path / "outside.toml").write_text("[rules.'gap.tx-rx-vs-overlay']\nratio = 0.5\n")
    (repo / "team.toml").write_text("[rules.'gap.tx-rx-vs-overlay']\nratio = 0.7\n")
    for text in ("profile = '../../outside.toml'\n", f"profile = '{tmp_path / 'outside.toml'}'\n"):
        p = write(repo / "hw", text)
        with pytest.raises(ConfigError) as info:
            load_config(p, known_rules=KNOWN, profiles_dir=tmp_path / "x")
        assert info.value.key == "profile" and "outside" in info.value.message and info.value.file == str(p)
    # up to the repository root is fine
    c = load_config(write(repo / "hw", "profile = '../team.toml'\n"), known_rules=KNOWN, profiles_dir=tmp_path / "x")
    assert c.rule_params("gap.tx-rx-vs-overlay") == {"ratio": 0.7}
    # outside a repository, the config's own folder bounds it
    (tmp_path / "loose").mkdir()
    p = write(tmp_path / "loose", "profile = '../outside.toml'\n")
    with pytest.raises(ConfigError, match="outside"):
        load_config(p, known_rules=KNOWN, profiles_dir=tmp_path / "x")


def test_old_sensor_kind_spelling_is_read_with_a_note(tmp_path: Path) -> None:
    text = "[[sensors]]\nname = 'K1'\nkind = '{}'\ntx = ['TX1']\nrx = ['RX1']\n"
    new = load_config(write(tmp_path, text.format("mutual-button")), profiles_dir=tmp_path / "x")
    old = load_config(write(tmp_path, text.format("mutual-node"), "old.toml"), profiles_dir=tmp_path / "x")
    assert [g.kind for g in new.groups] == [g.kind for g in old.groups] == ["mutual-button"]
    assert new.groups == old.groups
    assert not any("deprecated" in n for n in new.notes)
    (note,) = [n for n in old.notes if "deprecated" in n]
    assert "sensors[0].kind" in note and "'mutual-button'" in note and "old.toml" in note
