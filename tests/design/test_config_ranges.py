"""Every solver input the config takes has a physical range (issue 15, item 5).

A value outside it is a config error naming the file, the key and the expected range (exit 2, no
traceback, through the command line); the boundary values that are physical are accepted.  The
ranges and why (outside references where there are any):

* relative permittivity at least 1: vacuum is 1 and no passive dielectric is below it (any
  electromagnetics textbook); up to 1000 (water is 80 (CRC Handbook); ceramics run to thousands,
  none of them an overlay: the cap is ours);
* thicknesses, lengths, diameters greater than 0 (a layer or a finger of no extent is no layer);
* body capacitance from 0 pF: 0 is a floating object (a coin, a water film), a conductor with no
  path to earth but its own capacitance; device ground greater than 0 (a device has its own
  capacitance to its surroundings, about 4 pi eps0 r: some pF for a hand-sized product);
* the approach's top height above its lowest fixed height, 0.25 mm (physics.model.approach_heights);
  at least 2 heights (the top and the touch);
* the solver options of a config's ``estimate`` table given through the API (the touch gap, mesh
  sizes): positive, the touch gap at most the lowest approach height.
"""

from __future__ import annotations

import textwrap
from pathlib import Path

import pytest

from sensorcheck.cli import main
from sensorcheck.design.config import load_config
from sensorcheck.errors import ConfigError

REPO = Path(__file__).resolve().parents[2]
OVERLAY = "[[overlay.layers]]\nmaterial = 'pmma'\nthickness_mm = 1.0\n"
STACKUP = "[[stackup.layers]]\nname = 'core'\nkind = 'dielectric'\nthickness_mm = {v}\nepsilon_r = 4.5\n"

# (key path, TOML with {v} for the value, values out of range, physical boundary values accepted, range words)
CASES: list[tuple[str, str, list[str], list[str], str]] = [
    ("overlay.layers[0].thickness_mm", "[[overlay.layers]]\nmaterial = 'pmma'\nthickness_mm = {v}\n",
     ["0", "-1", "200.5"], ["0.001", "200"], "greater than 0 and at most 200"),
    ("overlay.layers[0].epsilon_r", "[[overlay.layers]]\nepsilon_r = {v}\nthickness_mm = 1\n",
     ["0.99", "0", "1000.5"], ["1", "1.0006", "1000"], "from 1 to 1000"),
    ("stackup.layers[0].thickness_mm", STACKUP, ["0", "50.1"], ["0.001", "50"], "greater than 0 and at most 50"),
    ("stackup.layers[0].epsilon_r", "[[stackup.layers]]\nname = 'core'\nkind = 'dielectric'\nthickness_mm = 1.5\nepsilon_r = {v}\n",
     ["0.5", "1001"], ["1", "1000"], "from 1 to 1000"),
    ("stackup.board_thickness_mm", "[stackup]\nboard_thickness_mm = {v}\n", ["0", "51"], ["0.01", "50"],
     "greater than 0 and at most 50"),
    ("finger.contact_diameter_mm", "[finger]\ncontact_diameter_mm = {v}\n", ["0.9", "40.1"], ["1", "40"], "from 1 to 40"),
    ("finger.length_mm", "[finger]\nlength_mm = {v}\n", ["0", "-2", "501"], ["0.001", "500"], "greater than 0 and at most 500"),
    ("finger.body_capacitance_pf", "[finger]\nbody_capacitance_pf = {v}\n", ["-0.001", "10001"], ["0", "10000"],
     "from 0 to 10000"),
    ("finger.device_ground", "[finger]\ndevice_ground = {v}\n", ["0", "-1", "1e7"], ["0.001", "1e6"],
     "greater than 0 and at most 1e+06"),
    ("estimate.max_height_mm", "[estimate]\nmax_height_mm = {v}\n", ["0.25", "0.1", "0", "1001"], ["0.2501", "1000"],
     "greater than 0.25 and at most 1000"),
    ("estimate.heights", "[estimate]\nheights = {v}\n", ["1", "201"], ["2", "200"], "from 2 to 200"),
    ("limits.max_mesh_panels", "[limits]\nmax_mesh_panels = {v}\n", ["0", "-5"], ["1"], "at least 1"),
]


def _load(tmp_path: Path, text: str):
    p = tmp_path / "sensorcheck.toml"
    body = textwrap.dedent(text)
    p.write_text(body if "overlay" in body else OVERLAY + body, encoding="utf-8")
    return p, load_config(p, profiles_dir=tmp_path / "no-profiles")


@pytest.mark.parametrize(("key", "text", "bad", "words"), [(k, t, v, w) for k, t, bads, _, w in CASES for v in bads])
def test_a_value_outside_the_physical_range_names_file_key_and_range(tmp_path: Path, key: str, text: str, bad: str,
                                                                      words: str) -> None:
    with pytest.raises(ConfigError) as info:
        _load(tmp_path, text.format(v=bad))
    e = info.value
    assert e.file == str(tmp_path / "sensorcheck.toml") and e.key == key
    assert words in e.message and "got" in e.message


@pytest.mark.parametrize(("key", "text", "good"), [(k, t, v) for k, t, _, goods, _ in CASES for v in goods])
def test_the_physical_boundary_values_are_accepted(tmp_path: Path, key: str, text: str, good: str) -> None:
    _, cfg = _load(tmp_path, text.format(v=good))
    section, _, rest = key.partition(".")
    if section == "finger":
        field = {"device_ground": "device_ground_coupling_pf"}.get(rest, rest)
        assert getattr(cfg.finger, field) == float(good)
    elif section == "estimate":
        assert cfg.estimate[rest] == float(good)


def test_a_floating_object_is_a_finger_with_no_body_capacitance(tmp_path: Path) -> None:
    # the coin of issue 15: 0 pF to earth beyond its own capacitance; the solver's circuit takes it
    # (Kron reduction of a floating node: tests/physics/test_finger_circuit.py)
    _, cfg = _load(tmp_path, "[finger]\ncontact_diameter_mm = 20\nlength_mm = 1.5\nbody_capacitance_pf = 0\n")
    assert cfg.finger.body_capacitance_pf == 0.0


def test_solver_options_are_no_config_keys_and_out_of_range_through_the_api_name_their_key(tmp_path: Path) -> None:
    # issue 15 reported `[estimate] touch_gap_mm = 0` ending as an internal error; in a config file
    # it is no key at all (the solver's model choices are not user inputs) and says so
    with pytest.raises(ConfigError) as info:
        _load(tmp_path, "[estimate]\ntouch_gap_mm = 0\n")
    assert info.value.key == "estimate.touch_gap_mm" and "unknown key" in info.value.message
    # through the API (a Config's estimate table holds solver options): a config error naming the key
    from sensorcheck.physics.model import SOLVER_RANGES, SolverOptions

    for opts, key, words in (({"touch_gap_mm": 0}, "touch_gap_mm", "greater than 0 and at most 0.25"),
                             ({"touch_gap_mm": 0.3}, "touch_gap_mm", "at most 0.25"),
                             ({"h_edge_mm": -1.0}, "h_edge_mm", "greater than 0"),
                             ({"finger_sides": 2}, "finger_sides", "from 3 to 1000"),
                             ({"refine": float("nan")}, "refine", "greater than 0"),
                             ({"window_mm": "wide"}, "window_mm", "expected a number")):
        with pytest.raises(ConfigError) as info:
            SolverOptions.from_config(opts, "board.toml")
        assert info.value.key == f"estimate.{key}" and words in info.value.message and info.value.file == "board.toml"
        with pytest.raises(ValueError, match=key):
            SolverOptions(**opts)
    # every numeric option has its range, and the defaults lie within them
    numeric = {k for k, f in SolverOptions.__dataclass_fields__.items() if "float" in str(f.type) or "int" in str(f.type)}
    assert numeric <= set(SOLVER_RANGES)
    SolverOptions()
    SolverOptions.from_config({"touch_gap_mm": 0.25, "h_near_mm": None, "finger_sides": 3})


def test_through_the_command_line_exit_2_naming_file_key_and_range_without_traceback(tmp_path: Path, capsys) -> None:
    cfg = tmp_path / "bad.toml"
    cfg.write_text(OVERLAY + "[estimate]\nmax_height_mm = 0.2\n", encoding="utf-8")
    rc = main(["estimate", str(REPO / "boards" / "tm1-clean"), "--config", str(cfg), "--sensor", "K1"])
    err = capsys.readouterr().err
    assert rc == 2
    assert str(cfg) in err and "estimate.max_height_mm" in err and "greater than 0.25" in err
    assert "Traceback" not in err


def test_a_sweep_outside_the_physical_range_is_a_usage_error(tmp_path: Path, capsys) -> None:
    for sweep, words in (("overlay_thickness_mm=1,0", "greater than 0"), ("overlay_epsilon_r=0.5,2", "from 1 to 1000")):
        rc = main(["estimate", str(REPO / "boards" / "tm1-clean"), "--sweep", sweep, "--sensor", "K1"])
        err = capsys.readouterr().err
        assert rc == 2 and words in err and "Traceback" not in err


@pytest.mark.parametrize("jobs", ["0", "-1", "two"])
def test_a_worker_count_below_one_is_a_usage_error(jobs: str, capsys) -> None:
    # --jobs -1 reached the process pool and ended in a traceback ("max_workers must be greater than 0")
    try:
        rc = main(["check", str(REPO / "boards" / "tm1-clean"), str(REPO / "boards" / "tm1-flawed"), "--no-estimate",
                   "--jobs", jobs])
    except SystemExit as exc:  # argparse's usage error
        rc = exc.code
    err = capsys.readouterr().err
    assert rc == 2 and "--jobs" in err and "Traceback" not in err
