"""Faults while writing, for every write path: a full disk, a file-size limit, a read-only folder,
a read-only file in the output's place, SIGTERM and Ctrl-C during a save, and a short write on
standard output.

Each must end with exit status 3 (or 130 / 143 for a signal), one line on stderr naming the file
and the reason, no traceback, no temporary file left behind, and an earlier output untouched.
The exit statuses are the project's contract (README, "Exit status"); the errno values are
POSIX's (ENOSPC, EFBIG, EACCES).
"""

from __future__ import annotations

import builtins
import csv
import errno
import io
import os
import shutil
import signal
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import pytest

import deviation
from conftest import ROOT, SAMPLES, run_cli, straight_wire_plan, write_plan
from deviation import api, files

#: What an earlier output holds; a failed write must leave exactly this.
EARLIER = b"an earlier output, to be left as it is\n"


def _sheets():
    """A compass and an electronic compass above a straight run: every command has work."""
    sheets = straight_wire_plan(current=10.0, depth_m=1.0, budget=1.0)
    sheets["sensors"].append(["heading sensor", "0.3, 0, 0", "electronic compass", 2, "", ""])
    return sheets


@pytest.fixture(scope="module")
def plan(tmp_path_factory):
    return write_plan(tmp_path_factory.mktemp("plan") / "plan", _sheets())


@pytest.fixture(scope="module")
def readings(plan, tmp_path_factory):
    """Switch-on results as planned, and a swing of the plan's own card (test-results, swing)."""
    from deviation.aftercare import switch_on_test

    folder = tmp_path_factory.mktemp("readings")
    the_plan = deviation.read_plan(plan)
    test = switch_on_test(the_plan, "compass", 90.0)
    results = folder / "results.csv"
    with open(results, "w", newline="") as f:
        out = csv.writer(f)
        out.writerow(["circuit", "reading before", "reading after"])
        for row in test.rows:
            if row.kind != "circuit":
                continue
            out.writerow([row.name, 100.0, round(100.0 + row.predicted_change_deg, 1)])
    card = api.deviation_cards(the_plan, "compass", 30.0)[0].states[0]
    swing = folder / "swing.csv"
    with open(swing, "w", newline="") as f:
        out = csv.writer(f)
        out.writerow(["state", "compass", "deviation"])
        for magnetic, deviation_deg in zip(card.headings_deg, card.deviation_deg):
            out.writerow([card.state, f"{(magnetic - deviation_deg) % 360:.1f}",
                          f"{abs(deviation_deg):.3f}{'E' if deviation_deg >= 0 else 'W'}"])
    return results, swing


#: Every way the tool writes a file: (name, output file name, command line after the plan).
WRITE_PATHS = [
    ("check --report .xlsx", "r.xlsx", lambda p, o, r: ("check", p, "--report", o)),
    ("check --report .html", "r.html", lambda p, o, r: ("check", p, "--report", o)),
    ("check --report .pdf", "r.pdf", lambda p, o, r: ("check", p, "--report", o)),
    ("card --sheet .pdf", "c.pdf", lambda p, o, r: ("card", p, "--sensor", "compass", "--sheet",
                                                    o)),
    ("card --sheet .html", "c.html", lambda p, o, r: ("card", p, "--sensor", "compass",
                                                      "--sheet", o)),
    ("spot --report .pdf", "m.pdf", lambda p, o, r: ("spot", p, "--sensor", "compass", "--region",
                                                     "-0.1,-0.1,0", "0.1,0.1,0.1", "--step",
                                                     "5cm", "--report", o)),
    ("check --json -o", "r.json", lambda p, o, r: ("check", p, "--json", "-o", o)),
    ("check -o (text)", "r.txt", lambda p, o, r: ("check", p, "-o", o)),
    ("card --plot .png", "c.png", lambda p, o, r: ("card", p, "--sensor", "compass", "--plot", o)),
    ("card --plot .svg", "c.svg", lambda p, o, r: ("card", p, "--sensor", "compass", "--plot", o)),
    ("spot --plot", "m.png", lambda p, o, r: ("spot", p, "--sensor", "compass", "--region",
                                              "-0.1,-0.1,0", "0.1,0.1,0.1", "--step", "5cm",
                                              "--plot", o)),
    ("per-amp --csv", "a.csv", lambda p, o, r: ("per-amp", p, "--csv", o)),
    ("test-sheet --sheet .xlsx", "t.xlsx", lambda p, o, r: (
        "test-sheet", p, "--sensor", "compass", "--heading", 90, "--sheet", o)),
    ("test-sheet --sheet .html", "t.html", lambda p, o, r: (
        "test-sheet", p, "--sensor", "compass", "--heading", 90, "--sheet", o)),
    ("test-results --report", "tr.xlsx", lambda p, o, r: (
        "test-results", p, r[0], "--sensor", "compass", "--heading", 90, "--report", o)),
    ("swing --plot", "s.png", lambda p, o, r: ("swing", p, r[1], "--sensor", "compass",
                                               "--plot", o)),
    ("swing --report", "s.xlsx", lambda p, o, r: ("swing", p, r[1], "--sensor", "compass",
                                                  "--report", o)),
    ("new", "n.xlsx", lambda p, o, r: ("new", o, "--force")),
    ("new --from", "n.xlsx", lambda p, o, r: ("new", o, "--from", p, "--force")),
    ("site -o", "site.json", lambda p, o, r: ("site", "--lat", 43.3, "--lon", 9.35, "--date",
                                              "2027-04-15", "-o", o)),
]
IDS = [name for name, _, _ in WRITE_PATHS]


def _args(path, plan, output, readings):
    return [str(a) for a in path[2](plan, output, readings)]


def _stray(folder):
    """Temporary files left in a folder."""
    return sorted(p.name for p in Path(folder).iterdir() if p.name.endswith(".part"))


def _assert_one_line(stderr, *expected):
    assert "Traceback" not in stderr
    lines = stderr.strip().splitlines()
    assert len(lines) == 1, stderr
    for part in expected:
        assert part in lines[0], lines[0]
    return lines[0]


def _earlier(folder, name, mode=None):
    target = Path(folder) / name
    target.write_bytes(EARLIER)
    if mode is not None:
        target.chmod(mode)
    return target


# A disk that fills up, a file that passes the size limit: writes that fail midway ---------------

class _Filling:
    """A file whose writes fail with ``code`` once ``room`` bytes are written (a disk filling up
    under the tool, or the file-size limit): what fits is written, then OSError."""

    def __init__(self, handle, code, room=64):
        self._handle, self._code, self._room = handle, code, room

    def write(self, data):
        if len(data) > self._room:
            self._handle.write(data[:self._room])
            self._room = 0
            raise OSError(self._code, os.strerror(self._code))
        self._room -= len(data)
        return self._handle.write(data)

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self._handle.close()
        return False

    def __iter__(self):
        return iter(self._handle)

    def __getattr__(self, name):
        return getattr(self._handle, name)


def _fill_temporary_files(monkeypatch, code):
    """Make every write to a temporary output (``*.part``) fail midway with ``code``."""
    real_open = builtins.open

    def opening(file, mode="r", *args, **kwargs):
        handle = real_open(file, mode, *args, **kwargs)
        if (isinstance(file, (str, os.PathLike)) and str(file).endswith(".part")
                and any(c in mode for c in "wax+")):
            return _Filling(handle, code)
        return handle

    monkeypatch.setattr(builtins, "open", opening)
    monkeypatch.setattr(io, "open", opening)             # zipfile and pathlib open through io


#: A full disk on every write path; the file-size limit (the same path, another reason) on one
#: writer of each kind (workbook, picture, text).
MIDWAY = ([(path, errno.ENOSPC, "the disk is full (ENOSPC)") for path in WRITE_PATHS]
          + [(path, errno.EFBIG, "the file would pass the file-size limit (ulimit -f) (EFBIG)")
             for path in WRITE_PATHS if path[1] in ("r.xlsx", "c.png", "r.json")])


@pytest.mark.slow
@pytest.mark.parametrize("path, code, reason", MIDWAY,
                         ids=[f"{p[0]}-{errno.errorcode[c]}" for p, c, _ in MIDWAY])
def test_a_write_failing_midway_exits_3_naming_the_file_and_leaves_the_earlier_output(
        path, code, reason, plan, readings, tmp_path, monkeypatch):
    target = _earlier(tmp_path, path[1])
    _fill_temporary_files(monkeypatch, code)
    result = run_cli(*_args(path, plan, target, readings))
    assert result.exit_code == 3, result.output
    _assert_one_line(result.stderr, f"Error: cannot write {target}: ", reason)
    assert target.read_bytes() == EARLIER
    assert _stray(tmp_path) == []


def test_without_the_fault_every_write_path_writes_its_file(plan, readings, tmp_path):
    # The fault tests above must fail for the fault, not for the command line.
    for path in WRITE_PATHS:
        target = tmp_path / path[1]
        target.unlink(missing_ok=True)
        result = run_cli(*_args(path, plan, target, readings))
        assert result.exit_code in (0, 1), (path[0], result.output)
        assert target.stat().st_size > 0, path[0]
    assert _stray(tmp_path) == []


# Folders and files the tool may not write: refused before any work -------------------------------

@pytest.mark.parametrize("path", WRITE_PATHS, ids=IDS)
def test_a_folder_that_cannot_be_written_is_refused_before_any_work(
        path, plan, readings, tmp_path, monkeypatch):
    # As a read-only folder (or file system) answers: EACCES (or EROFS) on creating a file.
    real_mkstemp = tempfile.mkstemp

    def refused(*args, dir=None, **kwargs):
        if dir is not None and Path(dir) == tmp_path:
            raise PermissionError(errno.EACCES, os.strerror(errno.EACCES))
        return real_mkstemp(*args, dir=dir, **kwargs)

    monkeypatch.setattr(tempfile, "mkstemp", refused)
    work = []
    monkeypatch.setattr(api, "read_plan", lambda *a, **k: work.append(a) or 1 / 0)
    target = tmp_path / path[1]
    result = run_cli(*_args(path, plan, target, readings))
    assert result.exit_code == 3, result.output
    _assert_one_line(result.stderr, f"Error: cannot write {target}: permission denied (EACCES) "
                                    f"in the folder {tmp_path}")
    assert work == []                                   # the plan was not even read
    assert not target.exists()


@pytest.mark.parametrize("path", WRITE_PATHS, ids=IDS)
def test_an_existing_read_only_output_is_refused_unless_forced(path, plan, readings, tmp_path):
    target = _earlier(tmp_path, path[1], mode=0o444)
    args = _args(path, plan, target, readings)
    forced = "--force" in args
    if forced:                                          # new's own --force: try it without
        args.remove("--force")
    result = run_cli(*args)
    assert result.exit_code in (2, 3), result.output
    if result.exit_code == 3:
        _assert_one_line(result.stderr, f"Error: cannot write {target}: it is read-only, and "
                                        "was left as it is (--force replaces it)")
    assert target.read_bytes() == EARLIER
    result = run_cli(*args, "--force")
    assert result.exit_code in (0, 1), result.output
    assert target.read_bytes() != EARLIER               # replaced, whole
    assert _stray(tmp_path) == []


def test_a_full_disk_is_refused_before_the_work(plan, tmp_path, monkeypatch):
    # statvfs of a full file system: no free block for the user.
    full = os.statvfs_result((4096, 4096, 1000, 0, 0, 100, 0, 0, 0, 255))
    monkeypatch.setattr(files.os, "statvfs", lambda folder: full)
    work = []
    monkeypatch.setattr(api, "read_plan", lambda *a, **k: work.append(a) or 1 / 0)
    target = tmp_path / "r.xlsx"
    result = run_cli("check", plan, "--report", target)
    assert result.exit_code == 3
    _assert_one_line(result.stderr, f"Error: cannot write {target}: the disk is full (ENOSPC)")
    assert work == [] and not target.exists()


@pytest.mark.parametrize("make, why", [
    (lambda p: p.mkdir(), "is a directory"),                 # click's own check of the type
    (lambda p: os.mkfifo(p), "is not a regular file (a device, a pipe or a socket)"),
], ids=["folder", "fifo"])
def test_an_output_that_is_no_regular_file_is_refused(make, why, plan, tmp_path):
    target = tmp_path / "r.html"
    make(target)
    result = run_cli("check", plan, "--report", target, "--force")
    assert result.exit_code == 2, result.output
    assert why in result.stderr and "Traceback" not in result.stderr


def test_a_device_is_never_replaced_even_with_force(plan):
    # A temporary file renamed over /dev/null would replace the device with a file.
    result = run_cli("check", plan, "-o", "/dev/null", "--force")
    assert result.exit_code == 2
    assert "is not a regular file" in result.stderr
    assert Path("/dev/null").is_char_device()


# Standard output ---------------------------------------------------------------------------------

class _Full(io.RawIOBase):
    """A raw stream like /dev/full or a disk filling up: ``room`` bytes fit, then ENOSPC."""

    def __init__(self, room):
        self.room = room
        self.written = b""

    def writable(self):
        return True

    def write(self, data):
        if self.room <= 0:
            raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))
        taken = bytes(data[:self.room])
        self.written += taken
        self.room -= len(taken)
        return len(taken)


#: Commands with a result to print, each with --json (their stdout is checked the same way).
PRINTING = [
    ("check", lambda p, r: ("check", p)),
    ("card", lambda p, r: ("card", p)),
    ("spot", lambda p, r: ("spot", p, "--sensor", "compass", "--region", "-0.1,-0.1,0",
                           "0.1,0.1,0.1", "--step", "5cm")),
    ("swing-state", lambda p, r: ("swing-state", p)),
    ("per-amp", lambda p, r: ("per-amp", p)),
    ("electronic", lambda p, r: ("electronic", p)),
    ("area", lambda p, r: ("area", SAMPLES / "survey_drone")),
    ("test-sheet", lambda p, r: ("test-sheet", p, "--sensor", "compass", "--heading", 90)),
    ("test-results", lambda p, r: ("test-results", p, r[0], "--sensor", "compass", "--heading",
                                   90)),
    ("swing", lambda p, r: ("swing", p, r[1], "--sensor", "compass")),
    ("refit", lambda p, r: ("refit", p, p)),
    ("deflection", lambda p, r: ("deflection", "--angle", 3, "--distance", "50cm", "--position",
                                 "end-on", "--field-ut", 20)),
    ("site", lambda p, r: ("site", "--lat", 43.3, "--lon", 9.35, "--date", "2027-04-15")),
    ("clearance", lambda p, r: ("clearance", "--horizontal-ut", 20, "--budget-deg", 1)),
]


def _run_into(stream, args, monkeypatch):
    """Run the command line as a shell would, with ``stream`` as its standard output."""
    from deviation.cli import main

    out = io.TextIOWrapper(io.BufferedWriter(stream, buffer_size=4096), encoding="utf-8")
    monkeypatch.setattr(sys, "stdout", out)
    err = io.StringIO()
    monkeypatch.setattr(sys, "stderr", err)
    with pytest.raises(SystemExit) as done:
        main.main([str(a) for a in args], prog_name="deviation")
    monkeypatch.undo()
    return done.value.code, err.getvalue()


@pytest.mark.parametrize("as_json", [True, False], ids=["json", "text"])
@pytest.mark.parametrize("command", PRINTING, ids=[c[0] for c in PRINTING])
def test_a_short_write_on_standard_output_exits_3_never_0_or_1(command, as_json, plan, readings,
                                                               monkeypatch):
    args = list(command[1](plan, readings)) + (["--json"] if as_json else [])
    full = _Full(room=100)                               # the first 100 bytes fit, no more
    status, stderr = _run_into(full, args, monkeypatch)
    assert status == 3
    _assert_one_line(stderr, "Error: cannot write standard output: the disk is full (ENOSPC); "
                             "what was printed is incomplete")
    assert len(full.written) == 100
    roomy = _Full(room=10**7)                            # the same command with room: 0 or 1
    status, stderr = _run_into(roomy, args, monkeypatch)
    assert status in (0, 1), stderr
    assert len(roomy.written) > 100


def _cli(*args):
    return [sys.executable, "-m", "deviation.cli", *[str(a) for a in args]]


@pytest.mark.slow
@pytest.mark.skipif(not os.path.exists("/dev/full"), reason="needs /dev/full (Linux)")
@pytest.mark.parametrize("args", [("check", "--json"), ("card", "--json"), ("check",)],
                         ids=["check --json", "card --json", "check"])
def test_standard_output_on_dev_full_exits_3(args, plan):
    # The case: check --json > file on a full disk exited 0 with the JSON cut short.
    with open("/dev/full", "w") as full:
        done = subprocess.run(_cli(args[0], plan, *args[1:]), stdout=full, stderr=subprocess.PIPE,
                              text=True, cwd=ROOT, timeout=120)
    assert done.returncode == 3
    _assert_one_line(done.stderr, "Error: cannot write standard output: the disk is full "
                                  "(ENOSPC)")


@pytest.mark.slow
def test_a_pipe_closed_early_exits_3(plan):
    # The reader goes away after the first bytes (`| head -c 10` that exits at once).
    done = subprocess.Popen(_cli("check", plan, "--json", "--all-runs"), stdout=subprocess.PIPE,
                            stderr=subprocess.PIPE, cwd=ROOT)
    done.stdout.close()                                  # nobody reads: EPIPE on the first write
    _, stderr = done.communicate(timeout=120)
    assert done.returncode == 3
    _assert_one_line(stderr.decode(), "Error: cannot write standard output: the reader closed "
                                      "the pipe (EPIPE)")


# Real limits of the operating system (subprocesses) ----------------------------------------------

def _limit_file_size(size):
    def limit():
        import resource

        resource.setrlimit(resource.RLIMIT_FSIZE, (size, size))
    return limit


@pytest.mark.slow
@pytest.mark.skipif(sys.platform == "win32", reason="POSIX resource limits")
def test_a_real_file_size_limit_exits_3_for_a_report_and_for_standard_output(plan, tmp_path):
    target = _earlier(tmp_path, "r.xlsx")
    done = subprocess.run(_cli("check", plan, "--report", target), capture_output=True, text=True,
                          cwd=ROOT, timeout=120, preexec_fn=_limit_file_size(2000))
    assert done.returncode == 3, done.stderr
    _assert_one_line(done.stderr, f"Error: cannot write {target}: the file would pass the "
                                  "file-size limit (ulimit -f) (EFBIG)")
    assert target.read_bytes() == EARLIER and _stray(tmp_path) == []
    # Standard output buffered, and unbuffered (python -u, PYTHONUNBUFFERED=1), where Python's
    # text stream would lose the rest of a short write without an error.
    for unbuffered in ("", "1"):
        env = {k: v for k, v in os.environ.items() if k != "PYTHONUNBUFFERED"}
        if unbuffered:
            env["PYTHONUNBUFFERED"] = unbuffered
        with open(tmp_path / "out.json", "w") as out:
            done = subprocess.run(_cli("check", plan, "--json"), stdout=out,
                                  stderr=subprocess.PIPE, text=True, cwd=ROOT, timeout=120,
                                  env=env, preexec_fn=_limit_file_size(2000))
        assert done.returncode == 3, unbuffered
        _assert_one_line(done.stderr, "Error: cannot write standard output: the file would pass "
                                      "the file-size limit (ulimit -f) (EFBIG)")
        assert (tmp_path / "out.json").stat().st_size == 2000


def _without_override():
    """A prefix that runs a command without the power to ignore file permissions: none for an
    ordinary user; for root, setpriv dropping CAP_DAC_OVERRIDE (None where that is not there)."""
    if not hasattr(os, "geteuid") or os.geteuid() != 0:
        return []
    setpriv = shutil.which("setpriv")
    if setpriv is None:
        return None
    return [setpriv, "--inh-caps=-dac_override,-dac_read_search",
            "--bounding-set=-dac_override,-dac_read_search", "--"]


@pytest.mark.slow
@pytest.mark.skipif(_without_override() is None, reason="root without setpriv")
def test_a_real_read_only_folder_is_refused_before_the_work(plan, tmp_path):
    folder = tmp_path / "locked"
    folder.mkdir()
    folder.chmod(0o555)
    target = folder / "r.xlsx"
    try:
        started = time.perf_counter()
        done = subprocess.run(_without_override() + _cli("check", plan, "--report", target),
                              capture_output=True, text=True, cwd=ROOT, timeout=120)
        seconds = time.perf_counter() - started
    finally:
        folder.chmod(0o755)
    assert done.returncode == 3, done.stderr
    _assert_one_line(done.stderr, f"Error: cannot write {target}: permission denied (EACCES) in "
                                  f"the folder {folder}")
    assert list(folder.iterdir()) == []
    assert seconds < 60


@pytest.mark.slow
@pytest.mark.skipif(_without_override() is None, reason="root without setpriv")
def test_a_real_file_of_someone_else_is_refused_and_kept(plan, tmp_path):
    # A report in a writable folder that this user may not write: refused, left as it is.
    target = _earlier(tmp_path, "r.html", mode=0o444)
    done = subprocess.run(_without_override() + _cli("check", plan, "--report", target),
                          capture_output=True, text=True, cwd=ROOT, timeout=120)
    assert done.returncode == 3
    _assert_one_line(done.stderr, f"Error: cannot write {target}: it is read-only")
    assert target.read_bytes() == EARLIER


# Signals during a save ---------------------------------------------------------------------------

#: Runs the command line with every write to a temporary output slowed down: the first write
#: lands, then the save waits, so that a signal arrives in the middle of it.
# Ctrl-C reaches the program as a user's terminal would send it: a shell without job control
# starts a background job with SIGINT ignored (POSIX), and Python then sets no KeyboardInterrupt
# handler, so under such a parent (a CI script run in the background) the child restores it.
SLOW_SAVE = """
import builtins, io, signal, sys, time
signal.signal(signal.SIGINT, signal.default_int_handler)
real_open = builtins.open
def opening(file, mode="r", *args, **kwargs):
    handle = real_open(file, mode, *args, **kwargs)
    if str(file).endswith(".part") and any(c in mode for c in "wax+"):
        handle.write(b"half" if "b" in mode else "half")
        handle.flush()
        time.sleep(60)
    return handle
builtins.open = io.open = opening
from deviation.cli import main
main(sys.argv[1:], prog_name="deviation")
"""


#: Runs the command line with every write to a temporary output failing after 64 bytes, as on
#: a disk that fills up under it.
FILLING_SAVE = """
import builtins, errno, io, os, sys
real_open = builtins.open
class Filling:
    def __init__(self, handle):
        self.handle, self.room = handle, 64
    def write(self, data):
        if len(data) > self.room:
            self.handle.write(data[:self.room])
            self.room = 0
            raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))
        self.room -= len(data)
        return self.handle.write(data)
    def __enter__(self):
        return self
    def __exit__(self, *exc):
        self.handle.close()
    def __getattr__(self, name):
        return getattr(self.handle, name)
def opening(file, mode="r", *args, **kwargs):
    handle = real_open(file, mode, *args, **kwargs)
    if str(file).endswith(".part") and any(c in mode for c in "wax+"):
        return Filling(handle)
    return handle
builtins.open = io.open = opening
from deviation.cli import main
main(sys.argv[1:], prog_name="deviation")
"""


@pytest.mark.slow
@pytest.mark.parametrize("path", [p for p in WRITE_PATHS if p[1].endswith(".xlsx")],
                         ids=lambda p: p[0])
def test_a_full_disk_in_a_real_process_prints_one_line_and_nothing_at_exit(
        path, plan, readings, tmp_path):
    # A workbook writer stopped midway still holds its archive open; when Python collects it, it
    # tries to finish it on the same full disk ("Exception ignored in ZipFile.__del__").
    target = _earlier(tmp_path, path[1])
    done = subprocess.run([sys.executable, "-c", FILLING_SAVE,
                           *_args(path, plan, target, readings)],
                          capture_output=True, text=True, cwd=ROOT, timeout=120)
    assert done.returncode == 3
    _assert_one_line(done.stderr, f"Error: cannot write {target}: the disk is full (ENOSPC)")
    assert target.read_bytes() == EARLIER and _stray(tmp_path) == []


@pytest.mark.slow
@pytest.mark.skipif(sys.platform == "win32", reason="POSIX signals")
@pytest.mark.parametrize("signum, status, word", [
    (signal.SIGTERM, 143, "terminated (SIGTERM)"),
    (signal.SIGINT, 130, "interrupted"),
], ids=["SIGTERM", "SIGINT"])
@pytest.mark.parametrize("path", [p for p in WRITE_PATHS if p[0] in
                                  ("check --report .xlsx", "new --from", "check --json -o")],
                         ids=lambda p: p[0])
def test_a_signal_during_a_save_leaves_no_temporary_file_and_the_earlier_output(
        path, signum, status, word, plan, readings, tmp_path):
    target = _earlier(tmp_path, path[1])
    process = subprocess.Popen([sys.executable, "-c", SLOW_SAVE,
                                *_args(path, plan, target, readings)],
                               stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, cwd=ROOT)
    deadline = time.monotonic() + 120
    while time.monotonic() < deadline:                   # until the save has begun
        if any(p.stat().st_size for p in tmp_path.glob(".*.part")):
            break
        if process.poll() is not None:
            break
        time.sleep(0.05)
    process.send_signal(signum)
    _, stderr = process.communicate(timeout=60)
    assert process.returncode == status, stderr
    _assert_one_line(stderr, word, "no file was left half-written")
    assert target.read_bytes() == EARLIER
    assert _stray(tmp_path) == []


def test_exit_status_of_each_kind_of_ending(plan, tmp_path):
    # The contract: 0 within, 1 over, 2 a wrong plan or command line, 3 a file.
    assert run_cli("check", SAMPLES / "camper_van").exit_code == 0
    assert run_cli("check", SAMPLES / "cruising_sailboat").exit_code == 1
    assert run_cli("check", tmp_path / "nothing").exit_code == 2
    assert run_cli("check", plan, "--no-such-option").exit_code == 2
    assert run_cli("check", plan, "--report", tmp_path / "no" / "r.html").exit_code == 2
    target = _earlier(tmp_path, "r.html", mode=0o444)
    assert run_cli("check", plan, "--report", target).exit_code == 3


def test_every_command_states_the_exit_statuses_in_its_help():
    from deviation.cli import main

    for name in main.commands:
        text = " ".join(run_cli(name, "--help").output.split())
        assert "Exit status" in text and "3: a file could not be read or written" in text, name
        assert "130: interrupted" in text, name


@pytest.mark.slow
@pytest.mark.skipif(_without_override() is None, reason="root without setpriv")
@pytest.mark.parametrize("locked", ["runs.csv", "."], ids=["a sheet", "the plan folder"])
def test_a_plan_this_user_may_not_read_exits_3_naming_it(locked, tmp_path):
    plan = write_plan(tmp_path / "plan", straight_wire_plan())
    target = plan / locked
    target.chmod(0)
    try:
        done = subprocess.run(_without_override() + _cli("check", plan), capture_output=True,
                              text=True, cwd=ROOT, timeout=120)
    finally:
        target.chmod(0o755 if target.is_dir() else 0o644)
    assert done.returncode == 3
    line = _assert_one_line(done.stderr, "Error: cannot read ", ": permission denied (EACCES)")
    assert str(plan / "runs.csv" if locked == "runs.csv" else plan) in line
