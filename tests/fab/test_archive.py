"""Untrusted input folders and archives (issue 6, item 2).

The expectations are the threats themselves: a zip member must never land outside a private
temporary folder, links and device files are refused, limits stop bombs. Zips are built here with
the standard library's zipfile, so each case is exactly the one described.
"""

from __future__ import annotations

import os
import stat
import zipfile
from pathlib import Path

import pytest

from sensorcheck.errors import InputError, LimitError
from sensorcheck.fab.archive import open_input, read_bytes, safe_name
from sensorcheck.limits import Limits

GERBER = b"%FSLAX46Y46*%\n%MOMM*%\n%ADD10C,0.1*%\nD10*\nX0Y0D03*\nM02*\n"


def _zip(path: Path, members: list[tuple[str | zipfile.ZipInfo, bytes]]) -> Path:
    with zipfile.ZipFile(path, "w", compression=zipfile.ZIP_DEFLATED) as zf:
        for name, data in members:
            zf.writestr(name, data)
    return path


def _unix_entry(name: str, mode: int) -> zipfile.ZipInfo:
    info = zipfile.ZipInfo(name)
    info.create_system = 3
    info.external_attr = mode << 16
    return info


def test_zip_unpacks_into_a_private_temporary_folder_removed_afterwards(tmp_path: Path) -> None:
    z = _zip(tmp_path / "fab.zip", [("gerbers/top.gtl", GERBER), ("board.drl", b"M48\nMETRIC\n%\nM30\n")])
    with open_input(z) as files:
        names = [f.name for f in files]
        tmp = files[0].path.parent  # "board.drl" sits at the top of the unpack folder
        assert tmp != tmp_path and not str(files[0].path).startswith(str(tmp_path))
        assert stat.S_IMODE(os.stat(tmp).st_mode) == 0o700  # mkdtemp: private to the user
        assert read_bytes(files[1]) == GERBER
    assert names == ["board.drl", "gerbers/top.gtl"]
    assert not tmp.exists()


@pytest.mark.parametrize(
    "member, why",
    [
        ("../evil.gtl", "'..'"),
        ("a/../../evil.gtl", "'..'"),
        ("/etc/evil.gtl", "absolute"),
        ("C:/evil.gtl", "drive-letter"),
        ("..\\evil.gtl", "'..'"),
    ],
)
def test_zip_member_escaping_the_folder_is_refused_before_anything_is_written(
    tmp_path: Path, member: str, why: str
) -> None:
    z = _zip(tmp_path / "fab.zip", [("ok.gtl", GERBER), (member, GERBER)])
    with pytest.raises(InputError) as exc:
        with open_input(z):
            pass
    assert why in exc.value.message and "fab.zip!" in str(exc.value.file)
    assert not (tmp_path / "evil.gtl").exists() and not (tmp_path.parent / "evil.gtl").exists()


@pytest.mark.parametrize(
    "mode, why",
    [
        (stat.S_IFLNK | 0o777, "symbolic link"),
        (stat.S_IFCHR | 0o666, "device file"),
        (stat.S_IFBLK | 0o666, "device file"),
        (stat.S_IFIFO | 0o666, "FIFO"),
    ],
)
def test_zip_links_and_special_files_are_refused(tmp_path: Path, mode: int, why: str) -> None:
    z = _zip(tmp_path / "fab.zip", [(_unix_entry("top.gtl", mode), b"/etc/passwd")])
    with pytest.raises(InputError, match=why):
        with open_input(z):
            pass


def test_zip_duplicate_names_are_refused_also_when_they_differ_only_in_case(tmp_path: Path) -> None:
    z = _zip(tmp_path / "fab.zip", [("top.gtl", GERBER), ("./TOP.GTL", GERBER)])
    with pytest.raises(InputError, match="duplicate"):
        with open_input(z):
            pass


def test_zip_past_the_total_size_limit_is_refused(tmp_path: Path) -> None:
    z = _zip(tmp_path / "fab.zip", [(f"l{i}.gbr", GERBER * 40) for i in range(5)])
    with pytest.raises(LimitError, match="max_archive_bytes"):
        with open_input(z, limits=Limits(max_archive_bytes=3 * len(GERBER) * 40)):
            pass


def test_zip_past_the_member_count_limit_is_refused(tmp_path: Path) -> None:
    z = _zip(tmp_path / "fab.zip", [(f"l{i}.gbr", GERBER) for i in range(6)])
    with pytest.raises(LimitError, match="max_archive_members"):
        with open_input(z, limits=Limits(max_archive_members=5)):
            pass


def test_zip_bomb_member_is_refused_by_its_compression_ratio(tmp_path: Path) -> None:
    # 4 MiB of one byte deflates to about 4 KiB (ratio ~1000:1, zlib), well past the default 200:1
    z = _zip(tmp_path / "fab.zip", [("bomb.gbr", b"0" * (4 * 1024 * 1024))])
    with pytest.raises(LimitError, match="compression ratio"):
        with open_input(z):
            pass


def test_empty_folder_and_empty_archive_are_input_errors(tmp_path: Path) -> None:
    (tmp_path / "empty").mkdir()
    with pytest.raises(InputError, match="empty"):
        with open_input(tmp_path / "empty"):
            pass
    z = _zip(tmp_path / "empty.zip", [])
    with pytest.raises(InputError, match="no files"):
        with open_input(z):
            pass


def test_corrupt_zip_is_an_input_error(tmp_path: Path) -> None:
    bad = tmp_path / "fab.zip"
    bad.write_bytes(b"PK\x03\x04 this is not really a zip")
    with pytest.raises(InputError, match="archive"):
        with open_input(bad):
            pass


def test_folder_symlinks_are_listed_as_errors_not_followed(tmp_path: Path) -> None:
    d = tmp_path / "fab"
    d.mkdir()
    (d / "top.gtl").write_bytes(GERBER)
    secret = tmp_path / "secret.txt"
    secret.write_text("not yours")
    (d / "link.gbl").symlink_to(secret)
    with open_input(d) as files:
        by = {f.name: f for f in files}
    assert by["link.gbl"].error and "symbolic link" in by["link.gbl"].error
    assert by["top.gtl"].error is None


def test_file_over_the_size_limit_is_refused_when_read(tmp_path: Path) -> None:
    d = tmp_path / "fab"
    d.mkdir()
    (d / "top.gtl").write_bytes(GERBER)
    with open_input(d) as files:
        with pytest.raises(LimitError, match="max_file_bytes"):
            read_bytes(files[0], Limits(max_file_bytes=10))


def test_names_with_control_characters_and_bidi_overrides_are_shown_escaped() -> None:
    shown = safe_name("top\x1b[31m\u202egtl.exe\n<b>.gbr")
    assert "\x1b" not in shown and "\u202e" not in shown and "\n" not in shown
    assert "\\x1b" in shown and "\\u202e" in shown and "\\x0a" in shown
    assert "<b>" in shown  # markup stays text here: each output escapes it for its medium


def test_zip_member_name_with_control_characters_is_escaped_in_the_error(tmp_path: Path) -> None:
    z = _zip(tmp_path / "fab.zip", [("../\x1b[2Jx.gtl", GERBER)])
    with pytest.raises(InputError) as exc:
        with open_input(z):
            pass
    assert "\x1b" not in exc.value.describe() and "\\x1b" in exc.value.describe()


def test_macos_resource_forks_are_listed_with_a_note_and_hidden_folders_skipped(tmp_path: Path) -> None:
    z = _zip(tmp_path / "fab.zip", [("top.gtl", GERBER), ("__MACOSX/._top.gtl", b"\x00\x05\x16\x07junk")])
    with open_input(z) as files:
        by = {f.name: f for f in files}
    assert by["__MACOSX/._top.gtl"].note and by["top.gtl"].note is None
    d = tmp_path / "fab"
    (d / ".git").mkdir(parents=True)
    (d / ".git" / "HEAD").write_text("ref: refs/heads/main\n")
    (d / "top.gtl").write_bytes(GERBER)
    with open_input(d) as files:
        assert [f.name for f in files] == ["top.gtl"]
