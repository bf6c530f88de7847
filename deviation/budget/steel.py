"""Steel items in the budget: their induced field at points, as a matrix of the Earth's field,
and what a sensor sees of it in each state, absolute or after adjustment.

An item's field at a sensor is b = M F_v (:func:`deviation.physics.induced.field_matrix`), M
linear in its three principal polarisabilities alpha, which the plan knows only within a band
(:func:`deviation.physics.induced.polarisability_band`): M = centre + sum_j t_j G_j with t_j in
[-1, 1]. Every figure takes the worst t over the band (:mod:`deviation.physics.turning`).

Adjustment. A compass adjusted (or an electronic compass calibrated) in its reference state at
the adjusting site keeps, in another state and at another place, the residual

    b_res = (P_k - P_ref + Z_adj N_ref[:, z]) + (M_k - Q(M_ref)) F_v,

in the vessel frame (z up, Z positive down), N = M less (lambda - 1) in its zz entry
(:func:`fixed_by_magnets`): the magnets (a calibration's offset) cancel the vessel-fixed field of
the reference state at the adjusting site, which holds the induced part M_ref F_v averaged over
headings, -Z_adj M_ref[:, z] (coefficients B and C there), all but the vertical force lambda Z the
heeling magnet is set to leave; the quadrantal
correctors (the calibration's soft-iron matrix) cancel Q(M_ref), the part of the horizontal
block of M_ref that turns the needle at level: its traceless symmetric part (coefficients D and
E) and its antisymmetric part (A). Left are the horizontal block's mean (lambda, which scales the
directive force but turns nothing), the vertical column (c, f, k) and row (g, h). So at the
adjusting site, level, in the reference state, the residual is zero; elsewhere the induced B and
C come back as c (Z - Z_adj) (NGA Pub. 226, ch. III: the induced part of B changes with the
magnetic latitude, the permanent part does not). A total-field magnetometer's compensation
(the Tolles-Lawson model) fits the induced terms themselves, so it keeps M_k - M_ref at every
place.
"""

from __future__ import annotations

import functools
import weakref
from dataclasses import dataclass

import numpy as np

from ..physics import induced

#: A point closer than this to a steel item's surface is not evaluated (a sensor's housing cannot
#: be nearer; common practice, no source) [m]; the same clearance the reader refuses a sensor in.
CLEARANCE_M = 0.005


@dataclass(frozen=True)
class SteelParts:
    """The plan's steel items at P points.

    centre : (P, N, 3, 3) each item's field matrix at the middle of its band (b = M F_v)
    generators : (P, N, 3, 3, 3) the half-range of each of its three principal polarisabilities
        (M = centre + sum_j t_j generators[..., j, :, :], t_j in [-1, 1])
    exact : (N,) bool, the band is exact at each permeability (spheres and ellipsoids); else its
        ends are proven bounds (boxes, cylinders) or a stated model (a hollow item's low end)
    low_is_bound : (N,) bool
    inside : (P,) bool, the point lies inside an item or within CLEARANCE_M of it (no figure)
    """

    centre: np.ndarray
    generators: np.ndarray
    exact: np.ndarray
    low_is_bound: np.ndarray
    inside: np.ndarray

    def present(self, plan, state):
        """(N,) float, 1 for the items present in ``state``."""
        return np.array([float(item.present_in(state)) for item in plan.steel])

    def one(self, i):
        """The parts at point ``i`` alone (P = 1)."""
        return SteelParts(self.centre[i:i + 1], self.generators[i:i + 1], self.exact,
                          self.low_is_bound, self.inside[i:i + 1])


@functools.lru_cache(maxsize=256)
def _band(shape, sizes, mu_low, mu_high, wall):
    return induced.polarisability_band(shape, np.array(sizes), mu_low, mu_high, wall)


def band_of(item) -> induced.PolarisabilityBand:
    """The item's principal polarisabilities over its permeability band [m^3] (cached)."""
    return _band(item.shape, tuple(float(v) for v in item.sizes_m), float(item.mu_low),
                 float(item.mu_high), None if item.wall_m is None else float(item.wall_m))


def _tensor(item, points_body):
    """The body's exterior tensor at points outside it; a point where the cylinder's quadrature
    cannot reach its stated accuracy is returned as NaN (treated as inside)."""
    try:
        return induced.body_tensor(item.shape, item.sizes_m, points_body)
    except ValueError:
        out = np.full(points_body.shape[:-1] + (3, 3), np.nan)
        for i, p in enumerate(points_body):
            try:
                out[i] = induced.body_tensor(item.shape, item.sizes_m, p[None])[0]
            except ValueError:
                pass
        return out


def steel_parts(plan, points_m) -> SteelParts:
    """Every steel item of the plan at P points (see :class:`SteelParts`).

    Notes
    -----
    :math:`M = R\\,T(p)\\,\\mathrm{diag}(\\alpha/V)\\,R^T = \\sum_j (\\alpha_j/V)(RTe_j)(Re_j)^T`,
    T the body's exterior tensor (exact for spheres and ellipsoids; the uniformly magnetised
    prism or cylinder otherwise), so each principal polarisability enters linearly.
    """
    points = np.asarray(points_m, dtype=float).reshape(-1, 3)
    n_p, n_i = len(points), len(plan.steel)
    centre = np.zeros((n_p, n_i, 3, 3))
    generators = np.zeros((n_p, n_i, 3, 3, 3))
    inside = np.zeros(n_p, dtype=bool)
    exact = np.zeros(n_i, dtype=bool)
    low_bound = np.zeros(n_i, dtype=bool)
    for i, item in enumerate(plan.steel):
        band = band_of(item)
        exact[i], low_bound[i] = band.exact_shape, band.low_is_bound
        body = induced.body_points(item.position_m, item.rotation, points)
        near = induced.distance_outside_m(item.shape, item.sizes_m, body) <= CLEARANCE_M
        tensor = np.zeros((n_p, 3, 3))
        if np.any(~near):
            tensor[~near] = _tensor(item, body[~near])
        bad = near | np.any(~np.isfinite(tensor), axis=(1, 2))
        inside |= bad
        tensor[bad] = 0.0
        volume = induced.body_volume_m3(item.shape, item.sizes_m)
        rot = item.rotation
        # (P, j, 3, 3): column j of T turned into the vessel frame, times axis j's direction.
        unit = np.einsum("ab,pbj,cj->pjac", rot, tensor, rot) / volume
        middle = (band.low_m3 + band.high_m3) / 2.0
        half = (band.high_m3 - band.low_m3) / 2.0
        centre[:, i] = np.einsum("j,pjac->pac", middle, unit)
        generators[:, i] = unit * half[None, :, None, None]
    return SteelParts(centre, generators, exact, low_bound, inside)


_AT_SENSOR: weakref.WeakKeyDictionary = weakref.WeakKeyDictionary()


def steel_parts_at(plan, points_m) -> SteelParts | None:
    """:func:`steel_parts`, or None for a plan without steel; remembered per plan for a few
    points (a sensor's own position is asked for again by the advice and the card)."""
    if not plan.steel:
        return None
    points = np.ascontiguousarray(np.asarray(points_m, dtype=float).reshape(-1, 3))
    if len(points) > 8:
        return steel_parts(plan, points)
    remembered = _AT_SENSOR.setdefault(plan, {})
    key = points.tobytes()
    if key not in remembered:
        remembered[key] = steel_parts(plan, points)
    return remembered[key]


def removed_by_correctors(matrix):
    """Q(M): the part of M the quadrantal correctors or a soft-iron calibration take out, the
    horizontal block less its mean (..., 3, 3) (see the module notes)."""
    m = np.asarray(matrix, dtype=float)
    out = np.zeros_like(m)
    mean = (m[..., 0, 0] + m[..., 1, 1]) / 2.0
    out[..., :2, :2] = m[..., :2, :2]
    out[..., 0, 0] -= mean
    out[..., 1, 1] -= mean
    return out


def fixed_by_magnets(matrix):
    """(..., 3) the column that, times Z at the adjusting site, is the induced field the magnets
    (and a calibration's offset) take out: M[:, z] less lambda - 1 in its vertical component.

    At level the induced field averaged over headings is -Z M[:, z] (vessel frame, z up): its
    horizontal part is the induced B and C, cancelled whole by the fore-and-aft and athwartship
    magnets. The heeling magnet is set, with a heeling adjuster, to leave the vertical force
    lambda Z (NGA Pub. 226, the heeling adjuster; from memory, chapter not checked), so of the
    induced vertical field it takes out all but (lambda - 1) Z: then (e - k) Z - R = 0 at the
    adjusting site and the heeling error there comes only from the rod g, which no fixed magnet
    can cancel.
    """
    m = np.asarray(matrix, dtype=float)
    column = m[..., :, 2].copy()
    column[..., 2] -= (m[..., 0, 0] + m[..., 1, 1]) / 2.0
    return column


@dataclass(frozen=True)
class SeenSteel:
    """What a sensor sees of the steel in one state at P points: b = fixed + M F_v, linear in
    the items' bands, t in [-1, 1] per generator.

    matrix : (P, 3, 3); matrix_generators : (P, 3N, 3, 3)
    fixed : (P, 3) [T] the vessel-fixed part the adjustment leaves (zero when not adjusted)
    fixed_generators : (P, 3N, 3) [T] its part that moves with each generator
    """

    matrix: np.ndarray
    matrix_generators: np.ndarray
    fixed: np.ndarray
    fixed_generators: np.ndarray

    @property
    def empty(self) -> bool:
        return not (np.any(self.matrix) or np.any(self.matrix_generators)
                    or np.any(self.fixed) or np.any(self.fixed_generators))


def seen_steel(plan, sensor, parts: SteelParts, state_index: int, adjusting_vertical_t,
               *, adjusted=None, items=None) -> SeenSteel:
    """The steel a sensor sees in one state, absolute or as the residual after adjustment.

    Parameters
    ----------
    plan, sensor
    parts : SteelParts
    state_index : int
    adjusting_vertical_t : float [T]
        Z (down positive) at the site where the sensor is adjusted.
    adjusted : bool, optional
        Take the residual after adjustment in the sensor's reference state (default: when it
        has one).
    items : sequence of int, optional
        Only these items (default every one).
    """
    state = plan.state_names[state_index]
    present = parts.present(plan, state)
    if items is not None:
        keep = np.zeros(len(present))
        keep[list(items)] = 1.0
        present = present * keep
    else:
        keep = np.ones(len(present))
    centre, gens = parts.centre, parts.generators                     # (P, N, ...)
    n_p, n_i = centre.shape[:2]
    matrix = np.einsum("n,pnab->pab", present, centre)
    mgens = (gens * present[None, :, None, None, None]).reshape(n_p, 3 * n_i, 3, 3)
    fixed = np.zeros((n_p, 3))
    fgens = np.zeros((n_p, 3 * n_i, 3))
    if adjusted is None:
        adjusted = sensor.reference_state is not None
    if adjusted and sensor.reference_state is not None:
        ref = parts.present(plan, sensor.reference_state) * keep
        if sensor.budget.degrees:
            matrix = matrix - np.einsum("n,pnab->pab", ref, removed_by_correctors(centre))
            mgens = mgens - (removed_by_correctors(gens) * ref[None, :, None, None, None]
                             ).reshape(n_p, 3 * n_i, 3, 3)
            z_adj = float(adjusting_vertical_t)
            fixed = z_adj * np.einsum("n,pna->pa", ref, fixed_by_magnets(centre))
            fgens = (z_adj * fixed_by_magnets(gens) * ref[None, :, None, None]
                     ).reshape(n_p, 3 * n_i, 3)
        else:
            matrix = matrix - np.einsum("n,pnab->pab", ref, centre)
            mgens = mgens - (gens * ref[None, :, None, None, None]).reshape(n_p, 3 * n_i, 3, 3)
    return SeenSteel(matrix, mgens, fixed, fgens)


def lambda_range(plan, parts: SteelParts, state_index: int):
    """(P,) the least and largest lambda = 1 + (a + e)/2 over the bands, absolute (Poisson's
    rods a, e: the horizontal block's mean; NGA Pub. 226, ch. III)."""
    present = parts.present(plan, plan.state_names[state_index])
    mean = (parts.centre[..., 0, 0] + parts.centre[..., 1, 1]) / 2.0            # (P, N)
    spread = np.abs(parts.generators[..., 0, 0] + parts.generators[..., 1, 1]).sum(-1) / 2.0
    low = 1.0 + ((mean - spread) * present).sum(axis=-1)
    high = 1.0 + ((mean + spread) * present).sum(axis=-1)
    return low, high

