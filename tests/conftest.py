"""Shared helpers: small plans written as folders of CSV sheets."""

import csv
import os
from html.parser import HTMLParser
from pathlib import Path

import pytest
from hypothesis import settings

# In CI the property tests and the reader fuzzing run a fixed, reproducible set of examples.
settings.register_profile("ci", derandomize=True, print_blob=True)
if os.environ.get("CI"):
    settings.load_profile("ci")

ROOT = Path(__file__).resolve().parents[1]
SAMPLES = ROOT / "sample_installs"


def write_plan(folder, sheets):
    """Write {sheet name: rows} as CSV files in ``folder``; returns the folder."""
    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    for name, rows in sheets.items():
        with open(folder / f"{name}.csv", "w", newline="", encoding="utf-8") as f:
            csv.writer(f, lineterminator="\n").writerows(rows)
    return folder


def straight_wire_plan(h_ut=20.0, current=10.0, depth_m=0.5, budget=1.0, extra_runs=(),
                       kind="none", reference=None, states=None):
    """A compass above a 100 m straight run laid forward, the site field given in the plan."""
    runs = [["run", "circuits", "route", "return", "size", "spacing", "lay", "return_route"],
            ["long feed", "feed", f"-50, 0, {-depth_m} > 50, 0, {-depth_m}", kind, "", "", "", ""]]
    runs += [list(r) for r in extra_runs]
    states = states or [["circuit", "on"], ["feed", current]]
    return {
        "site": [["setting", "value"], ["horizontal_field_ut", h_ut], ["vertical_field_ut", 40]],
        "runs": runs,
        "states": states,
        "sensors": [["sensor", "at", "kind", "budget_deg", "reference_state", "max_heel_deg"],
                    ["compass", "0, 0, 0", "magnetic compass", budget, reference or "", ""]],
    }


@pytest.fixture
def plan_dir(tmp_path):
    def make(sheets, name="plan"):
        return write_plan(tmp_path / name, sheets)
    return make


def run_cli(*args, **kwargs):
    """Run the command line in-process (click's CliRunner); every argument is made a string."""
    from click.testing import CliRunner

    from deviation.cli import main

    return CliRunner().invoke(main, [str(a) for a in args], **kwargs)


@pytest.fixture
def cli():
    """The command line as a function of its arguments: ``cli("check", plan).exit_code``."""
    return run_cli


class HtmlTables(HTMLParser):
    """Every table of an html page as rows of cell texts (``.tables`` after ``.feed(page)``)."""

    def __init__(self):
        super().__init__()
        self.tables, self._cell = [], None

    def handle_starttag(self, tag, attrs):
        if tag == "table":
            self.tables.append([])
        elif tag == "tr" and self.tables:
            self.tables[-1].append([])
        elif tag in ("td", "th"):
            self._cell = ""

    def handle_endtag(self, tag):
        if tag in ("td", "th") and self._cell is not None:
            self.tables[-1][-1].append(self._cell.strip())
            self._cell = None

    def handle_data(self, data):
        if self._cell is not None:
            self._cell += data
