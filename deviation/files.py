"""Writing outputs whole or not at all, and never onto the plan; a file that cannot be read or
written named with the reason, in one line."""

from __future__ import annotations

import errno
import gc
import os
import stat
import sys
import tempfile
import traceback
from pathlib import Path

from .errors import DeviationError


class OutputError(DeviationError, ValueError):
    """An output that must not be written (e.g. onto the input plan)."""


class FileError(DeviationError, OSError):
    """A file the tool could not read or write: the file and the reason, in one line.

    An :class:`OSError` too (``errno`` and ``filename`` are set), so ``except OSError`` still
    catches it; the command line exits with status 3.
    """

    def __init__(self, path, action: str, reason: str, code: int | None = None):
        OSError.__init__(self, code, reason, str(path))
        self.path = str(path)
        self.action = action
        self.reason = reason

    def __str__(self) -> str:
        return f"cannot {self.action} {self.path}: {self.reason}"


#: What a failed system call means to the person who ran the command, by errno.
_REASONS = {
    errno.ENOSPC: "the disk is full",
    errno.EFBIG: "the file would pass the file-size limit (ulimit -f)",
    errno.EDQUOT: "the disk quota is used up",
    errno.EROFS: "the file system is read-only",
    errno.EACCES: "permission denied",
    errno.EPERM: "permission denied",
    errno.ENOENT: "no such file or folder",
    errno.EISDIR: "it is a folder",
    errno.ENOTDIR: "a part of the path is a file, not a folder",
    errno.EIO: "input/output error (a failing disk or a lost network share)",
    errno.EPIPE: "the reader closed the pipe",
    errno.EMFILE: "too many open files",
    errno.ENAMETOOLONG: "the name is too long",
}


def reason_of(error: BaseException) -> str:
    """The reason an operating-system error gives, in words, with its errno name (ENOSPC)."""
    code = getattr(error, "errno", None)
    text = _REASONS.get(code) if code is not None else None
    if text is None:
        text = (getattr(error, "strerror", None) or str(error) or type(error).__name__)
    name = errno.errorcode.get(code) if code is not None else None
    return f"{text} ({name})" if name else text


def file_error(error: OSError, path=None, action: str = "write") -> FileError:
    """``error`` as a :class:`FileError` naming ``path`` (default: the file the error names)."""
    if isinstance(error, FileError):
        return error
    named = path if path is not None else (error.filename or "a file")
    return FileError(named, action, reason_of(error), error.errno)


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
        raise OutputError(f"{path} is the input plan; write to another file")


def check_writable(path, *, force: bool = False) -> None:
    """Refuse, before any work, an output that could not be written.

    Refused: a folder that does not exist, or cannot be written (tried by making and removing
    a temporary file in it, so a read-only file system or a full quota of files is found too); a
    disk with no free block; an existing folder, device or pipe in the output's place; an
    existing read-only file unless ``force`` (the tool would replace it: it writes a new file and
    renames it into place). Raises :class:`OutputError` for a wrong name, :class:`FileError`
    for a file system that will not take the file.
    """
    path = Path(path)
    _check_folder(path)
    folder = _folder_of(path)
    try:
        status = os.stat(path)
    except FileNotFoundError:
        status = None
    except OSError as error:
        raise file_error(error, path) from None
    if status is not None:
        if stat.S_ISDIR(status.st_mode):
            raise OutputError(f"{path} is a folder; give a file name")
        if not stat.S_ISREG(status.st_mode):
            raise OutputError(f"{path} is not a regular file (a device, a pipe or a socket); "
                              "write to a file")
        if not force and _read_only(path, status):
            raise FileError(path, "write", "it is read-only, and was left as it is (--force "
                                           "replaces it)", errno.EACCES)
    try:
        handle, probe = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".part", dir=folder)
    except OSError as error:
        raise FileError(path, "write", f"{reason_of(error)} in the folder {folder}",
                        error.errno) from None
    os.close(handle)
    os.unlink(probe)
    try:
        space = os.statvfs(folder)
    except (OSError, AttributeError):                   # no statvfs (Windows): not known
        return
    free = space.f_bfree if hasattr(os, "geteuid") and os.geteuid() == 0 else space.f_bavail
    if free == 0 and space.f_blocks > 0:
        raise FileError(path, "write", reason_of(OSError(errno.ENOSPC, "")), errno.ENOSPC)


def _read_only(path, status) -> bool:
    """Whether an existing file is read-only: not writable by this user, or by nobody at all
    (the mode bits, which a superuser's ``os.access`` ignores)."""
    return not (status.st_mode & 0o222) or not os.access(path, os.W_OK)


def write_atomically(path, save):
    """Call ``save(temporary_path)``, then rename onto ``path``; on any failure nothing is left.

    The temporary file lies in the same folder, so the rename is atomic on POSIX and Windows.
    A failure of the file system (full disk, file-size limit, permissions) is raised as a
    :class:`FileError` naming ``path``; an interruption (KeyboardInterrupt, or the command
    line's SIGTERM) removes the temporary file too, and the file at ``path`` is left as it was.
    """
    path = Path(path)
    _check_folder(path)
    folder = _folder_of(path)
    temporary = None
    try:
        handle, temporary = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".part", dir=folder)
        os.close(handle)
        save(temporary)
        # mkstemp makes a private file; give the output the permissions a new file gets here.
        mask = os.umask(0)
        os.umask(mask)
        os.chmod(temporary, 0o666 & ~mask)
        os.replace(temporary, path)
    except OSError as error:
        _release(error)
        _discard(temporary)
        if isinstance(error, FileError):
            raise
        where = f" in the folder {folder}" if temporary is None else ""
        raise FileError(path, "write", reason_of(error) + where, error.errno) from None
    except BaseException as error:
        _release(error)
        _discard(temporary)
        raise


def _release(error):
    """Let go, now and quietly, of what a failed save still holds.

    A writer stopped midway (openpyxl's zip archive) keeps its temporary file open in the
    traceback's frames; when it is collected its ``__del__`` tries to finish the archive, on the
    same full disk, and Python prints that second failure as "Exception ignored ... Traceback".
    The frames are cleared here, with such an OSError from a destructor set aside: the first
    failure is the one reported.
    """
    previous = sys.unraisablehook

    def quiet(unraisable):
        if not isinstance(unraisable.exc_value, OSError):
            previous(unraisable)

    sys.unraisablehook = quiet
    try:
        traceback.clear_frames(error.__traceback__)
        gc.collect()
    finally:
        sys.unraisablehook = previous


def _discard(temporary):
    """Remove a temporary file, if it was made and is still there."""
    if temporary is None:
        return
    try:
        os.unlink(temporary)
    except FileNotFoundError:
        pass
    except OSError:                                     # nothing more can be done about it
        pass


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
