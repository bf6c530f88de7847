"""Gauss's deflection: a hand-bearing compass's deflection by an item, as a moment."""

from __future__ import annotations

import numpy as np

from ..physics import swing


def deflection_item(name: str, at: str, deflection_deg: float, distance_m: float,
                    horizontal_t: float, position: str = "end-on", note: str = "") -> dict:
    """An equipment-sheet row for an item whose moment was found by deflecting a compass.

    Parameters
    ----------
    name : str
        The item.
    at : str
        Where it will be mounted: a point name or x, y, z, as the plan's ``at`` column takes.
    deflection_deg, distance_m, horizontal_t, position
        As :func:`deviation.physics.swing.moment_from_deflection_am2`.

    Returns
    -------
    dict
        The equipment sheet's columns: item, at, moment_am2 (3 significant digits) and a blank
        axis (the orientation aboard is not known, so the worst one counts), and a note saying
        how the moment was found.
    """
    moment = swing.moment_from_deflection_am2(deflection_deg, distance_m, horizontal_t, position)
    how = (f"moment from a {abs(deflection_deg):g}° deflection at {distance_m:g} m {position}, "
           f"H {horizontal_t * 1e6:.2f} µT")
    return {"item": name, "at": at, "safe_distance": "", "safe_distance_for": "",
            "moment_am2": float(f"{moment:.3g}"), "axis": "", "states": "",
            "note": f"{note}; {how}" if note else how}




#: µ0 [T·m/A] (the SI value, 4 pi 1e-7 to nine digits: CODATA 2018).
_MU0 = 1.25663706212e-6


def induced_moment_am2(shape: str, sizes_m, horizontal_t: float, mu_low: float = 100.0,
                       mu_high: float = float("inf"), wall_m=None) -> tuple[float, float]:
    """The moment the Earth's horizontal field induces in a steel item during a deflection test,
    least and largest over its orientations and permeability band [A·m²].

    Parameters
    ----------
    shape, sizes_m, wall_m, mu_low, mu_high
        As the steel sheet gives them (:func:`deviation.physics.induced.polarisability_band`).
    horizontal_t : float [T]
        H where the test is made.

    Notes
    -----
    m = alpha H / mu0 along H (a principal axis; between the least and the largest principal
    polarisability otherwise). In Gauss's positions the item lies east or west of the needle (or
    north or south), so a moment along H is parallel or antiparallel to the needle's field
    there: it changes the needle's directive force but does not deflect it. The deflection
    therefore measures the item's permanent moment across the field; its induced magnetism
    belongs in the steel sheet, where it turns with the heading aboard.
    """
    from ..physics.induced import polarisability_band

    band = polarisability_band(shape, sizes_m, mu_low, mu_high, wall_m)
    return (float(np.min(band.low_m3)) * horizontal_t / _MU0,
            float(np.max(band.high_m3)) * horizontal_t / _MU0)
