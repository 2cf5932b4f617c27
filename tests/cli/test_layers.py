"""``sensorcheck layers``: output on real boards, and every bad-input class through the command line.

Each bad input must give exit code 2 and a message on stderr naming the file, the line where
there is one, and what was expected, and never a traceback. The bad files are written here; the
good parts of the boards are our own (tests/board/gerbers.py) or the corpus (skipped when absent).
"""

from __future__ import annotations

import json
import stat
import zipfile
from pathlib import Path

import pytest

from sensorcheck.cli import main

from board.gerbers import excellon, flash, gerber, square_outline  # tests/board/gerbers.py


def _run(capsys: pytest.CaptureFixture[str], *argv: str) -> tuple[int, str, str]:
    code = main(["layers", *argv])
    out, err = capsys.readouterr()
    assert "Traceback" not in out + err
    return code, out, err


def _good_board(d: Path) -> Path:
    d.mkdir(parents=True, exist_ok=True)
    (d / "demo-F_Cu.gbr").write_bytes(gerber([flash(10, 10), flash(20, 10)], function="Copper,L1,Top"))
    (d / "demo-B_Cu.gbr").write_bytes(gerber([flash(10, 10)], function="Copper,L2,Bot"))
    (d / "demo-Edge_Cuts.gbr").write_bytes(square_outline(0, 0, 30, 20))
    (d / "demo-PTH.drl").write_bytes(excellon([(10, 10)]))
    return d


def test_good_board_text_and_json(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    d = _good_board(tmp_path / "demo")
    (d / "notes.md").write_text("# fab notes\n")
    code, out, err = _run(capsys, str(d))
    assert code == 0 and not err
    assert "top-copper" in out and "bottom-copper" in out and "Not understood (1)" in out and "notes.md" in out
    assert "\x1b[" not in out  # no colour when not a terminal
    code, out, _ = _run(capsys, str(d), "--format", "json")
    doc = json.loads(out)
    assert code == 0 and doc["errors"] == 0
    assert [c["layer"] for c in doc["copper_layers"]] == ["top-copper", "bottom-copper"]
    by = {f["path"]: f for f in doc["files"]}
    # two 2 mm square pads (aperture R,2x2): 8 mm2 of copper (by construction)
    assert by["demo-F_Cu.gbr"]["dark_area_mm2"] == pytest.approx(8.0, rel=1e-9)
    assert by["notes.md"]["understood"] is False
    code2, out2, _ = _run(capsys, str(d), "--format", "json")
    assert out2 == out  # deterministic


def test_zip_input_gives_the_same_result_as_the_folder(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    d = _good_board(tmp_path / "demo")
    z = tmp_path / "demo.zip"
    with zipfile.ZipFile(z, "w") as zf:
        for f in sorted(d.iterdir()):
            zf.write(f, f"gerbers/{f.name}")
    _, folder_out, _ = _run(capsys, str(d), "--format", "json")
    code, zip_out, _ = _run(capsys, str(z), "--format", "json")
    a, b = json.loads(folder_out), json.loads(zip_out)
    assert code == 0
    assert [f["layer"] for f in a["files"]] == [f["layer"] for f in b["files"]]
    assert a["nets"] == b["nets"]


def test_layer_map_overrides_identification(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    d = _good_board(tmp_path / "demo")
    (d / "mystery.art").write_bytes(gerber([flash(15, 15)]))
    code, out, _ = _run(capsys, str(d), "--format", "json")
    assert code == 0 and {f["path"]: f for f in json.loads(out)["files"]}["mystery.art"]["understood"] is False
    code, out, _ = _run(capsys, str(d), "--format", "json", "--layer-map", "*.art=top-silk")
    f = {f["path"]: f for f in json.loads(out)["files"]}["mystery.art"]
    assert code == 0 and f["layer"] == "top-silk" and f["identified_by"] == "override"
    code, _, err = _run(capsys, str(d), "--layer-map", "*.art=top-sikl")
    assert code == 2 and "top-sikl" in err and "expected one of" in err


@pytest.mark.parametrize(
    "name, data, line, expected",
    [
        ("demo-NPTH.drl", b"\x89PNG\r\n\x1a\n\x00\x00\x00\rIHDR garbage", 1, "Excellon"),  # binary, named .drl
        ("demo-x.drl", b"; #@! TF.FileFunction,Plated,1,2,PTH\nM48\nMETRIC\nT1C0.3\n%\nT1\n!!garbage!!\nM30\n", 7, "Excellon command"),
        ("demo-y.drl", b"M48\nMETRIC\nT1C0.3\n%\nT1\nX1.0Y1.0\n", 6, "M30"),  # truncated
        ("demo-In1_Cu.gbr", b"%TF.FileFunction,Copper,L2,Inr*%\n\x00\x01\x02\xff\xfe binary", None, None),  # binary claiming Gerber
        ("demo-In2_Cu.gbr", b"%TF.FileFunction,Copper,L3,Inr*%\n%FSLAX46Y46*%\n%MOMM*%\n%ADD10C,1*%\nD10*\nX0Y0D03*\n", None, None),  # no M02
        ("demo-In3_Cu.gbr", b"%FSLAX46Y46*%\n%MOMM*%\nD11*\nX0Y0D03*\nM02*\n", None, None),  # undefined aperture
        ("mystery.dat", b"%TF.FileFunction,Copper,L3,Inr*%\n\x00\x01\x02 garbage", None, None),  # Gerber by X2 only
    ],
)
def test_bad_file_exits_2_naming_file_line_and_expectation(
    tmp_path: Path, capsys: pytest.CaptureFixture[str], name: str, data: bytes, line: int | None, expected: str | None
) -> None:
    d = _good_board(tmp_path / "demo")
    (d / name).write_bytes(data)
    code, out, err = _run(capsys, str(d))
    assert code == 2
    msg = next(ln for ln in err.splitlines() if name in ln)
    assert msg.startswith("sensorcheck: error: ")
    if line is not None:
        assert f"{name}:{line}:" in msg
    assert "expected" in msg
    if expected:
        assert expected in msg
    assert "top-copper" in out  # the other files were still read and printed


def test_drill_file_in_inch_against_gerber_in_mm(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    d = _good_board(tmp_path / "demo")
    # an INCH drill file whose numbers are really mm: holes land 25.4 times too far out
    (d / "demo-PTH.drl").write_bytes(b"M48\nINCH\nT1C0.0157\n%\nT1\nX10.0Y10.0\nX20.0Y10.0\nM30\n")
    code, _, err = _run(capsys, str(d))
    assert code == 2
    assert "demo-PTH.drl:6:" in err and "far outside the board outline" in err and "read as mm they would fit" in err


def test_layer_far_outside_the_outline(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    d = _good_board(tmp_path / "demo")
    (d / "demo-F_Mask.gbr").write_bytes(gerber([flash(1000, 1000)], function="Soldermask,Top"))
    code, _, err = _run(capsys, str(d))
    assert code == 2 and "demo-F_Mask.gbr" in err and "far outside the board outline" in err and "expected" in err


def test_empty_folder_and_empty_archive(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    (tmp_path / "empty").mkdir()
    code, _, err = _run(capsys, str(tmp_path / "empty"))
    assert code == 2 and "empty" in err and "expected" in err
    with zipfile.ZipFile(tmp_path / "empty.zip", "w"):
        pass
    code, _, err = _run(capsys, str(tmp_path / "empty.zip"))
    assert code == 2 and "empty.zip" in err and "no files" in err
    code, _, err = _run(capsys, str(tmp_path / "missing"))
    assert code == 2 and "no such file" in err


def _zip_with(tmp: Path, extra: zipfile.ZipInfo | str, data: bytes = b"x") -> Path:
    z = tmp / "fab.zip"
    with zipfile.ZipFile(z, "w", compression=zipfile.ZIP_DEFLATED) as zf:
        zf.writestr("demo-F_Cu.gbr", gerber([flash(10, 10)], function="Copper,L1,Top"))
        zf.writestr(extra, data)
    return z


def _unix(name: str, mode: int) -> zipfile.ZipInfo:
    info = zipfile.ZipInfo(name)
    info.create_system = 3
    info.external_attr = mode << 16
    return info


@pytest.mark.parametrize(
    "member, data, why",
    [
        ("../../escape.gbr", b"x", "'..'"),
        ("/tmp/abs.gbr", b"x", "absolute path"),
        (_unix("link.gbr", stat.S_IFLNK | 0o777), b"/etc/passwd", "symbolic link"),
        (_unix("dev.gbr", stat.S_IFCHR | 0o600), b"", "device file"),
        ("DEMO-F_CU.GBR", b"x", "duplicate"),
        ("bomb.gbr", b"\x00" * (8 * 1024 * 1024), "compression ratio"),
    ],
)
def test_unsafe_archives_exit_2_naming_archive_and_member(
    tmp_path: Path, capsys: pytest.CaptureFixture[str], member: zipfile.ZipInfo | str, data: bytes, why: str
) -> None:
    z = _zip_with(tmp_path, member, data)
    code, _, err = _run(capsys, str(z))
    assert code == 2 and "fab.zip!" in err and why in err and "expected" in err
    assert not (tmp_path.parent / "escape.gbr").exists() and not Path("/tmp/abs.gbr").exists()


def test_file_name_with_control_characters_and_markup_is_shown_safely(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    d = _good_board(tmp_path / "demo")
    (d / "evil\x1b[31m[bold]<b>.txt").write_text("hello")
    code, out, _ = _run(capsys, str(d))
    assert code == 0
    assert "\x1b" not in out and "\\x1b[31m[bold]<b>.txt" in out  # escaped, and rich markup shown as text


@pytest.mark.corpus
def test_b03_wheel_layers_and_nets(shared_dir: Path, capsys: pytest.CaptureFixture[str]) -> None:
    code, out, _ = _run(capsys, str(shared_dir / "corpus/b03-wheel/fab"), "--format", "json")
    doc = json.loads(out)
    assert code == 0 and doc["errors"] == 0
    assert [c["layer"] for c in doc["copper_layers"]] == ["top-copper", "bottom-copper"]
    # the wheel's electrodes are named in the board's X2 attributes (README: a 3-electrode wheel)
    assert {"/TOUCH0", "/TOUCH1", "/TOUCH2"} <= set(doc["nets"])
    assert doc["net_source"] in ("x2", "geometry+x2")
