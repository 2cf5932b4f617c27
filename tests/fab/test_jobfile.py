"""Gerber job file reader.

External references: corpus b06 (KiCad 6.0.5 job file) checked against the X2 ``.FileFunction``
in each listed file's own header (two independent statements by the generator); the Gerber Job
Format (Ucamco 2022) field names, from memory.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from sensorcheck.errors import InputError
from sensorcheck.fab.identify import from_file_function, head_file_attributes
from sensorcheck.fab.jobfile import DEFAULT_COPPER_MM, read_jobfile


def test_b06_job_file_agrees_with_each_files_own_x2_header(shared_dir: Path) -> None:
    fab = shared_dir / "corpus/b06-keyboard/fab"
    job = read_jobfile((fab / "MPR121TouchKeyboard-job.gbrjob").read_bytes(), "job.gbrjob")
    assert job.board_thickness_mm == 1.6 and job.layer_number == 2
    assert job.generator == "KiCad Pcbnew (6.0.5)"
    assert len(job.files) == 7
    for path, function in job.files.items():
        attrs = head_file_attributes((fab / path).read_bytes()[:65536])
        # KiCad capitalises differently and drops Profile's ",NP" in the job file: compare what they mean
        assert from_file_function(path, attrs[".FileFunction"], "x2").layer == from_file_function(
            path, function.split(","), "jobfile").layer
    st = job.stackup
    assert st is not None and st.source == "jobfile"
    cu = [layer for layer in st.layers if layer.kind == "copper"]
    assert [c.copper_layer for c in cu] == ["top-copper", "bottom-copper"]
    # no thicknesses in this job file: copper defaults, the dielectric takes the rest of 1.6 mm
    assert all(c.thickness_mm == DEFAULT_COPPER_MM for c in cu)
    (die,) = [layer for layer in st.layers if layer.kind == "dielectric"]
    assert die.material == "FR4" and die.thickness_mm == pytest.approx(1.6 - 2 * DEFAULT_COPPER_MM)
    assert any("assumed" in n for n in job.notes)
    z = st.copper_z_mm()
    assert z["top-copper"] - z["bottom-copper"] == pytest.approx(die.thickness_mm + DEFAULT_COPPER_MM)


def test_explicit_stackup_with_dielectric_constants() -> None:
    doc = {
        "Header": {"GenerationSoftware": {"Vendor": "X", "Application": "Y", "Version": "1"}},
        "GeneralSpecs": {"BoardThickness": 0.8, "LayerNumber": 4},
        "MaterialStackup": [
            {"Type": "SolderMask", "Thickness": 0.01, "DielectricConstant": 3.3},
            {"Type": "Copper", "Thickness": 0.035, "Name": "F.Cu"},
            {"Type": "Dielectric", "Thickness": 0.2, "Material": "FR4", "DielectricConstant": 4.5},
            {"Type": "Copper", "Thickness": 0.018},
            {"Type": "Dielectric", "Thickness": 0.3, "DielectricConstant": 4.6},
            {"Type": "Copper", "Thickness": 0.018},
            {"Type": "Dielectric", "Thickness": 0.2, "DielectricConstant": 4.5},
            {"Type": "Copper", "Thickness": 0.035},
            {"Type": "Legend"},
        ],
    }
    st = read_jobfile(json.dumps(doc).encode(), "j.gbrjob").stackup
    assert st is not None
    assert [layer.copper_layer for layer in st.layers if layer.kind == "copper"] == [
        "top-copper", "inner1-copper", "inner2-copper", "bottom-copper"]
    assert [layer.epsilon_r for layer in st.layers if layer.kind == "dielectric"] == [4.5, 4.6, 4.5]
    assert st.layers[0].kind == "mask"


@pytest.mark.parametrize(
    "data, line, expected",
    [
        (b"", None, "JSON"),
        (b'{"Header": {},\n  "GeneralSpecs": {\n', 3, "JSON"),
        (b"[1, 2]", 1, "JSON object"),
        (b'{"GeneralSpecs": {"BoardThickness": "thick"}}', None, "number"),
        (b'{"MaterialStackup": [{"Type": "Dielectric"}]}', None, "board thickness"),
        (b'{"MaterialStackup": [{"Type": "Dielectric", "Thickness": 1, "DielectricConstant": 0.5}]}', None, ">= 1"),
        (b"\xff\xfe\x00garbage", 1, "UTF-8"),
    ],
)
def test_bad_job_files(data: bytes, line: int | None, expected: str) -> None:
    with pytest.raises(InputError) as exc:
        read_jobfile(data, "bad.gbrjob")
    assert exc.value.file == "bad.gbrjob" and exc.value.line == line and expected in (exc.value.expected or "")


# --- robustness: mutated real files either read or raise our InputError (issue 6, item 1) ----------
from hypothesis import HealthCheck, given, settings  # noqa: E402

from board.fuzz import MUTATIONS, apply  # noqa: E402  (tests/board/fuzz.py)


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(ops=MUTATIONS)
def test_mutated_job_files_read_or_raise_input_error(shared_dir: Path, ops: list) -> None:
    src = (shared_dir / "corpus/b06-keyboard/fab/MPR121TouchKeyboard-job.gbrjob").read_bytes()
    try:
        read_jobfile(apply(src, ops), "m.gbrjob")
    except InputError as exc:
        assert exc.file == "m.gbrjob" and exc.expected
