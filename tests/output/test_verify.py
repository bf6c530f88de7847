"""`deviation verify`: the program's own verification report against published values."""

import json
import re

import numpy as np
import pytest

from conftest import ROOT, run_cli
from deviation import verification
from deviation.physics import field as field_module
from deviation.physics import geomag

#: The published values the report must carry (issue 17): WMM2025's official test values, the
#: compass-adjustment handbook's art. 501 swing, IEC 60945's 5.4/H and 18/H, the long wire, the
#: two-wire line, the finite segment, Moser & Spencer at 1.5 lays, Gauss end-on and broadside.
REQUIRED = ("wmm2025.01.H", "wmm2025.12.D", "wmm2025.all", "pub226.501-A", "iec60945.standard",
            "iec60945.steering", "field.long-wire", "field.two-wire", "field.finite-segment",
            "twisted.moser-spencer", "gauss.end-on", "gauss.broadside")


def rows_of(result):
    return {row["id"]: row for row in json.loads(result.output)["rows"]}


def test_every_row_passes_and_the_exit_status_is_zero():
    result = run_cli("verify", "--json")
    assert result.exit_code == 0, result.output
    document = json.loads(result.output)
    rows = rows_of(result)
    assert len(rows) >= 12 and document["all_pass"] and document["failed"] == 0
    assert set(REQUIRED) <= set(rows)
    for row in rows.values():
        assert row["pass"], row
        assert abs(row["computed"] - row["expected"]) <= row["tolerance"]
        assert row["difference"] == pytest.approx(row["computed"] - row["expected"], abs=1e-15)
        assert row["source"] and row["what"] and row["unit"]
    # The table in the terminal says the same.
    table = run_cli("verify", "--width", "120")
    assert table.exit_code == 0
    assert f"All {len(rows)} checks pass." in table.output


def test_expected_values_are_the_published_ones():
    # Spot checks of what the rows hold against their sources, written out here: the WMM2025
    # report's table (tests/data, a verbatim copy of it), Griffiths' long wire 0.2 uT I / d,
    # Moser & Spencer's 50 dB, IEC 60945's 5.4/H and 18/H at H = 20 uT, art. 501's A = 8.0 / 8.
    table = np.loadtxt(ROOT / "tests" / "data" / "WMM2025_report_test_values.txt", comments="#")
    checks = {c.id: c for c in verification.CHECKS}
    assert checks["wmm2025.01.H"].expected == table[0, 7] == 6523.2
    assert checks["wmm2025.12.D"].expected == table[11, 10] == 67.93
    assert checks["field.long-wire"].expected == 0.2 * 10 / 0.5
    assert checks["twisted.moser-spencer"].expected == 50.0
    assert checks["iec60945.standard"].expected == 5.4 / 20
    assert checks["iec60945.steering"].expected == 18 / 20
    assert checks["pub226.501-A"].expected == pytest.approx(
        (10.5 + 20.0 + 11.5 - 1.2 - 5.5 - 8.0 - 12.5 - 6.8) / 8, abs=1e-12)


def test_packaged_test_values_are_the_report_table():
    # The wheel carries its own copy for `deviation verify`; it must be the same file.
    packaged = ROOT / "deviation" / "data" / "WMM2025_report_test_values.txt"
    assert packaged.read_bytes() == (ROOT / "tests" / "data"
                                     / "WMM2025_report_test_values.txt").read_bytes()


def wrong_power_dipole(moment_am2, position_m, points_m):
    """The dipole kernel with 1/r^4 in place of 1/r^3 (a fault the report must catch)."""
    m = np.asarray(moment_am2, dtype=float)
    r = np.asarray(points_m, dtype=float)[:, None, :] - np.asarray(position_m, dtype=float)
    size = np.linalg.norm(r, axis=-1, keepdims=True)
    unit = r / size
    along = np.sum(m * unit, axis=-1, keepdims=True)
    return np.sum(1e-7 * (3 * along * unit - m) / size ** 4, axis=1)


def test_a_dipole_kernel_with_the_wrong_power_of_r_fails_its_rows(monkeypatch):
    # At 2 m, 1/r^4 halves the field; at 0.5 m it doubles it: every row on the dipole kernel
    # fails, and only those.
    monkeypatch.setattr(field_module, "dipole_field", wrong_power_dipole)
    result = run_cli("verify", "--json")
    assert result.exit_code == 1
    failed = {i for i, row in rows_of(result).items() if not row["pass"]}
    assert failed == {"field.dipole-axis", "field.dipole-plane", "gauss.end-on",
                      "gauss.broadside"}
    table = run_cli("verify", "--width", "80")
    assert table.exit_code == 1
    assert re.search(r"^gauss\.end-on .* FAIL$", table.output, flags=re.M)
    assert "39 of 43 checks pass; failed: field.dipole-axis" in table.output


def test_a_segment_kernel_off_by_a_tenth_of_a_percent_fails(monkeypatch):
    real = field_module.segment_field

    def scaled(*args, **kwargs):
        return 1.001 * real(*args, **kwargs)

    monkeypatch.setattr(field_module, "segment_field", scaled)
    result = run_cli("verify", "--json")
    assert result.exit_code == 1
    rows = rows_of(result)
    for name in ("field.long-wire", "field.two-wire", "field.finite-segment",
                 "field.segment-beyond", "field.square-loop"):
        assert not rows[name]["pass"], name
    # A ratio of two fields from the same kernel does not see a common scale: honest, not a
    # check of the scale.
    assert rows["twisted.moser-spencer"]["pass"]


def test_a_computation_that_raises_is_a_failed_row_not_a_traceback(monkeypatch):
    def broken(*args, **kwargs):
        raise ValueError("coefficients unreadable")

    monkeypatch.setattr(geomag, "wmm_field", broken)
    result = run_cli("verify", "--json")
    assert result.exit_code == 1
    row = rows_of(result)["wmm2025.01.H"]
    assert row["computed"] is None and row["difference"] is None and not row["pass"]
    assert row["problem"] == "ValueError: coefficients unreadable"
    table = run_cli("verify")
    assert table.exit_code == 1 and "Traceback" not in table.output
    assert "ValueError: coefficients unreadable" in table.output


@pytest.mark.parametrize("width", [80, 120])
def test_the_table_fits_its_width(width):
    result = run_cli("verify", "--width", width)
    lines = result.output.splitlines()
    assert max(len(line.rstrip()) for line in lines) <= width
    for check in verification.CHECKS:
        assert any(line.startswith(check.id + " ") for line in lines), check.id


def test_a_new_row_is_one_entry(monkeypatch):
    monkeypatch.setattr(verification, "CHECKS", list(verification.CHECKS))
    verification.published("extra.sum", group="Extra", what="one plus one", source="arithmetic",
                           expected=2.0, unit="", tolerance=0.0, decimals=0)(lambda: 1.0 + 1.0)
    rows = rows_of(run_cli("verify", "--json"))
    assert rows["extra.sum"]["pass"] and rows["extra.sum"]["computed"] == 2.0
    with pytest.raises(ValueError, match="exists already"):
        verification.published("extra.sum", group="Extra", what="", source="", expected=0,
                               unit="", tolerance=0, decimals=0)(lambda: 0.0)


def test_verification_page_is_current():
    # docs/verification.md is generated: `python -m deviation.docs verification > docs/...`.
    from deviation.docs import verification_reference

    assert (ROOT / "docs" / "verification.md").read_text() == verification_reference()
