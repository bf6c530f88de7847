"""The output options every command shares (-o FILE, --force), the check's --no-fixes and
--fixes-for, progress lines, and the spot search's ceilings."""

from __future__ import annotations

import io
import json
import re
import sys
import threading
import time

import numpy as np
import pytest

import deviation
from conftest import SAMPLES, run_cli, straight_wire_plan, write_plan
from deviation import progress
from deviation.spot import MAX_POSITIONS, _parts


def test_json_to_a_file_is_the_json_printed(tmp_path):
    plan = SAMPLES / "cruising_sailboat"
    printed = run_cli("check", plan, "--json")
    target = tmp_path / "r.json"
    written = run_cli("check", plan, "--json", "-o", target)
    assert printed.exit_code == written.exit_code == 1            # over budget, both ways
    assert written.stdout == ""
    assert json.loads(target.read_text()) == json.loads(printed.stdout)
    implied = run_cli("check", plan, "-o", tmp_path / "s.json")   # FILE.json implies --json
    assert json.loads((tmp_path / "s.json").read_text()) == json.loads(printed.stdout)
    assert implied.exit_code == 1


def test_text_to_a_file_is_the_text_printed_to_a_pipe(tmp_path):
    plan = SAMPLES / "camper_van"
    printed = run_cli("check", plan)
    result = run_cli("check", plan, "--output", tmp_path / "r.txt")
    assert result.exit_code == printed.exit_code == 0
    assert (tmp_path / "r.txt").read_text() == printed.stdout


def test_nothing_is_written_to_the_file_when_the_command_fails(tmp_path):
    plan = write_plan(tmp_path / "plan", {**straight_wire_plan(), "sensors": [
        ["sensor", "at", "kind", "budget_deg"], ["compass", "0, 0, 0", "magnetic compass", "x"]]})
    target = tmp_path / "r.json"
    result = run_cli("check", plan, "--json", "-o", target)
    assert result.exit_code == 2
    assert not target.exists() and list(tmp_path.glob(".*.part")) == []


def test_the_output_file_may_not_be_the_plan(tmp_path):
    plan = tmp_path / "plan.xlsx"
    assert run_cli("new", plan).exit_code == 0
    before = plan.read_bytes()
    result = run_cli("check", plan, "-o", plan)
    assert result.exit_code == 2 and "is the input plan" in result.stderr
    assert plan.read_bytes() == before


def test_no_fixes_gives_the_same_budget_and_verdict_without_remedies():
    plan = SAMPLES / "cruising_sailboat"
    full = json.loads(run_cli("check", plan, "--json").stdout)
    bare = run_cli("check", plan, "--json", "--no-fixes")
    assert bare.exit_code == 1
    bare = json.loads(bare.stdout)
    assert bare["within_budget"] == full["within_budget"]
    for with_fixes, without in zip(full["sensors"], bare["sensors"]):
        for a, b in zip(with_fixes["states"], without["states"]):
            assert a["held"] == b["held"]
            assert b.get("remedies", []) == []
        assert without.get("fixes") in (None, [], {})


def test_fixes_for_one_sensor_leaves_the_others_without():
    plan = deviation.read_plan(SAMPLES / "cruising_sailboat")
    result = deviation.check(plan, fixes_for=["helm compass"])
    helm, autopilot = result.sensors
    assert any(st.remedies for st in helm.states)
    assert helm.fixes is not None or helm.within_budget
    assert all(not st.remedies for st in autopilot.states) and autopilot.fixes is None
    both = run_cli("check", SAMPLES / "cruising_sailboat", "--no-fixes", "--fixes-for", "x")
    assert both.exit_code == 2 and "not both" in both.stderr


class _Recorder:
    """A reporter that records what the library tells it."""

    def __init__(self):
        self.steps = []

    def start(self, label, total):
        record = {"label": label, "total": total, "done": 0, "finished": False}
        self.steps.append(record)

        class Handle:
            def advance(self, n):
                record["done"] += n

            def done(self):
                record["finished"] = True
        return Handle()


def test_the_steps_that_grow_report_their_progress():
    plan = deviation.read_plan(SAMPLES / "cruising_sailboat")
    recorder = _Recorder()
    with progress.reporting(recorder):
        deviation.check(plan)
        deviation.find_spots(plan, "helm compass", [1.5, -0.05, 1.9], [1.7, 0.05, 2.0], 0.05)
    labels = {step["label"] for step in recorder.steps}
    assert "the budget of each sensor" in labels
    assert "remedies for helm compass, state by state" in labels
    assert "the set of fixes for helm compass, change by change" in labels
    assert "positions searched" in labels
    assert all(step["finished"] for step in recorder.steps)
    sensors = next(s for s in recorder.steps if s["label"] == "the budget of each sensor")
    assert sensors["total"] == sensors["done"] == 2
    states = next(s for s in recorder.steps if s["label"].startswith("remedies for helm"))
    assert states["total"] == states["done"] == 3
    # With no reporter (the library's default) nothing is recorded.
    recorded = len(recorder.steps)
    deviation.check(plan)
    assert len(recorder.steps) == recorded


def test_a_progress_line_appears_on_a_terminal_only_after_a_second():
    from deviation.render.terminal import Console, TerminalProgress

    screen = io.StringIO()
    console = Console(file=screen, force_terminal=True, width=100)
    reporter = TerminalProgress(console=console, delay_s=0.3)
    quick = reporter.start("quick step", 10)
    quick.advance(10)
    quick.done()
    time.sleep(0.4)
    assert "quick step" not in screen.getvalue()           # done before the delay: never shown
    slow = reporter.start("slow step", 4)
    slow.advance(1)
    time.sleep(0.6)                                        # past the delay: shown
    slow.advance(3)
    slow.done()
    reporter.close()
    assert "slow step" in screen.getvalue()
    assert threading.active_count() < 10                   # timers do not pile up


def test_no_progress_line_in_a_pipe_or_with_json():
    from deviation.render.terminal import Console, TerminalProgress

    piped = TerminalProgress(console=Console(file=io.StringIO()))
    assert piped.start("step", 5) is None                  # not a terminal: nothing drawn
    terminal = Console(file=io.StringIO(), force_terminal=True)
    assert TerminalProgress(enabled=False, console=terminal).start("step", 5) is None
    result = run_cli("check", SAMPLES / "cruising_sailboat", "--json")
    assert result.stderr == ""


def test_a_spot_search_beyond_its_ceiling_is_refused_with_the_step_that_fits(tmp_path):
    plan = write_plan(tmp_path / "plan", straight_wire_plan())
    result = run_cli("spot", plan, "--sensor", "compass", "--region", "-1,-1,-1", "1,1,1",
                     "--step", "1mm")
    assert result.exit_code == 2
    message = result.stderr.strip()
    assert message.startswith("Error: a box of 2 x 2 x 2 m at a step of 1 mm needs ")
    assert "more than the 1,000,000 a search may; give a step of at least" in message
    step_mm = float(message.split("give a step of at least ")[1].split(" mm")[0])
    low, high = np.full(3, -1.0), np.full(3, 1.0)
    assert sum(p.expected(step_mm / 1e3) for p in _parts(low, high, step_mm / 1e3, [])) \
        <= MAX_POSITIONS
    huge = run_cli("spot", plan, "--sensor", "compass", "--region", "-5000,-5000,-5000",
                   "5000,5000,5000", "--step", "1mm")
    assert huge.exit_code == 2 and "grid points, more than the" in huge.stderr


def _plan_with(folder, circuits, states, independent=0):
    """A compass beside ``circuits`` vertical runs, with ``states`` states, the first
    ``independent`` circuits switched on their own."""
    runs = [["run", "circuits", "route", "return"]]
    rows = [["circuit", *[f"s{k}" for k in range(states)], "switching"]]
    for i in range(circuits):
        x = 1.0 + 0.01 * i
        runs.append([f"run {i}", f"c{i}", f"{x}, 0, -0.5 > {x}, 0, 0.5", "none"])
        rows.append([f"c{i}", *[1 + (i + k) % 3 for k in range(states)],
                     "independent" if i < independent else ""])
    return write_plan(folder, {
        "site": [["setting", "value"], ["horizontal_field_ut", 20], ["vertical_field_ut", 40]],
        "runs": runs, "states": rows,
        "sensors": [["sensor", "at", "kind", "budget_deg"], ["compass", "0, 0, 0",
                                                             "magnetic compass", 1]]})


def test_states_beyond_the_ceilings_are_refused_at_the_state_past_them(tmp_path):
    from deviation.constants import MAX_FIXES_STATES, MAX_STATES

    plan = _plan_with(tmp_path / "many", 3, MAX_FIXES_STATES + 1)
    result = run_cli("check", plan)
    assert result.exit_code == 2
    assert result.stderr.splitlines()[0] == (
        f"{plan}: states row 1, s{MAX_FIXES_STATES}: {MAX_FIXES_STATES + 1} operating states is "
        f"more than the {MAX_FIXES_STATES} the remedies and the set of fixes are worked out for; "
        "check with --no-fixes (remedies=False), which gives the same budget and verdict")
    assert run_cli("check", plan, "--no-fixes").exit_code in (0, 1)
    plan = _plan_with(tmp_path / "too many", 2, MAX_STATES + 1)
    result = run_cli("check", plan, "--no-fixes")
    assert result.exit_code == 2
    assert (f"states row 1, s{MAX_STATES}: {MAX_STATES + 1} operating states is more than the "
            f"{MAX_STATES} a plan may have") in result.stderr


def test_independent_circuits_beyond_the_ceilings_are_refused_at_the_circuit_past_them(tmp_path):
    from deviation.constants import MAX_FIXES_INDEPENDENT_CIRCUITS, MAX_INDEPENDENT_CIRCUITS

    count = MAX_FIXES_INDEPENDENT_CIRCUITS + 1
    plan = _plan_with(tmp_path / "many", count, 2, independent=count)
    result = run_cli("check", plan)
    assert result.exit_code == 2
    # The circuit past the ceiling: header row 1, the first circuit on row 2.
    assert (f"states row {MAX_FIXES_INDEPENDENT_CIRCUITS + 2}, switching: {count} independent "
            f"circuits is more than the {MAX_FIXES_INDEPENDENT_CIRCUITS} the remedies and the set "
            "of fixes are worked out for") in result.stderr
    count = MAX_INDEPENDENT_CIRCUITS + 1
    plan = _plan_with(tmp_path / "too many", count, 2, independent=count)
    result = run_cli("check", plan, "--no-fixes")
    assert result.exit_code == 2
    assert (f"states row {MAX_INDEPENDENT_CIRCUITS + 2}, switching: {count} independent circuits "
            f"is more than the {MAX_INDEPENDENT_CIRCUITS} a plan may have") in result.stderr


@pytest.mark.slow
@pytest.mark.skipif(sys.platform == "win32", reason="a pseudo-terminal")
def test_a_long_check_shows_its_progress_on_a_terminal_and_never_in_a_pipe(tmp_path):
    import os
    import pty
    import subprocess

    from conftest import ROOT

    plan = _plan_with(tmp_path / "plan", 20, 60)
    # The progress lines show for a step still running after a second; the check of this plan
    # may be quicker than that, so the child shows them at once (the delay is the only change).
    prelude = ("import deviation.render.terminal as t; "
               "t.TerminalProgress.__init__.__defaults__ = (True, 0.0, None); "
               "from deviation.cli import main; main()")
    command = [sys.executable, "-c", prelude, "check", str(plan)]
    leader, follower = pty.openpty()
    process = subprocess.Popen(command, stdout=subprocess.DEVNULL, stderr=follower, cwd=ROOT)
    os.close(follower)
    shown = b""
    while True:
        try:
            chunk = os.read(leader, 4096)
        except OSError:                                  # the terminal's other end closed
            break
        if not chunk:
            break
        shown += chunk
    process.wait(timeout=600)
    os.close(leader)
    text = re.sub(r"\x1b\[[0-9;?]*[A-Za-z]", "", shown.decode("utf-8", "replace"))
    assert "remedies for compass, state by state" in text
    assert re.search(r"\d+/60 \d+ s", text)              # done of total, seconds since the start
    piped = subprocess.run(command, capture_output=True, text=True, cwd=ROOT, timeout=600)
    assert piped.returncode == process.returncode and piped.stderr == ""
