"""Open the input a user gives: a folder, a .zip as sent to a fab, or a single file.

Archives are untrusted (they come from merge requests). They are unpacked ONLY into a private
folder made by :func:`tempfile.mkdtemp` (mode 0700) that is removed afterwards, and refused
whole, before anything is written, when a member:

* has an absolute path, a drive letter, or a ``..`` component;
* is a link, a device file, a FIFO or a socket (Unix mode bits in the zip entry);
* has the same name as another member (compared case-insensitively, after normalisation);
* would take the archive past :class:`~sensorcheck.limits.Limits` (total uncompressed size,
  member count, compression ratio of one member).

The declared sizes in a zip directory are not trusted either: bytes are counted while they are
written and unpacking stops at the limit.

Names are shown through :func:`safe_name`, so a member name with control characters or bidi
overrides cannot garble a terminal or a report.
"""

from __future__ import annotations

import os
import shutil
import stat
import tempfile
import unicodedata
import zipfile
from collections.abc import Iterator
from contextlib import contextmanager
from dataclasses import dataclass
from pathlib import Path, PurePosixPath

from sensorcheck.errors import EmptyInputError, InputError, LimitError
from sensorcheck.limits import DEFAULT_LIMITS, Limits

#: members this small are not held to the compression-ratio limit (a few KB of zeros compress
#: more than 200:1 legitimately; a bomb needs size to hurt)
_RATIO_MIN_BYTES = 1024 * 1024
_CHUNK = 1024 * 1024


@dataclass(frozen=True, slots=True)
class InputFile:
    """One file of the input: its name relative to the input (posix, as shown) and where it is."""

    name: str
    path: Path
    size: int
    #: set when the file was found but must not be read (a link in a folder, over a size limit)
    error: str | None = None
    #: set when the file is listed but is plainly not fabrication data (macOS resource forks)
    note: str | None = None


def safe_name(name: str) -> str:
    """``name`` with control, format (bidi) and other non-printable characters escaped.

    Markup characters (``<``, ``[``) are kept as text here; each output escapes them for its
    own medium (HTML, rich markup).
    """
    out: list[str] = []
    for ch in name:
        cat = unicodedata.category(ch)
        if ch == "\\":
            out.append("\\\\")
        elif cat[0] in "CZ" and ch != " ":
            code = ord(ch)
            out.append(f"\\x{code:02x}" if code < 0x100 else f"\\u{code:04x}")
        else:
            out.append(ch)
    return "".join(out)


def _member_problem(name: str) -> str | None:
    """Why an archive member name is refused, or None when it is a plain relative path."""
    if "\x00" in name:
        return "a NUL character in the name"
    norm = name.replace("\\", "/")
    if norm.startswith("/"):
        return "an absolute path"
    if len(norm) >= 2 and norm[1] == ":" and norm[0].isalpha():
        return "a drive-letter path"
    if any(part == ".." for part in norm.split("/")):
        return "a '..' path component"
    return None


def _normalised(name: str) -> str:
    parts = [p for p in name.replace("\\", "/").split("/") if p not in ("", ".")]
    return "/".join(parts)


def _mode_problem(info: zipfile.ZipInfo) -> str | None:
    mode = info.external_attr >> 16
    if info.create_system != 3 or mode == 0:  # only Unix entries carry file-type bits
        return None
    if stat.S_ISLNK(mode):
        return "a symbolic link"
    if stat.S_ISCHR(mode) or stat.S_ISBLK(mode):
        return "a device file"
    if stat.S_ISFIFO(mode):
        return "a FIFO"
    if stat.S_ISSOCK(mode):
        return "a socket"
    return None


def check_zip_members(archive: str, infos: list[zipfile.ZipInfo], limits: Limits) -> list[zipfile.ZipInfo]:
    """Validate every member before anything is written; return the regular files to unpack."""
    shown = safe_name(archive)
    if len(infos) > limits.max_archive_members:
        raise LimitError(
            shown, None, f"archive has {len(infos)} members",
            f"at most {limits.max_archive_members} (limits.max_archive_members)",
        )
    seen: dict[str, str] = {}
    total = 0
    files: list[zipfile.ZipInfo] = []
    for info in infos:
        member = f"{shown}!{safe_name(info.filename)}"
        problem = _member_problem(info.filename) or _mode_problem(info)
        if problem:
            raise InputError(member, None, f"archive member refused: {problem}",
                             "plain files with relative paths inside the archive")
        key = _normalised(info.filename).casefold()
        if info.is_dir():
            continue
        if not key:
            raise InputError(member, None, "archive member refused: empty name", "a file name")
        if key in seen:
            raise InputError(member, None,
                             f"archive member refused: duplicate of {safe_name(seen[key])!s}",
                             "each file name once")
        seen[key] = info.filename
        total += info.file_size
        if total > limits.max_archive_bytes:
            raise LimitError(member, None, f"archive expands past {limits.max_archive_bytes} bytes",
                             "a smaller archive (limits.max_archive_bytes)")
        if info.file_size >= _RATIO_MIN_BYTES:
            ratio = info.file_size / max(info.compress_size, 1)
            if ratio > limits.max_compression_ratio:
                raise LimitError(member, None, f"compression ratio {ratio:.0f}:1",
                                 f"at most {limits.max_compression_ratio:.0f}:1 (limits.max_compression_ratio)")
        files.append(info)
    return files


def _unpack_zip(archive: Path, shown_name: str, dest: Path, limits: Limits) -> list[InputFile]:
    try:
        zf = zipfile.ZipFile(archive)
    except (zipfile.BadZipFile, OSError) as exc:
        raise InputError(safe_name(shown_name), None, f"cannot open archive: {exc}", "a valid .zip file") from None
    out: list[InputFile] = []
    with zf:
        members = check_zip_members(shown_name, zf.infolist(), limits)
        written_total = 0
        for info in members:
            rel = _normalised(info.filename)
            target = dest.joinpath(*PurePosixPath(rel).parts)
            # belt and braces: the resolved target must stay inside dest
            if not str(target.resolve(strict=False)).startswith(str(dest.resolve()) + os.sep):
                raise InputError(f"{safe_name(shown_name)}!{safe_name(info.filename)}", None,
                                 "archive member refused: resolves outside the unpack folder", "a relative path")
            target.parent.mkdir(parents=True, exist_ok=True, mode=0o700)
            flags = os.O_WRONLY | os.O_CREAT | os.O_EXCL | getattr(os, "O_NOFOLLOW", 0)
            written = 0
            try:
                with zf.open(info) as src:
                    fd = os.open(target, flags, 0o600)
                    with os.fdopen(fd, "wb") as dst:
                        while chunk := src.read(_CHUNK):
                            written += len(chunk)
                            written_total += len(chunk)
                            if written > info.file_size or written_total > limits.max_archive_bytes:
                                raise LimitError(
                                    f"{safe_name(shown_name)}!{safe_name(info.filename)}", None,
                                    "archive member expands past its declared size or the archive size limit",
                                    f"at most {limits.max_archive_bytes} bytes in all (limits.max_archive_bytes)",
                                )
                            dst.write(chunk)
            except (zipfile.BadZipFile, zipfile.LargeZipFile, NotImplementedError, OSError, EOFError) as exc:
                # zlib.error is not an OSError subclass: handled below
                raise InputError(f"{safe_name(shown_name)}!{safe_name(info.filename)}", None,
                                 f"cannot unpack archive member: {exc}", "a readable zip member") from None
            except Exception as exc:  # zlib.error and CRC errors surface with various types
                if isinstance(exc, InputError):
                    raise
                raise InputError(f"{safe_name(shown_name)}!{safe_name(info.filename)}", None,
                                 f"cannot unpack archive member: {exc}", "a readable zip member") from None
            out.append(InputFile(name=rel, path=target, size=written, note=_resource_fork_note(rel)))
    return out


def _resource_fork_note(rel: str) -> str | None:
    parts = rel.split("/")
    if parts[0] == "__MACOSX" or parts[-1].startswith("._") or parts[-1] in (".DS_Store", "Thumbs.db", "desktop.ini"):
        return "file-manager metadata (macOS resource fork or folder settings): not fabrication data"
    return None


def _walk_folder(root: Path, limits: Limits) -> list[InputFile]:
    out: list[InputFile] = []
    for dirpath, dirnames, filenames in os.walk(root, followlinks=False):
        # version-control folders (.git, .svn ...) hold no fabrication outputs: not walked
        dirnames[:] = sorted(d for d in dirnames if not d.startswith("."))
        base = Path(dirpath)
        for d in list(dirnames):
            if (base / d).is_symlink():
                dirnames.remove(d)
                rel = (base / d).relative_to(root).as_posix()
                out.append(InputFile(rel, base / d, 0, error="a symbolic link to a folder: not followed"))
        for fname in sorted(filenames):
            p = base / fname
            rel = p.relative_to(root).as_posix()
            st = p.lstat()
            if stat.S_ISLNK(st.st_mode):
                out.append(InputFile(rel, p, 0, error="a symbolic link: not followed"))
            elif not stat.S_ISREG(st.st_mode):
                out.append(InputFile(rel, p, 0, error="not a regular file: not read"))
            else:
                out.append(InputFile(rel, p, st.st_size, note=_resource_fork_note(rel)))
    if len(out) > limits.max_archive_members:
        raise LimitError(safe_name(str(root)), None, f"folder holds {len(out)} files",
                         f"at most {limits.max_archive_members} (limits.max_archive_members)")
    return sorted(out, key=lambda f: f.name)


def is_zip(path: Path) -> bool:
    try:
        return path.is_file() and zipfile.is_zipfile(path)
    except OSError:
        return False


@contextmanager
def open_input(path: str | Path, *, limits: Limits = DEFAULT_LIMITS) -> Iterator[list[InputFile]]:
    """Yield the files of a folder, a .zip (unpacked into a private temporary folder) or one file.

    Raises InputError/LimitError for a missing or empty input and for an unsafe archive.
    The temporary folder is removed when the context ends, also on error.
    """
    p = Path(path)
    shown = safe_name(str(path))
    if not p.exists():
        raise InputError(shown, None, "no such file or folder", "a folder or a .zip of fabrication outputs")
    if p.is_dir():
        files = _walk_folder(p, limits)
        if not files:
            raise EmptyInputError(shown, None, "the folder is empty", "fabrication outputs (Gerber, Excellon, ...)")
        yield files
        return
    if p.suffix.lower() == ".zip" or is_zip(p):
        tmp = Path(tempfile.mkdtemp(prefix="sensorcheck-"))
        try:
            files = _unpack_zip(p, str(path), tmp, limits)
            if not files:
                raise InputError(shown, None, "the archive holds no files", "fabrication outputs (Gerber, Excellon, ...)")
            yield sorted(files, key=lambda f: f.name)
        finally:
            shutil.rmtree(tmp, ignore_errors=True)
        return
    if p.is_file():
        size = p.stat().st_size
        yield [InputFile(p.name, p, size)]
        return
    raise InputError(shown, None, "not a regular file or folder", "a folder or a .zip of fabrication outputs")


def read_bytes(f: InputFile, limits: Limits = DEFAULT_LIMITS) -> bytes:
    """The whole file, refusing files over ``limits.max_file_bytes``."""
    if f.size > limits.max_file_bytes:
        raise LimitError(safe_name(f.name), None, f"file is {f.size} bytes",
                         f"at most {limits.max_file_bytes} bytes (limits.max_file_bytes)")
    with open(f.path, "rb") as fh:
        data = fh.read(limits.max_file_bytes + 1)
    if len(data) > limits.max_file_bytes:
        raise LimitError(safe_name(f.name), None, "file grew past the size limit while read",
                         f"at most {limits.max_file_bytes} bytes (limits.max_file_bytes)")
    return data


def read_head(f: InputFile, n_bytes: int = 65536) -> bytes:
    """The first ``n_bytes`` of a file (identification reads only the head)."""
    with open(f.path, "rb") as fh:
        return fh.read(n_bytes)
