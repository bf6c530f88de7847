"""The paper the trade hands over: the PDF report's first page, its page numbers, the postable
deviation card, the drawings, and the paper size by the plan's units."""

from __future__ import annotations

import hashlib
import math
import re
import shutil

import openpyxl
import pypdf
import pytest

import deviation
from conftest import SAMPLES, HtmlTables, run_cli, write_plan


def pdf_pages(path):
    return [page.extract_text() for page in pypdf.PdfReader(path).pages]


def folder_sha256(folder):
    """The documented digest of a CSV plan folder, written out here: per .csv sheet in name
    order, its name, NUL, its size in decimal, NUL, its bytes."""
    digest = hashlib.sha256()
    for sheet in sorted(p for p in folder.iterdir() if p.suffix == ".csv"):
        data = sheet.read_bytes()
        digest.update(sheet.name.encode() + b"\0" + str(len(data)).encode() + b"\0" + data)
    return digest.hexdigest()


def test_the_pdf_first_page_holds_the_verdicts_and_the_plans_sha256(tmp_path):
    path = tmp_path / "report.pdf"
    result = run_cli("check", SAMPLES / "cruising_sailboat", "--report", path)
    assert result.exit_code == 1, result.output
    pages = pdf_pages(path)
    first = " ".join(pages[0].split())
    assert folder_sha256(SAMPLES / "cruising_sailboat") in first
    # Each sensor's verdict in words, with its held figure (the check's own, as in the JSON).
    checked = deviation.check(deviation.read_plan(SAMPLES / "cruising_sailboat"))
    for sensor in checked.sensors:
        worst = sensor.worst
        assert (f"over its budget of {sensor.sensor.budget}: {worst.held:.2f}° in {worst.state}"
                in first), sensor.sensor.name
    assert "Marisol" in first and "A. Owner" in first and "Harbour Electrics" in first
    assert "checked by" in first and "signature" in first
    assert 'twist "instrument feed" with its return' in first        # the fix that makes it pass
    assert "instrument feed 160 %" in first                         # the culprit, drawn and named
    # Pages numbered "page i of n" on every page.
    assert all(f"page {i} of {len(pages)}" in text for i, text in enumerate(pages, start=1))


def test_a_workbook_plan_is_tied_to_its_bytes(tmp_path):
    plan = SAMPLES / "camper_van.xlsx"
    path = tmp_path / "van.pdf"
    assert run_cli("check", plan, "--report", path).exit_code in (0, 1)
    first = " ".join(pdf_pages(path)[0].split())
    assert hashlib.sha256(plan.read_bytes()).hexdigest() in first
    assert "within its budget" in first


def test_a_changed_sheet_changes_the_digest(tmp_path):
    copy = tmp_path / "plan"
    shutil.copytree(SAMPLES / "camper_van", copy)
    before = folder_sha256(copy)
    with open(copy / "runs.csv", "a", encoding="utf-8") as f:
        f.write("\n")
    from deviation.files import plan_digest

    assert plan_digest(copy) == folder_sha256(copy) != before


def half(value):
    """Nearest half degree, halves away from zero (how the trade posts a deviation)."""
    return math.copysign(math.floor(abs(value) * 2 + 0.5) / 2, value)


def posted(value):
    size = abs(half(value))
    whole, has_half = int(size), size - int(size) == 0.5
    text = (str(whole) if whole or not has_half else "") + ("½" if has_half else "")
    side = "E" if half(value) > 0 else "W" if half(value) < 0 else ""
    return f"{text}°{side}"


def test_the_postable_card_rounds_the_cards_own_figures_to_half_degrees(tmp_path):
    folder = SAMPLES / "cruising_sailboat"
    page = tmp_path / "card.html"
    assert run_cli("card", folder, "--sheet", page).exit_code == 0
    parser = HtmlTables()
    parser.feed(page.read_text(encoding="utf-8"))
    cards = deviation.deviation_cards(deviation.read_plan(folder), None, 15.0)
    tables = [t for t in parser.tables if t[0][0] == "ship's head magnetic"]
    assert len(tables) == len(cards)                      # one card per compass (both steer)
    for card, table in zip(cards, tables):
        used = [st for st in card.states if st.status.value != "not used"]
        header = table[0]
        assert header == ["ship's head magnetic"] + [
            f"{st.state[:1].upper()}{st.state[1:]}: {what}" for st in used
            for what in ("deviation", "steer")]
        rows = [r for r in table[1:] if r[0].endswith("°")]
        assert [r[0] for r in rows] == [f"{h:03.0f}°" for h in used[0].headings_deg]
        for i, row in enumerate(rows):
            for j, st in enumerate(used):
                deviation_deg = float(st.deviation_deg[i])
                assert row[1 + 2 * j] == posted(deviation_deg)
                # Compass = Magnetic - Deviation, with the deviation as posted.
                course = (float(st.headings_deg[i]) - half(deviation_deg)) % 360
                whole = int(course)
                assert row[2 + 2 * j] == f"{whole:03d}{'½' if course - whole else ''}°"
        held = next(r for r in table[1:] if r[0] == "held")
        assert held[1::2] == [f"{st.held:.2f}°" for st in used]     # the held figure, carried


@pytest.mark.parametrize("paper", ["A5", "A6"])
def test_the_postable_card_is_one_page_per_compass(paper, tmp_path):
    path = tmp_path / "card.pdf"
    assert run_cli("card", SAMPLES / "cruising_sailboat", "--sheet", path, "--paper",
                   paper).exit_code == 0
    pages = pdf_pages(path)
    assert len(pages) == 2                                 # helm compass, autopilot sensor
    box = pypdf.PdfReader(path).pages[0].mediabox
    size_mm = sorted((float(box.width) * 25.4 / 72, float(box.height) * 25.4 / 72))
    assert size_mm == pytest.approx({"A5": [148, 210], "A6": [105, 148]}[paper], abs=0.5)
    assert "helm compass" in pages[0] and "Marisol" in pages[0]


def test_a_magnetometer_has_no_card_to_post(tmp_path):
    result = run_cli("card", SAMPLES / "survey_drone", "--sheet", tmp_path / "card.pdf")
    assert result.exit_code == 2
    assert "no compass to post a card for" in result.output
    assert not (tmp_path / "card.pdf").exists()


def test_paper_follows_the_plans_units_unless_asked(tmp_path):
    van, boat = SAMPLES / "camper_van", SAMPLES / "cruising_sailboat"      # feet, metres
    for plan, expected in ((van, "Letter"), (boat, "A4")):
        page = tmp_path / "r.html"
        run_cli("check", plan, "--report", page)
        assert f"size: {expected};" in page.read_text(encoding="utf-8")
    run_cli("check", van, "--report", tmp_path / "a4.html", "--paper", "a4")
    assert "size: A4;" in (tmp_path / "a4.html").read_text(encoding="utf-8")
    run_cli("check", van, "--report", tmp_path / "van.xlsx")
    sheet = openpyxl.load_workbook(tmp_path / "van.xlsx")["summary"]
    assert str(sheet.page_setup.paperSize) == sheet.PAPERSIZE_LETTER        # openpyxl: "1"
    assert sheet.page_setup.orientation == "landscape"
    assert sheet.sheet_properties.pageSetUpPr.fitToPage and sheet.page_setup.fitToWidth == 1
    assert sheet.print_title_rows and sheet.freeze_panes


def test_the_drawing_names_the_culprit_in_the_colour_of_its_share():
    from deviation.render.drawing import SHARE_COLOURS, drawing_svg

    plan = deviation.read_plan(SAMPLES / "cruising_sailboat")
    result = deviation.check(plan, remedies=False).sensor("helm compass")
    svg = drawing_svg(plan, result).decode()
    share = {r.name: r.share_of_budget for r in result.worst.runs}["instrument feed"]
    assert share >= 0.5
    label = re.search(r'<text[^>]*fill="([^"]+)"[^>]*>instrument feed (\d+) %</text>', svg)
    assert label and label.group(1) == SHARE_COLOURS[0][1]
    assert int(label.group(2)) == round(share * 100)
    # Three views, one scale bar in the plan's unit, the named points as landmarks.
    for view in ("Profile, seen from starboard", "Plan, seen from above",
                 "End view, seen from astern"):
        assert view in svg
    assert re.search(r">\d+(\.\d+)? m</text>", svg)
    assert "windlass" in svg


def test_the_site_sheet_names_vessel_owner_and_installer(tmp_path):
    folder = write_plan(tmp_path / "plan", {
        "site": [["setting", "value"], ["horizontal_field_ut", 20], ["vertical_field_ut", 40],
                 ["vessel", " Petrel "], ["owner", "J. Smith"], ["installer", "Dock 4 Marine"]],
        "runs": [["run", "route", "return", "current_a"], ["feed", "0,1,0 > 5,1,0", "none", 2]],
        "sensors": [["sensor", "at", "kind", "budget_deg"],
                    ["compass", "0,0,0", "magnetic compass", 2]]})
    plan = deviation.read_plan(folder)
    assert (plan.site.vessel, plan.site.owner, plan.site.installer) == ("Petrel", "J. Smith",
                                                                        "Dock 4 Marine")
    copy = tmp_path / "copy.xlsx"
    assert run_cli("new", copy, "--from", folder).exit_code == 0
    again = deviation.read_plan(copy)
    assert (again.site.vessel, again.site.owner, again.site.installer) == (
        "Petrel", "J. Smith", "Dock 4 Marine")


def test_printable_refit_spot_and_swing_state_reports(tmp_path):
    boat = SAMPLES / "cruising_sailboat"
    for command in (("refit", boat, boat), ("swing-state", boat),
                    ("spot", boat, "--sensor", "helm compass", "--region", "1.5,-0.05,1.9",
                     "1.7,0.05,2.0", "--step", "5cm")):
        for suffix in ("pdf", "html", "xlsx"):
            path = tmp_path / f"{command[0]}.{suffix}"
            result = run_cli(*command, "--report", path)
            assert result.exit_code in (0, 1), result.output
            assert path.stat().st_size > 0
        assert "page 1 of" in pdf_pages(tmp_path / f"{command[0]}.pdf")[0]


def test_the_checklist_ticks_each_fix_with_what_to_achieve(tmp_path):
    path = tmp_path / "report.pdf"
    run_cli("check", SAMPLES / "cruising_sailboat", "--report", path)
    text = " ".join(" ".join(pdf_pages(path)).split())
    assert "Installer's checklist of the fixes" in text
    assert "☐" in text and "twist with the return" in text and "50 mm" in text
    assert "Words used in this report" in text and "residual after adjustment" in text


@pytest.mark.parametrize("value, posted_deg", [
    # Nearest half degree, halves away from zero (common practice, no source): a tie goes up in
    # size, never to the even half as Python's round() would take it.
    (0.24, 0.0), (0.25, 0.5), (0.74, 0.5), (0.75, 1.0), (1.25, 1.5), (2.75, 3.0),
    (-0.25, -0.5), (-1.74, -1.5), (-1.75, -2.0), (0.0, 0.0)])
def test_a_deviation_is_posted_to_the_nearest_half_degree(value, posted_deg):
    from deviation.render.documents.card import east_west_half, half_degrees

    assert half_degrees(value) == posted_deg
    text = east_west_half(value).text
    assert text == posted(value)                  # the test's own writing of it (above)
    assert text.endswith("E" if posted_deg > 0 else "W" if posted_deg < 0 else "°")


def test_the_drawing_outlines_each_steel_item_at_its_size():
    # The sailboat's engine block, a 0.70 x 0.48 x 0.52 m box along the vessel's axes: its
    # outline is 0.70 wide and 0.52 high in profile, 0.48 x 0.52 from astern and 0.70 x 0.48 from
    # above, all at the drawing's one scale (ratios of the drawn sizes, read from the SVG).
    from deviation.render.drawing import STEEL_FILL, drawing_svg

    plan = deviation.read_plan(SAMPLES / "cruising_sailboat")
    svg = drawing_svg(plan).decode()
    outlines = re.findall(rf'<polygon points="([^"]+)" fill="{STEEL_FILL}"', svg)
    assert len(outlines) == 3                                  # profile, end view, plan
    # Solid and under the runs: the PDF writer draws no transparency, so a run passing the
    # item must be drawn after it to stay visible.
    assert "opacity" not in svg
    assert svg.index("<polygon") < svg.index("<polyline")
    sizes = []
    for points in outlines:
        xy = [tuple(map(float, p.split(","))) for p in points.split()]
        xs, ys = [p[0] for p in xy], [p[1] for p in xy]
        sizes.append((max(xs) - min(xs), max(ys) - min(ys)))
    (pw, ph), (ew, eh), (qw, qh) = sizes
    mm_per_m = pw / 0.70
    assert (ph, ew, eh, qw, qh) == pytest.approx(
        tuple(mm_per_m * v for v in (0.52, 0.48, 0.52, 0.70, 0.48)), abs=0.02)
    assert "engine block (steel)" in svg


def test_a_steel_items_outline_turns_with_its_axis():
    # The workboat's helm pump: a cylinder 200 mm long and 150 mm across, its axis fore and aft,
    # is held by a box 0.20 m along x and 0.15 m across y and z, about its centre.
    from deviation.render.drawing import steel_corners

    plan = deviation.read_plan(SAMPLES / "survey_workboat")
    pump = next(item for item in plan.steel if item.name == "helm pump")
    corners = steel_corners(pump)
    assert corners.max(axis=0) - corners.min(axis=0) == pytest.approx([0.20, 0.15, 0.15])
    assert corners.mean(axis=0) == pytest.approx(pump.position_m)


def test_a_decimal_year_is_printed_as_the_day_it_stands_for():
    # WMM's decimal year is year + (day of year - 1) / days in year (the WMM2025 report's
    # convention, physics.geomag.decimal_year): every day of a common and a leap year, written to
    # four decimals, reads back as that day (a day out, or a year's length of 365 in 2028, fails).
    import datetime as dt
    from types import SimpleNamespace

    from deviation.physics.geomag import decimal_year
    from deviation.render.words import plan_date

    for year in (2027, 2028):
        day = dt.date(year, 1, 1)
        while day.year == year:
            text = f"{decimal_year(day):.4f}"
            site = SimpleNamespace(date_text=text, decimal_year=float(text))
            assert plan_date(site) == f"about {day.isoformat()} ({text} as a decimal year)"
            day += dt.timedelta(days=1)
    assert plan_date(SimpleNamespace(date_text="2027-04-15", decimal_year=2027.28)) == "2027-04-15"


def test_the_first_page_gives_the_plans_date_as_a_day(tmp_path):
    out = tmp_path / "r.html"
    result = run_cli("check", str(SAMPLES / "survey_drone"), "--report", str(out))
    assert result.exit_code in (0, 1)
    assert "about 2028-04-20 (2028.30 as a decimal year)" in out.read_text()


def test_the_first_page_names_steel_that_no_rerouting_moves(tmp_path):
    # The workboat's compass is over budget because of its cast-iron helm pump: page 1 says so
    # with the pump's own held figure, the one the budget table gives it.
    import html as html_module

    plan = deviation.read_plan(SAMPLES / "survey_workboat")
    worst = deviation.check(plan, remedies=False).sensors[0].worst
    pump = next(item for item in worst.steel if item.name == "helm pump")
    out = tmp_path / "r.html"
    run_cli("check", str(SAMPLES / "survey_workboat"), "--report", str(out))
    page = html_module.unescape(out.read_text())
    assert (f'Steel item "helm pump" alone gives ≤ {pump.held:.2f}° '
            f"({pump.share_of_budget * 100:.0f} % of the budget), which no rerouting") in page
    # Where a twist brings the sensor within its budget, its steel is not blamed: the
    # sailboat's helm compass (its engine block 38 % of the budget) is fixed by the twist.
    sailboat = tmp_path / "s.html"
    run_cli("check", str(SAMPLES / "cruising_sailboat"), "--report", str(sailboat))
    page = html_module.unescape(sailboat.read_text())
    assert page.count('Steel item "engine block" alone gives') == 1     # the autopilot's only


def test_a_state_not_relied_on_is_drawn_pale_without_transparency_or_hatching():
    # The PDF writer reads charts as vectors and draws neither transparency nor hatching (a
    # hatched bar came out empty on paper): the sailboat's autopilot sensor, not relied on in
    # harbour and at anchor, has those bars filled with a pale solid colour.
    from deviation.render.plots import budget_bars

    analysis = deviation.check(deviation.read_plan(SAMPLES / "cruising_sailboat"),
                               remedies=False)
    svg = budget_bars(analysis, fmt="svg").decode()
    assert "<pattern" not in svg                           # no hatching
    assert svg.count("opacity") <= 1                        # the legend's frame alone
    assert svg.count("fill: #ffd2ab") >= 2    # orange #ff7f0e at 35 % on white: 0.35 c + 0.65
