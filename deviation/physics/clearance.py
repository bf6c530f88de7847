"""How far from the wiring a compass must be, before any plan exists.

Closed-form clearances from a deviation budget: the least distance at which a long cable carrying
a given current leaves a compass within its budget, for a single conductor (return elsewhere),
a pair (supply and return side by side) and a twisted pair. Everything here is a pure function of
SI quantities (amperes, metres, tesla, degrees); nothing reads files or prints.

Every figure is for a long straight cable and is a worst case over what a plan would otherwise
say: the pair's orientation about its axis, and the direction of the disturbance relative to
the Earth's field (that is, every heading).
"""

from __future__ import annotations

import math
from dataclasses import asdict, dataclass, fields

import numpy as np

from ..constants import MU0

#: Currents of the default table [A] (common practice, no source: from a small electronics load
#: to an engine starter or a large inverter).
DEFAULT_CURRENTS_A = (1.0, 2.0, 5.0, 10.0, 20.0, 50.0, 100.0, 200.0, 500.0)

#: Distance from a twisted pair's axis, in lay lengths, to which the exponential fall of its field
#: was verified by measurement (Moser & Spencer 1968, abstract: "as large as (3/2)p").
TWIST_VERIFIED_LAYS = 1.5
#: How far the twisted pair's field lies below the untwisted pair's at that distance [dB]
#: (Moser & Spencer 1968, abstract: "50 dB below that from a two-wire line").
TWIST_ATTENUATION_DB = 50.0
# The same as a field ratio (20 dB per decade of field).
_TWIST_FLOOR = 10.0 ** (-TWIST_ATTENUATION_DB / 20.0)


def allowed_field_t(budget_deg, horizontal_t):
    """Largest horizontal disturbance a sensor can take within a deviation budget.

    Parameters
    ----------
    budget_deg : float [deg]
        Deviation budget, more than 0 and less than 90.
    horizontal_t : float [T]
        Horizontal component H of the Earth's field at the site, more than 0.

    Returns
    -------
    float [T]
        :math:`H \\sin(\\text{budget})`.

    Raises
    ------
    ValueError
        If the budget is not in (0, 90) degrees or H is not more than zero.

    Notes
    -----
    A horizontal disturbance b turns the field the compass sees from H to H + b. As the vessel
    swings through every heading, b turns with it relative to H, and the deviation
    :math:`\\delta = \\operatorname{atan2}(b_E, H + b_N)` is largest when H + b is perpendicular
    to b, where :math:`\\sin\\delta = |b|/H`. The largest deviation over headings is therefore
    :math:`\\arcsin(|b|/H)`, and the largest disturbance within a budget is
    :math:`H\\sin(\\text{budget})`. A disturbance of H or more can make the compass point
    anywhere, so no budget of 90 degrees or more has a meaning.

    References
    ----------
    National Geospatial-Intelligence Agency, *Handbook of Magnetic Compass Adjustment*, Pub. 226
    (semicircular deviation from a vessel-fixed field).
    """
    budget_deg = float(budget_deg)
    horizontal_t = float(horizontal_t)
    if not 0.0 < budget_deg < 90.0:
        raise ValueError(
            f"the deviation budget must be more than 0 and less than 90 degrees, got "
            f"{budget_deg:g}; a disturbance as large as the Earth's horizontal field can make "
            "the compass point anywhere")
    if not (horizontal_t > 0.0 and math.isfinite(horizontal_t)):
        raise ValueError(f"the horizontal field must be more than zero tesla, got {horizontal_t:g}")
    return horizontal_t * math.sin(math.radians(budget_deg))


def single_conductor_field_t(current_a, distance_m):
    """Field of a long straight conductor.

    Parameters
    ----------
    current_a : float or array [A]
    distance_m : float or array [m]
        Distance from the conductor's axis, more than 0.

    Returns
    -------
    float or array [T]
        :math:`\\mu_0 |I| / (2\\pi r)`.

    References
    ----------
    D. J. Griffiths, *Introduction to Electrodynamics*, 4th ed., ch. 5 (field of a long straight
    wire).
    """
    current = _current(current_a)
    distance = _positive(distance_m, "distance")
    return _scalar(MU0 * np.abs(current) / (2 * np.pi * distance))


def pair_field_t(current_a, spacing_m, distance_m):
    """Field of two long parallel conductors with opposite currents, at its worst orientation.

    Parameters
    ----------
    current_a : float or array [A]
        Current in each conductor (out on one, back on the other).
    spacing_m : float [m]
        Centre spacing s of the two conductors, more than 0.
    distance_m : float or array [m]
        Distance d from the pair's centre line, more than s/2.

    Returns
    -------
    float or array [T]
        :math:`\\mu_0 |I| s / (2\\pi (d^2 - s^2/4))`.

    Notes
    -----
    With :math:`r_1, r_2` the distances from the observer to the two conductors, the field of the
    pair is exactly :math:`\\mu_0 I s/(2\\pi r_1 r_2)`. At a distance d from the centre line and an
    angle :math:`\\theta` from the plane of the conductors,
    :math:`r_1^2 r_2^2 = (d^2 + s^2/4)^2 - d^2 s^2\\cos^2\\theta`, least with the observer in that
    plane (:math:`\\theta = 0`), where :math:`r_1 r_2 = d^2 - s^2/4`. Far away this tends to the
    line-dipole field :math:`\\mu_0 I s/(2\\pi d^2)`.

    References
    ----------
    D. J. Griffiths, *Introduction to Electrodynamics*, 4th ed., ch. 5 (field of a long wire,
    superposed for the two conductors).
    """
    current = _current(current_a)
    spacing = _spacing(spacing_m)
    distance = _positive(distance_m, "distance")
    if np.any(distance <= spacing / 2):
        raise ValueError(f"the distance must be more than half the spacing ({spacing / 2:g} m), "
                         "outside the pair")
    return _scalar(MU0 * np.abs(current) * spacing / (2 * np.pi * (distance**2 - spacing**2 / 4)))


def twist_attenuation(distance_m, lay_m):
    """Field of a twisted pair as a fraction of the untwisted pair's, at a distance (model).

    Parameters
    ----------
    distance_m : float or array [m]
        Distance from the cable's axis.
    lay_m : float [m]
        Lay length p (the length of one full twist), more than 0.

    Returns
    -------
    float or array
        The fraction, at most 1:
        :math:`\\min(1,\\ 10^{-50/20} e^{2\\pi(1.5p - d)/p})` for :math:`d \\le 1.5p`, and the
        floor :math:`10^{-50/20}` beyond.

    Notes
    -----
    Moser and Spencer showed that the field of a twisted pair of pitch p falls off exponentially
    with distance from the cable, and measured it 50 dB below the field of the untwisted
    two-wire line at 1.5 p, the farthest distance they verified. The model here is cautious:

    * Up to 1.5 p, the fraction grows towards the cable as :math:`e^{-2\\pi d/p}` (the decay of
      the first harmonic of a field periodic along the axis with period p), scaled to meet
      -50 dB at 1.5 p, and is never more than 1 (the untwisted pair). Applying the exponential to
      the fraction rather than to the field keeps the model above the field of an ideal double
      helix near the cable (a Biot-Savart computation gives, for s/p = 0.1, an ideal helix
      11 dB below the pair at 0.6 p and 27 dB below at p, where the model says 1 dB and 23 dB);
      an exponential fitted to the field itself would fall below the ideal helix there, by 7 dB
      at 0.5 p.
    * Beyond 1.5 p the fraction stays at -50 dB. An ideal helix falls much faster still, but no
      measurement supports anything weaker, and real cables depart from a helix (uneven lay,
      loose ends).

    The source's 50 dB at 1.5 p is taken as stated, though an ideal helix computed the same way
    is 49.6 dB below the pair there for s/p = 0.1, 48.7 dB for s/p = 0.2 and 45.6 dB for
    s/p = 0.4. Just inside 1.5 p the model is therefore slightly below an ideal helix: by at
    most 0.44 dB (5 % in field) from about 1.45 p for s/p = 0.1, 1.3 dB from 1.35 p for
    s/p = 0.2, 4.4 dB from 1.05 p for s/p = 0.4. For tight twists (s/p above about 0.2) the
    pair's clearance is the safe figure.

    References
    ----------
    J. R. Moser and R. F. Spencer, "Predicting the magnetic fields from a twisted-pair cable",
    IEEE Trans. Electromagn. Compat., 1968 (abstract).
    """
    distance = np.asarray(distance_m, dtype=float)
    lay = _lay(lay_m)
    reach_m = TWIST_VERIFIED_LAYS * lay
    growth = np.exp(2 * np.pi * (reach_m - np.minimum(distance, reach_m)) / lay)
    return _scalar(np.minimum(1.0, _TWIST_FLOOR * growth))


def twisted_field_t(current_a, spacing_m, lay_m, distance_m):
    """Field of a long twisted pair at a distance from its axis (cautious model).

    Parameters
    ----------
    current_a : float or array [A]
        Current in each conductor.
    spacing_m : float [m]
        Centre spacing s of the two conductors, more than 0.
    lay_m : float [m]
        Lay length p, more than 0.
    distance_m : float or array [m]
        Distance from the cable's axis, more than s/2.

    Returns
    -------
    float or array [T]
        :func:`pair_field_t` times :func:`twist_attenuation`.

    Notes
    -----
    For the twisted middle of a run. Each end of a real twisted run has an untwisted stretch at
    its terminal, which is a pair: :func:`pair_field_t`.

    References
    ----------
    J. R. Moser and R. F. Spencer, "Predicting the magnetic fields from a twisted-pair cable",
    IEEE Trans. Electromagn. Compat., 1968 (abstract).
    """
    return _scalar(np.asarray(pair_field_t(current_a, spacing_m, distance_m))
                   * twist_attenuation(distance_m, lay_m))


def single_conductor_clearance_m(current_a, allowed_t):
    """Least distance from a long single conductor at which its field is within a limit.

    Parameters
    ----------
    current_a : float or array [A]
        Current; its sign does not matter. Zero gives zero.
    allowed_t : float [T]
        Allowed field, more than 0 (see :func:`allowed_field_t`).

    Returns
    -------
    float or array [m]
        :math:`r = \\mu_0 |I| / (2\\pi B_a)`.

    Notes
    -----
    Inverts :math:`B = \\mu_0 I/(2\\pi r)` of a long straight wire, for a conductor whose return
    is far away (a separate route, or a hull or chassis return).

    References
    ----------
    D. J. Griffiths, *Introduction to Electrodynamics*, 4th ed., ch. 5 (field of a long straight
    wire).
    """
    current = np.abs(_current(current_a))
    allowed = _allowed(allowed_t)
    return _scalar(MU0 * current / (2 * np.pi * allowed))


def pair_clearance_m(current_a, spacing_m, allowed_t):
    """Least distance from a pair's centre line at which its field is within a limit.

    Parameters
    ----------
    current_a : float or array [A]
        Current in each conductor (out on one, back on the other); its sign does not matter.
        Zero gives zero.
    spacing_m : float [m]
        Centre spacing s of the two conductors, more than 0.
    allowed_t : float [T]
        Allowed field, more than 0.

    Returns
    -------
    float or array [m]
        :math:`d = \\sqrt{\\mu_0 |I| s/(2\\pi B_a) + s^2/4}`, measured from the centre line; a
        sensor at d or farther is within the limit however the pair lies about its axis.

    Notes
    -----
    Solves :math:`\\mu_0 I s/(2\\pi (d^2 - s^2/4)) = B_a`, the field at the pair's worst
    orientation (see :func:`pair_field_t`), exactly. Far away it tends to
    :math:`\\sqrt{\\mu_0 I s/(2\\pi B_a)}`, from the line-dipole field
    :math:`\\mu_0 I s/(2\\pi d^2)`, and is always a little farther.

    References
    ----------
    D. J. Griffiths, *Introduction to Electrodynamics*, 4th ed., ch. 5 (field of a long wire,
    superposed for the two conductors).
    """
    current = np.abs(_current(current_a))
    spacing = _spacing(spacing_m)
    allowed = _allowed(allowed_t)
    return _scalar(_pair_solution(current, spacing, allowed))


def twisted_clearance_m(current_a, spacing_m, lay_m, allowed_t):
    """Least distance from a twisted pair's axis at which its modelled field is within a limit.

    Parameters
    ----------
    current_a : float or array [A]
        Current in each conductor; its sign does not matter. Zero gives zero.
    spacing_m : float [m]
        Centre spacing s of the two conductors, more than 0.
    lay_m : float [m]
        Lay length p (the length of one full twist), more than 0.
    allowed_t : float [T]
        Allowed field, more than 0.

    Returns
    -------
    float or array [m]
        The distance d where :func:`twisted_field_t` equals the allowed field: never farther than
        the untwisted pair's clearance, and never nearer than the 50 dB floor allows.

    Notes
    -----
    The modelled field (:func:`twist_attenuation` times the pair's worst-orientation field) falls
    strictly with distance, so the answer is unique. It is found in closed form where the
    fraction is 1 (the pair's clearance) or at the floor beyond 1.5 p (the pair's clearance for
    an allowed field :math:`10^{50/20}` times larger), and by bisection on the logarithm of the
    field in between.

    This is for the twisted middle of a run: the untwisted stretch at each terminal is a pair,
    and needs :func:`pair_clearance_m`.

    References
    ----------
    J. R. Moser and R. F. Spencer, "Predicting the magnetic fields from a twisted-pair cable",
    IEEE Trans. Electromagn. Compat., 1968 (abstract).
    """
    current_in = np.abs(_current(current_a))
    current = current_in.ravel()
    spacing = _spacing(spacing_m)
    lay = _lay(lay_m)
    allowed = _allowed(allowed_t)
    reach_m = TWIST_VERIFIED_LAYS * lay
    # Nearest distance at which the fraction is below 1 (the model is the plain pair inside it).
    full_m = reach_m - lay * math.log(1.0 / _TWIST_FLOOR) / (2 * np.pi)

    at_floor = _pair_solution(current, spacing, allowed / _TWIST_FLOOR)
    as_pair = _pair_solution(current, spacing, allowed)
    result = np.where(at_floor >= reach_m, at_floor, as_pair)
    between = (current > 0) & (at_floor < reach_m) & (as_pair > full_m)
    if np.any(between):
        lo = np.full(int(between.sum()), max(full_m, spacing / 2))
        hi = np.full_like(lo, reach_m)
        log_scale = np.log(MU0 * current[between] * spacing / (2 * np.pi) * _TWIST_FLOOR / allowed)

        def excess(d):  # log of (modelled field / allowed), falling with d
            with np.errstate(divide="ignore"):
                return (log_scale - np.log(d**2 - spacing**2 / 4)
                        + 2 * np.pi * (reach_m - d) / lay)

        for _ in range(200):
            mid = 0.5 * (lo + hi)
            over = excess(mid) > 0
            lo = np.where(over, mid, lo)
            hi = np.where(over, hi, mid)
            if np.all(hi - lo <= 4 * np.finfo(float).eps * hi):
                break
        result[between] = hi
    return _scalar(result.reshape(current_in.shape))


@dataclass(frozen=True)
class ClearanceRow:
    """Clearances for one current.

    Attributes
    ----------
    current_a : float [A]
    single_m : float [m]
        From a single conductor (return far away).
    pair_m : float [m]
        From the centre line of a pair, worst orientation. Also the clearance for the untwisted
        ends of a twisted run.
    twisted_m : float [m]
        From the axis of the twisted middle of a run (cautious model, see
        :func:`twist_attenuation`).
    """

    current_a: float
    single_m: float
    pair_m: float
    twisted_m: float


class ClearanceTable(list):
    """A list of :class:`ClearanceRow`, with the inputs it was computed for.

    Attributes
    ----------
    budget_deg : float [deg]
    horizontal_t : float [T]
    spacing_m : float [m]
    lay_m : float [m]
    allowed_t : float [T]
        The allowed horizontal disturbance, :func:`allowed_field_t`.
    """

    def __init__(self, rows, *, budget_deg, horizontal_t, spacing_m, lay_m, allowed_t):
        super().__init__(rows)
        self.budget_deg = budget_deg
        self.horizontal_t = horizontal_t
        self.spacing_m = spacing_m
        self.lay_m = lay_m
        self.allowed_t = allowed_t

    def to_frame(self):
        """The rows as a pandas DataFrame, one column per field of :class:`ClearanceRow`.

        Returns
        -------
        pandas.DataFrame
            Columns ``current_a``, ``single_m``, ``pair_m``, ``twisted_m``.
        """
        try:
            import pandas as pd
        except ImportError as error:  # pandas is optional: only this method needs it
            raise ImportError("ClearanceTable.to_frame needs pandas (pip install pandas)") \
                from error
        columns = [f.name for f in fields(ClearanceRow)]
        return pd.DataFrame([asdict(row) for row in self], columns=columns)


def clearance_table(currents_a, budget_deg, horizontal_t, spacing_m, lay_m):
    """Clearances from a single conductor, a pair and a twisted pair, for a list of currents.

    Parameters
    ----------
    currents_a : sequence of float [A]
        Currents, one row each (e.g. :data:`DEFAULT_CURRENTS_A`).
    budget_deg : float [deg]
        Deviation budget, in (0, 90).
    horizontal_t : float [T]
        Horizontal component of the Earth's field at the site.
    spacing_m : float [m]
        Centre spacing of the pair's conductors.
    lay_m : float [m]
        Lay length of the twisted pair.

    Returns
    -------
    ClearanceTable
        One :class:`ClearanceRow` per current, in the order given.

    Notes
    -----
    The allowed field is :func:`allowed_field_t`; each column inverts the field of a long
    straight cable (:func:`single_conductor_clearance_m`, :func:`pair_clearance_m`,
    :func:`twisted_clearance_m`). The twisted column is for the twisted middle of a run; its
    untwisted ends need the pair column.

    References
    ----------
    National Geospatial-Intelligence Agency, *Handbook of Magnetic Compass Adjustment*, Pub. 226.
    J. R. Moser and R. F. Spencer, "Predicting the magnetic fields from a twisted-pair cable",
    IEEE Trans. Electromagn. Compat., 1968 (abstract).
    """
    allowed = allowed_field_t(budget_deg, horizontal_t)
    currents = np.atleast_1d(_current(currents_a))
    single = np.atleast_1d(single_conductor_clearance_m(currents, allowed))
    pair = np.atleast_1d(pair_clearance_m(currents, spacing_m, allowed))
    twisted = np.atleast_1d(twisted_clearance_m(currents, spacing_m, lay_m, allowed))
    rows = [ClearanceRow(float(i), float(a), float(b), float(c))
            for i, a, b, c in zip(currents, single, pair, twisted)]
    return ClearanceTable(rows, budget_deg=float(budget_deg), horizontal_t=float(horizontal_t),
                          spacing_m=float(spacing_m), lay_m=float(lay_m), allowed_t=allowed)


def _pair_solution(current, spacing, allowed):
    distance = np.sqrt(MU0 * current * spacing / (2 * np.pi * allowed) + spacing**2 / 4)
    # No current, no field: any distance will do.
    return np.where(current > 0, distance, 0.0)


def _current(current_a):
    current = np.asarray(current_a, dtype=float)
    if not np.all(np.isfinite(current)):
        raise ValueError(f"the current must be a finite number of amperes, got {current_a!r}")
    return current


def _positive(value, what):
    value = np.asarray(value, dtype=float)
    if not np.all(np.isfinite(value) & (value > 0)):
        raise ValueError(f"the {what} must be more than zero metres, got {_show(value)}")
    return value


def _spacing(spacing_m):
    return float(_positive(float(spacing_m), "pair's centre spacing"))


def _lay(lay_m):
    return float(_positive(float(lay_m), "lay length (one full twist)"))


def _allowed(allowed_t):
    allowed = float(allowed_t)
    if not (allowed > 0 and math.isfinite(allowed)):
        raise ValueError(f"the allowed field must be more than zero tesla, got {allowed:g}; "
                         "check the budget and the horizontal field")
    return allowed


def _show(value):
    return f"{float(value):g}" if value.ndim == 0 else f"{value!r}"


def _scalar(value):
    value = np.asarray(value, dtype=float)
    return float(value) if value.ndim == 0 else value
