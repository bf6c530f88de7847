"""Gauss's deflection: a hand-bearing compass's deflection by an item, as a moment."""

from __future__ import annotations

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


