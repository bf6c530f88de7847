"""Electronic compasses and magnetometers: the figures their integrators work with.

Pure computation over a plan and its checked result (:func:`deviation.check`):

* the sensor's mounting axes (:func:`parse_axes`), so vectors can be given in its own axes;
* each circuit's field per ampere at the sensor (:func:`per_ampere_rows`), the vector a
  current-compensation setting takes;
* the compensation a host that measures some currents would learn (:func:`fit_compensation`)
  and the residual it leaves in each state, in degrees and in % of F;
* the sensor's grade against its own budget, as installed and with current compensation
  (:func:`grade_of`), beside the interference as a plain share of the Earth's field;
* the field and inclination the sensor sees against the model's (a sanity check before use);
* total-field (scalar) magnetometers: the change of the reading per ampere.

Frames as in :mod:`deviation.physics.heading`: vessel x forward, y to port, z up.
"""

from __future__ import annotations

import enum
from dataclasses import dataclass

import numpy as np

from .axes import NAMED_AXES, AxesError, parse_axes  # noqa: F401  (re-exported)
from .budget import (
    MAX_EXACT_GENERATORS_ATTITUDE,
    MAX_EXACT_GENERATORS_LEVEL,
    _held,
    asin_deg,
    equipment_fields,
    sensor_field_parts,
)
from .constants import (
    MAX_SWITCHINGS_ENUMERATED,
    MODEL_FIELD_TOLERANCE_T,
    MODEL_INCLINATION_TOLERANCE_DEG,
)
from .physics.total_field import (
    all_switchings,
    count_switchings,
    error_over_switchings,
    first_order_range,
    inclination_over_switchings,
)
from .physics.worst_case import worst_combination
from .plan import Sensor, name_key
from .schema import TOTAL_FIELD_KIND, VECTOR_ELECTRONIC_KINDS

#: Kinds this module reports on.
ELECTRONIC_KINDS = VECTOR_ELECTRONIC_KINDS + (TOTAL_FIELD_KIND,)

# Sensor axes -------------------------------------------------------------------------------------

def sensor_axes(sensor) -> np.ndarray:
    """(3, 3) the sensor's axes in the vessel frame (the identity where none are given)."""
    return np.eye(3) if sensor.axes is None else np.asarray(sensor.axes, dtype=float)


# Per-ampere vectors ------------------------------------------------------------------------------

@dataclass(frozen=True)
class PerAmpere:
    """One circuit's field per ampere at one sensor.

    ``vessel_t_per_a`` and ``sensor_t_per_a`` (3,) [T/A] are the same vector in the vessel's
    and the sensor's axes: the part of known direction (a pair whose lie is not fixed counts at
    the centre of its lies). ``unknown_t_per_a`` [T/A] is the size of the part of unknown
    direction: a pair's spread over the lies the plan leaves open (for a pair its field per
    ampere is the centre plus or minus up to this), a twisted run's ends and floor.
    ``peak_current_a`` is the largest |current| the plan gives it.
    For a total-field magnetometer ``total_field_per_a`` is (smallest, largest) change of the
    reading per ampere over headings and attitudes [T/A], else None.
    """

    circuit: str
    switching: str
    vessel_t_per_a: np.ndarray
    sensor_t_per_a: np.ndarray
    peak_current_a: float
    total_field_per_a: tuple[float, float] | None = None
    unknown_t_per_a: float = 0.0      # size of the part of unknown direction [T/A]

    @property
    def size_t_per_a(self) -> float:
        return float(np.linalg.norm(self.vessel_t_per_a))


def circuit_fields_t(plan, unit_fields_t) -> np.ndarray:
    """(C, 3) each circuit's field per ampere [T/A] from each run's, (R, 3) [T/A]."""
    return plan.circuit_matrix.T @ np.asarray(unit_fields_t, dtype=float).reshape(-1, 3)


def per_ampere_rows(plan, result, site) -> tuple[PerAmpere, ...]:
    """Each circuit's field per ampere at the sensor of ``result`` (a SensorResult).

    Notes
    -----
    A run's field is linear in its current (Biot-Savart), and a circuit's is the sum over the
    runs that carry it; the vector per ampere is what a linear current compensation subtracts
    per ampere of that circuit. For a scalar magnetometer the change of the reading per ampere
    is, to first order in |b|/F, F-hat . C v, whose range over headings and attitudes is exact
    (:func:`deviation.physics.total_field.first_order_range`).
    """
    sensor = result.sensor
    axes = sensor_axes(sensor)
    fields = circuit_fields_t(plan, result.unit_fields_t)
    parts = result.parts
    unknown = plan.circuit_matrix.T @ (parts.bound_t[0] + np.linalg.norm(
        parts.spread_t[0], axis=-1).sum(axis=-1))                            # (C,)
    currents = plan.circuit_currents_a
    rows = []
    for c, circuit in enumerate(plan.circuits):
        scalar = None
        if sensor.kind == TOTAL_FIELD_KIND:
            low, high = first_order_range(fields[c], site.horizontal_t, site.vertical_t,
                                          sensor.max_heel_deg, sensor.max_pitch_deg)
            scalar = (float(low), float(high))
        rows.append(PerAmpere(circuit.name, circuit.switching, fields[c], axes @ fields[c],
                              float(np.max(np.abs(currents[c]), initial=0.0)), scalar,
                              float(unknown[c])))
    return tuple(rows)


# Compensation planning ---------------------------------------------------------------------------

def measured_matrix(plan, measured) -> np.ndarray:
    """(J, C) the measured currents as combinations of the circuits' currents.

    ``("total",)`` is one channel summing every circuit's current (a battery-current sensor
    where each circuit is a separate load on the battery); circuit names are one channel each.
    """
    names = [name_key(c.name) for c in plan.circuits]
    if tuple(measured) == ("total",):
        return np.ones((1, len(names)))
    matrix = np.zeros((len(measured), len(names)))
    for j, name in enumerate(measured):
        matrix[j, names.index(name_key(name))] = 1.0
    return matrix


def _fit_switchings(reversing):
    """The independent switchings the fit samples: every one up to the enumeration limit, else
    all off, each alone (either way round where reversing) and all on."""
    if count_switchings(reversing) <= MAX_SWITCHINGS_ENUMERATED:
        return all_switchings(reversing), True
    n = len(reversing)
    rows = [np.zeros(n, dtype=int), np.ones(n, dtype=int)]
    for i in range(n):
        for sign in ((1, -1) if reversing[i] else (1,)):
            row = np.zeros(n, dtype=int)
            row[i] = sign
            rows.append(row)
    return np.array(rows), False


@dataclass(frozen=True)
class Compensation:
    """The current compensation a sensor's host would learn from the plan's states.

    measured : the measured channels, ("total",) or circuit names
    coefficients_t_per_a : (J, 3) [T/A] field subtracted per ampere of each channel, vessel axes
    sensor_coefficients_t_per_a : (J, 3) [T/A] the same in the sensor's axes
    offset_t : (3,) [T] the constant it learns with them (zero with a reference state, where the
        calibration fixes it)
    residual_per_ampere_t : (C, 3) [T/A] what is left of each circuit's field per ampere
    samples : number of (state, switching) samples fitted
    exhaustive : every switching of the independent circuits was sampled
    """

    measured: tuple[str, ...]
    coefficients_t_per_a: np.ndarray
    sensor_coefficients_t_per_a: np.ndarray
    offset_t: np.ndarray
    residual_per_ampere_t: np.ndarray
    samples: int
    exhaustive: bool


def _used_states(plan, sensor):
    used = [k for k, s in enumerate(plan.state_names) if sensor.used_in_state(s)]
    return used or list(range(len(plan.state_names)))


def _fit(plan, sensor, measured, circuit_values, oriented):
    """The host's least-squares fit of D columns at once: solution (J, D), offset (D,) and what
    is left of each circuit per ampere (C, D). Linear in ``circuit_values`` (C, D) and
    ``oriented`` (K, D): each column is fitted alone with the same design."""
    channels = measured_matrix(plan, measured)                              # (J, C)
    currents = plan.circuit_currents_a                                      # (C, K)
    independent = plan.independent
    reversing = np.array([c.reversing for c in plan.circuits if c.independent], dtype=bool)
    switchings, exhaustive = _fit_switchings(reversing)
    base = currents * ~independent[:, None]                                 # (C, K)
    samples_i, samples_b = [], []
    for k in _used_states(plan, sensor):
        for choice in switchings:
            current = base[:, k].copy()
            current[independent] += choice * currents[independent, k]
            samples_i.append(current)
            samples_b.append(circuit_values.T @ current + oriented[k])
    amps = np.array(samples_i)                                              # (S, C)
    values = np.array(samples_b)                                            # (S, D)
    m = amps @ channels.T                                                   # (S, J)
    if sensor.reference_state is not None:
        k_ref = plan.state_index(sensor.reference_state)
        m_ref = channels @ base[:, k_ref]
        b_ref = circuit_values.T @ base[:, k_ref] + oriented[k_ref]
        solution = np.linalg.lstsq(m - m_ref, values - b_ref, rcond=None)[0]      # (J, D)
        offset = np.zeros(values.shape[1])
    else:
        design = np.hstack([m, np.ones((len(m), 1))])
        both = np.linalg.lstsq(design, values, rcond=None)[0]
        solution, offset = both[:-1], both[-1]
    residual = circuit_values - channels.T @ solution                       # (C, D)
    return solution, offset, residual, len(amps), exhaustive


def fit_compensation(plan, sensor, unit_fields_t, oriented_t=None) -> Compensation:
    """Fit the linear current compensation the sensor's host would learn.

    Parameters
    ----------
    plan : Plan
    sensor : Sensor
        With ``measured_currents``; its reference state, if any, is where it is calibrated.
    unit_fields_t : (R, 3) [T/A]
        Each run's field per ampere at the sensor (``SensorResult.unit_fields_t``).
    oriented_t : (K, 3) [T] or None
        Equipment of known orientation present in each state.

    Returns
    -------
    Compensation

    Notes
    -----
    The host subtracts :math:`K m` from its reading, m the measured currents. Fitted by least
    squares over every state the sensor is used in, with the independent circuits in every
    switching (each sample weighs the same): with a reference state the calibration there
    fixes the constant, and the fit is :math:`\\min_K \\sum_s |(b_s - b_r) - K(m_s - m_r)|^2`;
    without, a constant :math:`b_0` is fitted along, :math:`\\min \\sum_s |b_s - b_0 - K m_s|^2`.
    With one circuit measured alone the fit is exact and the residual zero; several circuits
    measured as one total leave what their different directions cannot share.

    References
    ----------
    G. H. Golub and C. F. Van Loan, *Matrix Computations*, 4th ed., Johns Hopkins, 2013,
    section 5.3 (the linear least-squares problem).
    """
    fields = circuit_fields_t(plan, unit_fields_t)                          # (C, 3)
    measured = tuple(sensor.measured_currents)
    oriented = np.zeros((len(plan.state_names), 3)) if oriented_t is None else oriented_t
    solution, offset, residual, samples, exhaustive = _fit(plan, sensor, measured, fields,
                                                           oriented)
    return Compensation(measured, solution, solution @ sensor_axes(sensor).T, offset, residual,
                        samples, exhaustive)


def compensated_residual(plan, sensor, measured, run_values, oriented):
    """What the host's compensation leaves in every state, linear in what it learns from.

    Parameters
    ----------
    plan, sensor : Plan, Sensor
    measured : tuple of str
        The measured channels (``Compensation.measured``).
    run_values : (R, D)
        Each run's field per ampere at the sensor (D = 3), or any D columns fitted alike.
    oriented : (K, D)
        Equipment of known orientation in each state.

    Returns
    -------
    base : (K, D)
        The residual with the independent circuits off, after calibration in the reference
        state (or less the fitted offset without one) and the fitted compensation.
    switched : (K, Ci, D)
        What each independent circuit adds to it when on, at its current in that state.

    Notes
    -----
    The fit is refitted to the values given: with ``run_values`` the identity (D = R) and
    ``oriented`` zero the result is, column r, how much of run r's real field per ampere is
    left in each state, whatever that field is. A part of a run's field the plan does not fix
    (a pair's lie, an untwisted end's turn) is learned by the host as it really is, and leaves
    that weight times itself.
    """
    currents = plan.circuit_currents_a
    independent = plan.independent
    values = plan.circuit_matrix.T @ run_values                             # (C, D)
    solution, offset, residual, _, _ = _fit(plan, sensor, measured, values, oriented)
    channels = measured_matrix(plan, measured)
    on_base = currents * ~independent[:, None]                              # (C, K)
    if sensor.reference_state is not None:
        k_ref = plan.state_index(sensor.reference_state)
        anchor = (values.T @ on_base[:, k_ref] + oriented[k_ref]
                  - solution.T @ (channels @ on_base[:, k_ref]))
    else:
        anchor = offset
    base = (residual.T @ on_base).T + oriented - anchor[None, :]           # (K, D)
    switched = residual[independent][None, :, :] * currents[independent].T[:, :, None]
    return base, switched


# Per-state figures -------------------------------------------------------------------------------

@dataclass(frozen=True)
class ElectronicState:
    """An electronic sensor in one state. Fields [T], angles [deg], shares of F (0..1).

    interference_t : the largest |b| (3-D) the wiring and equipment put at the sensor over the
        independent switchings, after calibration in the reference state where it has one
        (b - b_ref), before any current compensation; with every bound of unknown direction
    compensated_horizontal_t, compensated_deg, compensated_fraction : what current compensation
        leaves: the largest level horizontal part over switching, attitude and the turns of the
        runs' parts the plan does not fix, and its deviation asin(|b_h|/H), and the largest |b|
        as a share of F (None without measured currents); bounds where any part is unknown
    field_departure_t : the largest | |F + b| - |F| | over headings, attitudes and switchings of
        the field the host sees (calibrated, compensated where it measures currents)
    inclination_departure_deg : the same for the inclination
    model_ok : both within the pre-arming tolerances
    unknown_t : the runs' parts of unknown direction in this state (pairs of unknown lie,
        twisted runs' ends and floors), before compensation, counted in interference_t; the
        compensated figures count what the fit leaves of them
    """

    state: str
    used: bool
    interference_t: float
    interference_fraction: float
    compensated_horizontal_t: float | None
    compensated_deg: float | None
    compensated_fraction: float | None
    field_departure_t: float
    inclination_departure_deg: float
    model_ok: bool
    unknown_t: float = 0.0            # runs' parts of unknown direction, uncompensated
    compensated_bound_t: float | None = None   # what compensation leaves of every part of
    #                                            unknown direction, counted in compensated_*


class Standing(str, enum.Enum):
    """Where an electronic sensor stands against its own budget, as installed and with the
    current compensation its host can learn from the currents it measures."""

    WITHIN = "within"                            # within its budget as installed (calibrated)
    WITHIN_COMPENSATED = "within compensated"    # over as installed, within once compensated
    OVER = "over"                                # over, even compensated where it can be


@dataclass(frozen=True)
class Grade:
    """An electronic sensor graded by what the check computes: its held figure (calibrated in
    its reference state, the worst used state, attitude and switching) and, where its host
    measures currents, the same after current compensation, both against the sensor's own
    budget. ``fraction`` (the largest interference as a share of the Earth's field, in
    ``fraction_state``) is a plain number beside it, not a grade."""

    standing: Standing
    held: float                       # as installed, in the budget's unit, worst used state
    state: str
    compensated: float | None         # after compensation [deg], worst used state; None: none
    compensated_state: str | None
    fraction: float
    fraction_state: str


@dataclass(frozen=True)
class ElectronicSensor:
    """The electronic-sensor figures of one sensor (see the module docstring)."""

    sensor: Sensor
    per_ampere: tuple[PerAmpere, ...]
    compensation: Compensation | None
    grade: Grade | None                  # vector sensors only
    states: tuple[ElectronicState, ...]  # vector sensors only
    state_results: tuple                 # the check's StateResults (total-field figures)

    def to_frame(self):
        """One row per state (see :func:`deviation.frames.electronic_frame`)."""
        from .frames import electronic_frame

        return electronic_frame((self,))

    def per_ampere_frame(self):
        """One row per circuit (see :func:`deviation.frames.per_ampere_frame`)."""
        from .frames import per_ampere_frame

        return per_ampere_frame((self,))


def _largest(base, vectors, reversing, heel, pitch):
    """Largest level horizontal part (with heel and pitch) over the switchings, exactly."""
    if vectors.shape[-2] == 0:
        from .physics.worst_case import horizontal_over_attitude

        return horizontal_over_attitude(base, heel, pitch)
    return worst_combination(base, vectors, reversing, heel, pitch)[0]


def _departures(base, vectors, reversing, bound, site, heel, pitch):
    """Largest departure of |F + b| and of the inclination from the model's, over headings,
    attitudes and switchings (every switching up to the enumeration limit, else the zonotope's
    vertices, with the safe-side bounds of ``error_over_switchings`` and
    ``inclination_over_switchings`` in :mod:`deviation.physics.total_field`), with a bound of
    unknown direction ``bound`` [T]."""
    h, z = site.horizontal_t, site.vertical_t
    total = site.total_t
    worst = error_over_switchings(base, vectors, reversing, h, z, heel, pitch)
    field = max(worst.high, -worst.low) + bound
    i_lo, i_hi, size = inclination_over_switchings(base, vectors, reversing, h, z, heel, pitch)
    model = np.degrees(np.arctan2(z, h))
    inclination = float(max(i_hi - model, model - i_lo))
    # A field of unknown direction of size beta turns the sensor's field, at least F - |b|
    # long, by at most asin(beta / (F - |b|)).
    if bound > 0:
        reach = total - size
        inclination += 180.0 if reach <= 0 else float(np.degrees(np.arcsin(min(1.0,
                                                                               bound / reach))))
    return field, min(inclination, 180.0)


def electronic_states(plan, result, site, compensation) -> tuple[ElectronicState, ...]:
    """Interference, compensation residual and model departures of a vector sensor, per state.

    Notes
    -----
    The field at the sensor is linear in the circuits' currents. After calibration in the
    reference state it is b - b_ref; after compensation the host also subtracts K m (m the
    measured currents, K from :func:`fit_compensation`), which leaves each circuit's residual
    per ampere. The independent circuits' worst switching is exact
    (:func:`deviation.physics.worst_case.worst_combination`); the 3-D size uses it at pitch 90
    degrees, where the worst attitude makes the whole vector horizontal. Bounds of unknown
    direction (pairs of unknown lie, twisted runs' ends and floors, equipment of unknown
    orientation) add to the uncompensated sizes.

    The host learns the real field of a run, whatever its lie, so what compensation leaves of
    a part the plan does not fix is not zero but the fit's residual of it: the residual is
    linear in the runs' fields (:func:`compensated_residual`), so in state k run r's field
    per ampere f_r leaves w_kr f_r, and over the turns of its parts (the zonotope
    unit + sum_j s_j g_j, plus a vector no longer than its bound) the residual stays within
    the zonotope of the generators |w_kr| g_j, found exactly with the switching
    (:func:`deviation.budget.held`), plus |w_kr| times its bound. With independent circuits
    w is affine in the switching; its largest size over the switchings (each circuit at the
    extreme of its own term) is taken, the same for every switching (a bound). Where the fit is
    exact (each circuit measured), w is zero and only the equipment's bound remains.
    """
    sensor = result.sensor
    heel, pitch = sensor.max_heel_deg, sensor.max_pitch_deg
    h, total = site.horizontal_t, site.total_t
    items = equipment_fields(plan, sensor, sensor.position_m[None, :], h)
    parts = result.parts
    base, switched, reversing, bound = sensor_field_parts(plan, sensor, parts, items)
    base, switched, bound = base[0], switched[0], bound[0]
    item_bound = (items.bound if sensor.reference_state is None else items.changing)[0]
    n_states = len(plan.state_names)
    compensated = None
    if compensation is not None:
        measured = compensation.measured
        residual_base, residual_switched = compensated_residual(
            plan, sensor, measured, result.unit_fields_t, items.oriented[0])
        n_runs = len(plan.runs)
        weight_base, weight_switched = compensated_residual(
            plan, sensor, measured, np.eye(n_runs), np.zeros((n_states, n_runs)))
        # Largest share of each run's own field left over the switchings (R, K): the weight is
        # affine in the switching, so its extremes take each circuit at its own extreme.
        lower = np.where(reversing[None, :, None], -np.abs(weight_switched),
                         np.minimum(weight_switched, 0.0)).sum(axis=1)
        upper = np.where(reversing[None, :, None], np.abs(weight_switched),
                         np.maximum(weight_switched, 0.0)).sum(axis=1)
        scale = np.maximum(np.abs(weight_base + lower), np.abs(weight_base + upper)).T
        scalar = parts.bound_t @ scale + item_bound                         # (1, K)
        unknown = (parts.bound_t + np.linalg.norm(parts.spread_t, axis=-1).sum(axis=-1)
                   ) @ scale                                                # (1, K)

        def held(heel_deg, pitch_deg):
            cap = (MAX_EXACT_GENERATORS_ATTITUDE if heel_deg or pitch_deg
                   else MAX_EXACT_GENERATORS_LEVEL)
            size, _, apart = _held(residual_base[None], residual_switched[None], reversing,
                                   parts.spread_t, scale, scalar, heel_deg, pitch_deg, cap)
            return (size + apart)[0]

        known, _, _ = _held(residual_base[None], residual_switched[None], reversing,
                            np.zeros_like(parts.spread_t), scale, np.zeros_like(scalar), heel,
                            pitch, MAX_EXACT_GENERATORS_LEVEL)
        compensated = (held(heel, pitch), held(0.0, 90.0), unknown[0])
        known = known[0]
    steel = _steel_sizes(plan, sensor, site)
    out = []
    for k, state in enumerate(plan.state_names):
        size = float(_largest(base[k], switched[k], reversing, 0.0, 90.0)) + bound[k] + steel[k]
        c_h = c_deg = c_fraction = None
        seen_base, seen_switched, seen_bound = base[k], switched[k], bound[k]
        if compensated is not None:
            c_h = float(compensated[0][k])
            c_deg = float(asin_deg(c_h / h))
            c_3d = float(compensated[1][k])
            seen_base, seen_switched = residual_base[k], residual_switched[k]
            seen_bound = item_bound[k] + compensated[2][k]
            unknown_left = max(0.0, c_h - float(known[k]))
            if plan.steel:
                # Current compensation does nothing for steel: the figure it leaves is the
                # wiring's residual with the steel's induced field turning with the heading
                # (what the fit leaves of the runs' parts of unknown direction as a disc).
                c_deg = _compensated_with_steel(plan, sensor, site, k, residual_base[k],
                                                residual_switched[k], reversing,
                                                float(seen_bound))
                c_h, c_3d = c_h + steel[k], c_3d + steel[k]
            c_fraction = c_3d / total
        field, inclination = _departures(seen_base, seen_switched, reversing,
                                         float(seen_bound + steel[k]), site, heel, pitch)
        ok = field <= MODEL_FIELD_TOLERANCE_T and inclination <= MODEL_INCLINATION_TOLERANCE_DEG
        size = float(size)
        out.append(ElectronicState(state, sensor.used_in_state(state), size, size / total, c_h,
                                   c_deg, c_fraction, field, inclination, ok,
                                   float(bound[k] - item_bound[k] + steel[k]),
                                   None if compensated is None else unknown_left))
    return tuple(out)


def _steel_sizes(plan, sensor, site):
    """(K,) [T] a bound on the size of the steel's induced field a sensor sees in each state
    (||M||_2 |F| over the bands, the triangle inequality), zeros without steel. It is of
    unknown direction here: it turns with the heading."""
    from .budget import adjusting_vertical_t
    from .budget.steel import seen_steel, steel_parts_at

    n_k = len(plan.state_names)
    parts = steel_parts_at(plan, sensor.position_m[None, :])
    if parts is None:
        return np.zeros(n_k)
    z_adj = adjusting_vertical_t(plan, site)
    out = np.zeros(n_k)
    for k in range(n_k):
        seen = seen_steel(plan, sensor, parts, k, z_adj)
        norm = (np.linalg.norm(seen.matrix[0], ord=2)
                + sum(np.linalg.norm(g, ord=2) for g in seen.matrix_generators[0]))
        out[k] = norm * site.total_t + np.linalg.norm(seen.fixed[0]) + np.linalg.norm(
            seen.fixed_generators[0], axis=-1).sum()
    return out


def _compensated_with_steel(plan, sensor, site, k, base, switched, reversing, bound):
    """The deviation current compensation leaves in state k with steel items [deg]: the
    wiring's residual (vessel-fixed, its switching open) and the steel as the sensor sees it,
    over every heading, attitude, switching and band (:mod:`deviation.physics.turning`)."""
    from .budget import adjusting_vertical_t
    from .budget.steel import seen_steel, steel_parts_at
    from .physics import turning

    parts = steel_parts_at(plan, sensor.position_m[None, :])
    assert parts is not None        # called only for a plan with steel
    seen = seen_steel(plan, sensor, parts, k, adjusting_vertical_t(plan, site))
    half = np.where(reversing[:, None], 0.0, 0.5) * switched
    gens = np.where(reversing[:, None], switched, half)
    problem = turning.Turning.of((base + half.sum(axis=0) + seen.fixed[0])[None], gens[None],
                                 seen.matrix, seen.matrix_generators, [bound],
                                 seen.fixed_generators)
    worst = turning.worst_deviation(problem, site.horizontal_t, site.vertical_t,
                                    sensor.max_heel_deg, sensor.max_pitch_deg)
    return float(worst.bound_deg[0])


def grade_of(result, states) -> Grade | None:
    """The grade of a vector sensor from its check result and its electronic states.

    Within as installed when the check holds it within its budget in every state it is used
    in; else within compensated when the figure current compensation leaves is within the
    budget in every used state; else over. No borrowed thresholds: the only limit is the
    sensor's own budget.
    """
    used = [s for s in states if s.used] or list(states)
    if not used:
        return None
    worst = result.worst
    loudest = max(used, key=lambda s: s.interference_fraction)
    compensated = [s for s in used if s.compensated_deg is not None]
    after = max(compensated, key=lambda s: s.compensated_deg) if compensated else None
    budget = result.sensor.budget
    if result.within_budget:
        standing = Standing.WITHIN
    elif after is not None and after.compensated_deg <= budget.value:
        standing = Standing.WITHIN_COMPENSATED
    else:
        standing = Standing.OVER
    return Grade(standing, worst.held, worst.state,
                 None if after is None else float(after.compensated_deg),
                 None if after is None else after.state, float(loudest.interference_fraction),
                 loudest.state)


def electronic_sensor(analysis, result) -> ElectronicSensor:
    """Every electronic-sensor figure of one SensorResult of a checked plan."""
    plan, site = analysis.plan, analysis.site
    sensor = result.sensor
    rows = per_ampere_rows(plan, result, site)
    if sensor.kind == TOTAL_FIELD_KIND:
        return ElectronicSensor(sensor, rows, None, None, (), result.states)
    compensation = None
    if sensor.measured_currents:
        items = equipment_fields(plan, sensor, sensor.position_m[None, :], site.horizontal_t)
        compensation = fit_compensation(plan, sensor, result.unit_fields_t, items.oriented[0])
    states = electronic_states(plan, result, site, compensation)
    return ElectronicSensor(sensor, rows, compensation, grade_of(result, states), states,
                            result.states)


def electronic_report(analysis, sensor_name: str | None = None) -> tuple[ElectronicSensor, ...]:
    """The electronic-sensor figures of every electronic sensor of a checked plan (or one)."""
    wanted = None if sensor_name is None else analysis.plan.sensor(sensor_name)
    return tuple(electronic_sensor(analysis, r) for r in analysis.sensors
                 if r.sensor.kind in ELECTRONIC_KINDS and (wanted is None or r.sensor is wanted))


def is_acceptable(report: ElectronicSensor) -> bool:
    """Within its budget (as installed, or with the current compensation its host can learn),
    every used state within the model tolerances; a total-field magnetometer within its budget
    in every used state."""
    if report.sensor.kind == TOTAL_FIELD_KIND:
        return all(s.within_budget for s in report.state_results if s.used)
    return (report.grade is None or report.grade.standing is not Standing.OVER) and all(
        s.model_ok for s in report.states if s.used)


__all__ = ["AxesError", "Compensation", "ElectronicSensor", "ElectronicState", "Grade",
           "PerAmpere", "circuit_fields_t", "electronic_report", "electronic_sensor",
           "electronic_states", "fit_compensation", "grade_of", "Standing",
           "is_acceptable", "measured_matrix", "parse_axes", "per_ampere_rows", "sensor_axes"]
