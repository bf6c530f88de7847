"""Writing outputs whole or not at all, and never onto the plan."""

from __future__ import annotations

import os
import tempfile
from pathlib import Path

from .errors import DeviationError


class OutputError(DeviationError, ValueError):
    """An output that must not be written (e.g. onto the input plan)."""


def check_output(path, plan_path):
    """Refuse, before any work, an output that cannot be written or would replace the plan.

    Refused: an output whose folder does not exist; the plan itself (compared as the file system
    compares names, so on a case-insensitive one ``plan.XLSX`` is ``plan.xlsx``); a ``.csv`` file
    inside a CSV plan folder.
    """
    out = Path(path)
    _check_folder(out)
    plan = Path(plan_path)
    if _same_file(out, plan) or (plan.is_dir() and _same_file(_folder_of(out), plan)
                                 and out.suffix.lower() == ".csv"):
        raise OutputError(f"{path} is the input plan; write the report to another file")


def write_atomically(path, save):
    """Call ``save(temporary_path)``, then rename onto ``path``; on any failure nothing is left.

    The temporary file lies in the same folder, so the rename is atomic on POSIX and Windows.
    """
    path = Path(path)
    _check_folder(path)
    folder = _folder_of(path)
    handle, temporary = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".part", dir=folder)
    os.close(handle)
    try:
        save(temporary)
        # mkstemp makes a private file; give the output the permissions a new file gets here.
        mask = os.umask(0)
        os.umask(mask)
        os.chmod(temporary, 0o666 & ~mask)
        os.replace(temporary, path)
    except BaseException:
        if os.path.exists(temporary):
            os.unlink(temporary)
        raise


def _folder_of(path):
    return path.parent if str(path.parent) else Path(".")


def _check_folder(path):
    """An output's folder must exist (it is never created: a mistyped folder is a mistake)."""
    folder = _folder_of(Path(path))
    if not folder.exists():
        raise OutputError(f"the folder {folder} does not exist; create it or write elsewhere")
    if not folder.is_dir():
        raise OutputError(f"{folder} is a file, not a folder; write elsewhere")


def _same_file(a, b):
    """Whether two paths name the same file, as the file system holding them compares names."""
    a, b = Path(a), Path(b)
    if a.exists() and b.exists():
        return os.path.samefile(a, b)
    a, b = a.resolve(), b.resolve()
    if a == b:
        return True
    return (str(a).casefold() == str(b).casefold()
            and _case_insensitive(_folder_of(a) if not a.is_dir() else a))


def _case_insensitive(folder):
    """Whether the file system of ``folder`` ignores the case of names (macOS, Windows by default).

    Probed on a name already in the folder (is its case-swapped name the same file?); in a folder
    with no such name, on a short-lived probe file. An unreadable folder counts as case-sensitive.
    """
    folder = Path(folder)
    try:
        for entry in os.scandir(folder):
            swapped = entry.name.swapcase()
            if swapped != entry.name:
                other = folder / swapped
                return other.exists() and os.path.samefile(folder / entry.name, other)
        handle, probe = tempfile.mkstemp(prefix=".case-probe-", dir=folder)
    except OSError:
        return False
    os.close(handle)
    try:
        return os.path.exists(os.path.join(folder, os.path.basename(probe).upper()))
    finally:
        os.unlink(probe)


def plan_digest(path) -> str | None:
    """The SHA-256 of a plan as hex, to tie a printed report to the file it came from.

    A workbook is hashed as its bytes (``sha256sum plan.xlsx`` gives the same). A folder of CSV
    sheets is hashed over its ``.csv`` files in name order, each as its name, a NUL byte, its
    size in decimal, a NUL byte and its bytes, so renaming, adding or changing a sheet changes
    the digest. None where the plan is not a file or folder (built from tables in Python).
    """
    import hashlib

    path = Path(path)
    digest = hashlib.sha256()
    if path.is_file():
        with open(path, "rb") as handle:
            for block in iter(lambda: handle.read(1 << 20), b""):
                digest.update(block)
        return digest.hexdigest()
    if path.is_dir():
        for sheet in sorted(p for p in path.iterdir() if p.suffix.lower() == ".csv"
                            and p.is_file()):
            data = sheet.read_bytes()
            digest.update(sheet.name.encode("utf-8") + b"\0" + str(len(data)).encode() + b"\0")
            digest.update(data)
        return digest.hexdigest()
    return None
