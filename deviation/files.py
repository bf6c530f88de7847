"""Writing outputs whole or not at all, and never onto the plan."""

from __future__ import annotations

import os
import tempfile
from pathlib import Path

from .errors import DeviationError


class OutputError(DeviationError, ValueError):
    """An output that must not be written (e.g. onto the input plan)."""


def check_output(path, plan_path):
    """Refuse an output path that is the plan itself or lies inside a CSV plan folder's files."""
    out = Path(path).resolve()
    plan = Path(plan_path).resolve()
    if out == plan or (plan.is_dir() and out.parent == plan and out.suffix.lower() == ".csv"):
        raise OutputError(f"{path} is the input plan; write the report to another file")


def write_atomically(path, save):
    """Call ``save(temporary_path)``, then rename onto ``path``; on any failure nothing is left.

    The temporary file lies in the same folder, so the rename is atomic on POSIX and Windows.
    """
    path = Path(path)
    folder = path.parent if str(path.parent) else Path(".")
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
