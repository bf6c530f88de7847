"""What each run contributes at points, per ampere: the field of known direction, the spread of
the parts that may turn about the run's axis (a pair's lie, a twisted run's untwisted ends), and
the bounds of unknown direction."""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..constants import MU0_OVER_4PI, TWISTED_FLOOR_FRACTION
from ..physics.field import (
    point_segment_distance,
    segment_field_by_group,
)
from ..physics.routing import as_paired, route_runs, turning_parts, turning_run
from ..physics.worst_case import worst_combination

#: The turns [deg] at which each lie of a pair puts its return (from "left of travel" towards
#: "above"); a lie not known may take any turn.
KNOWN_LIE_TURNS_DEG = {"side by side": (0.0, 180.0), "one above the other": (90.0, 270.0)}


def nearest_by_run(conductors, n_runs, distance):
    """(P, R) [m] each run's nearest conductor, from the distances (P, S) [m] of each point to
    each routed segment (:func:`deviation.physics.field.point_segment_distance`); infinite for
    a run without segments."""
    distance_to = np.full((len(distance), n_runs), np.inf)
    if len(conductors):
        firsts = np.flatnonzero(np.r_[True, np.diff(conductors.run_index) != 0])
        distance_to[:, conductors.run_index[firsts]] = np.minimum.reduceat(distance, firsts,
                                                                           axis=1)
    return distance_to


def run_fields_at(conductors, n_runs, points_m, *, nearest=True, inside=None, nearest_m=None):
    """Field of each run at unit current [T/A], shape (P, R, 3), and nearest distances (P, R) [m]
    (infinite when ``nearest`` is False: the distances cost as much as the fields).

    ``inside``, a (P,) bool array if given, is set where a point lies inside a conductor.
    ``nearest_m`` (P, R) [m], if given, are the nearest distances already found
    (:func:`nearest_by_run`), returned as they are.
    """
    points = np.asarray(points_m, dtype=float).reshape(-1, 3)
    unit, hit = segment_field_by_group(conductors.start_m, conductors.end_m, conductors.sign,
                                       conductors.run_index, n_runs, points,
                                       radius_m=conductors.radius_m)
    if inside is not None:
        inside |= hit.any(axis=1)
    if nearest_m is not None:
        return unit, nearest_m
    if len(conductors) and nearest:
        distance = point_segment_distance(conductors.start_m, conductors.end_m, points)
        return unit, nearest_by_run(conductors, n_runs, distance)
    return unit, np.full((len(points), n_runs), np.inf)


def fields_routed_in_turn(geometries, points_m):
    """Each run's field at unit current [T/A], (P, R, 3), for runs not routed yet: the same
    numbers as ``run_fields_at(route_runs(geometries), len(geometries), points_m)[0]``, without
    holding every run's segments at once where the job is large.

    The runs are routed one by one. Once those routed hold enough segment-point pairs for the
    compiled kernel (so the whole job would take it), their field is taken and their segments
    let go; the compiled kernel sums each run's segments on their own, so a run's field does
    not depend on the runs taken with it. A job too small for the kernel is taken whole, as
    before.
    """
    from ..physics.field import COMPILED_MIN_PAIRS, auto_compiled

    points = np.asarray(points_m, dtype=float).reshape(-1, 3)
    field = np.zeros((len(points), len(geometries), 3))
    held: list = []
    first, segments = 0, 0

    def take(upto, backend):
        routed = _joined(held)
        field[:, first:upto] = segment_field_by_group(
            routed.start_m, routed.end_m, routed.sign, routed.run_index, upto - first, points,
            radius_m=routed.radius_m, backend=backend)[0]

    for i, geometry in enumerate(geometries):
        held.append(route_runs([geometry]))
        segments += len(held[-1])
        if len(points) and auto_compiled(segments * len(points), COMPILED_MIN_PAIRS):
            take(i + 1, "compiled")
            held, first, segments = [], i + 1, 0
    if held:
        if first == 0:                       # never large enough: the whole job, as before
            routed = _joined(held)
            return run_fields_at(routed, len(geometries), points, nearest=False)[0]
        take(len(geometries), "compiled")
    return field


def _joined(pieces):
    """One Conductors of several routed single runs, numbered in order."""
    from ..physics.routing import Conductors

    return Conductors(np.concatenate([c.start_m for c in pieces]).reshape(-1, 3),
                      np.concatenate([c.end_m for c in pieces]).reshape(-1, 3),
                      np.concatenate([c.sign for c in pieces]),
                      np.concatenate([np.full(len(c), k) for k, c in enumerate(pieces)]),
                      np.concatenate([c.radius_m for c in pieces]),
                      [name for c in pieces for name in c.run_names])


#: Harmonics of a turning part's field whose ellipses the exact worst-case search sees (each as
#: the four generators of its circumscribed octagon): one for a pair of unknown lie and one for
#: each untwisted end of a twisted run (the circle cover, taken where smaller, holds the rest).
#: Higher harmonics are counted by size (see :func:`turn_cover`).
PAIR_HARMONICS = 1
END_HARMONICS = 1
#: Generators of a run's spread: four per harmonic seen.
SPREAD_GENERATORS = 8
#: Turns sampled for a part of unknown turn, tried in this order at each point until the
#: certified remainder (see :func:`turn_cover`) is within TURN_REMAINDER_SHARE of the part's
#: spread, the last taken whatever it leaves.
TURN_SAMPLES = (16, 64, 256)
TURN_REMAINDER_SHARE = 0.01
#: Fractions of the widest strip of analyticity tried for the remainder (the smallest bound
#: is taken; each is rigorous).
_STRIP_FRACTIONS = (0.5, 0.75, 0.9)
#: Per ampere [T/A]: what a part of unknown turn counts where the point lies within its reach
#: (closer to the supply than the return's offset, where a turn may bring the return onto it).
#: Large enough to overwhelm any sensor at any current a plan carries.
WITHIN_REACH_T_PER_A = 1.0
#: Most spread generators given to the exact worst-case search; the smaller ones beyond are
#: counted as bounds of unknown direction (never less than the exact figure, a little more).
MAX_EXACT_GENERATORS_LEVEL = 64
MAX_EXACT_GENERATORS_ATTITUDE = 24


@dataclass(frozen=True)
class RunParts:
    """What the budget needs of each run at P points, per ampere of the run's current.

    unit_t : (P, R, 3) [T/A]
        The field of known direction (for a run with turning parts: the centre of their turns).
    spread_t : (P, R, SPREAD_GENERATORS, 3) [T/A]
        How the field may move as the turning parts turn (a pair's lie; each untwisted end of a
        twisted run on its own), as generators g of a zonotope: the field is
        unit + sum_j s_j g_j + (a vector no longer than bound_t) for some s_j in [-1, 1]
        (zeros where a run has no such freedom).
    bound_t : (P, R) [T/A]
        The part of unknown direction: what the turning parts' higher harmonics and certified
        remainder add (:func:`turn_cover`), and what a twisted run's floor adds
        (:func:`twisted_floor`).
    nearest_m : (P, R) [m]
        Infinite where not asked for.
    inside : (P,) bool
        The point lies inside a conductor of the plan as routed, or within reach of a turning
        return (its figures are not valid).
    """

    unit_t: np.ndarray
    spread_t: np.ndarray
    bound_t: np.ndarray
    nearest_m: np.ndarray
    inside: np.ndarray | None = None


# The turn of a part as a periodic function ------------------------------------------------------

def _sigma(first, second):
    """Largest singular value of the 3x2 matrices [first second], (...,)."""
    aa = np.einsum("...i,...i->...", first, first)
    bb = np.einsum("...i,...i->...", second, second)
    ab = np.einsum("...i,...i->...", first, second)
    half = (aa + bb) / 2
    return np.sqrt(half + np.sqrt(np.maximum(((aa - bb) / 2) ** 2 + ab ** 2, 0.0)))


def _inverse_cube_integral(start, end, points):
    """(P, S) the integral of dl / |x - r(l)|^3 along each segment, for each point [1/m^2].

    Written without cancellation: with u the coordinate along the segment from the foot of the
    perpendicular (length h), the integral from u1 to u2 of the same sign is
    (u2^2 - u1^2) / ((u2 r1 + u1 r2) r1 r2), r = sqrt(h^2 + u^2); an interval across the foot is
    split there. Zero-length segments give 0.
    """
    axis = end - start
    length = np.linalg.norm(axis, axis=1)
    unit = np.where(length[:, None] > 0, axis / np.maximum(length, 1e-300)[:, None], 0.0)
    rel = points[:, None, :] - start[None, :, :]                             # (P, S, 3)
    along = np.einsum("psc,sc->ps", rel, unit)
    h2 = np.maximum(np.einsum("psc,psc->ps", rel, rel) - along ** 2, 0.0)
    u1, u2 = -along, length[None, :] - along                                 # u1 <= u2

    def same_sign(lo, hi):                                                   # 0 <= lo <= hi
        r1, r2 = np.sqrt(h2 + lo ** 2), np.sqrt(h2 + hi ** 2)
        with np.errstate(divide="ignore", invalid="ignore"):
            value = (hi ** 2 - lo ** 2) / ((hi * r1 + lo * r2) * r1 * r2)
        return np.where(hi > lo, value, 0.0)

    across = (u1 < 0) & (u2 > 0)
    value = np.where(u1 >= 0, same_sign(np.maximum(u1, 0), np.maximum(u2, 0)),
                     same_sign(np.maximum(-u2, 0), np.maximum(-u1, 0)))
    value = np.where(across, same_sign(0.0 * u1, np.maximum(-u1, 0))
                     + same_sign(0.0 * u2, np.maximum(u2, 0)), value)
    return np.where(length[None, :] > 0, value, 0.0)


@dataclass(frozen=True)
class _Turning:
    """Every turning part's segments, flattened: part (S,) which part each belongs to."""

    part: np.ndarray
    base_start: np.ndarray
    base_end: np.ndarray
    turn_start: np.ndarray
    turn_end: np.ndarray
    sign: np.ndarray
    n_parts: int

    @classmethod
    def of(cls, parts):
        if not parts:
            empty = np.zeros((0, 3))
            return cls(np.zeros(0, dtype=int), empty, empty, np.zeros((0, 2, 3)),
                       np.zeros((0, 2, 3)), np.zeros(0), 0)
        return cls(np.concatenate([np.full(len(p), i) for i, p in enumerate(parts)]),
                   np.vstack([p.base_start_m for p in parts]),
                   np.vstack([p.base_end_m for p in parts]),
                   np.concatenate([p.turn_start_m for p in parts]),
                   np.concatenate([p.turn_end_m for p in parts]),
                   np.concatenate([p.sign for p in parts]), len(parts))

    def subset(self, which):
        keep = np.isin(self.part, which)
        renumber = np.full(self.n_parts, -1)
        renumber[which] = np.arange(len(which))
        return _Turning(renumber[self.part[keep]], self.base_start[keep], self.base_end[keep],
                        self.turn_start[keep], self.turn_end[keep], self.sign[keep], len(which))

    def fields(self, points, angles_rad):
        """(P, n_parts, T, 3) [T/A] each part's field at each turn of ``angles_rad`` (T,)."""
        n_t = len(angles_rad)
        c, s = np.cos(angles_rad), np.sin(angles_rad)                     # (T,)
        # Segments ordered by (part, turn) so each group is contiguous.
        order = np.argsort(self.part, kind="stable")
        part = self.part[order]
        start = (self.base_start[order][:, None]
                 + c[None, :, None] * self.turn_start[order][:, None, 0]
                 + s[None, :, None] * self.turn_start[order][:, None, 1])    # (S, T, 3)
        end = (self.base_end[order][:, None]
               + c[None, :, None] * self.turn_end[order][:, None, 0]
               + s[None, :, None] * self.turn_end[order][:, None, 1])
        group = part[:, None] * n_t + np.arange(n_t)[None, :]                # (S, T)
        rank = np.argsort(group.reshape(-1), kind="stable")
        weight = np.repeat(self.sign[order], n_t)
        field, _ = segment_field_by_group(start.reshape(-1, 3)[rank], end.reshape(-1, 3)[rank],
                                          weight[rank], group.reshape(-1)[rank],
                                          self.n_parts * n_t, points)
        return field.reshape(len(points), self.n_parts, n_t, 3)

    def strip_bound(self, points, fractions=_STRIP_FRACTIONS):
        """Per point and part: the strip half-widths tau (P, n_parts, F) [rad] and bounds K
        (P, n_parts, F) [T/A] of the part's turning field on |Im a| = tau (see
        :func:`turn_cover`); K is infinite where no strip exists."""
        a = np.maximum(_sigma(self.turn_start[:, 0], self.turn_start[:, 1]),
                       _sigma(self.turn_end[:, 0], self.turn_end[:, 1]))          # (S,)
        a_step = _sigma(self.turn_end[:, 0] - self.turn_start[:, 0],
                        self.turn_end[:, 1] - self.turn_start[:, 1])              # (S,)
        rho = point_segment_distance(self.base_start, self.base_end, points)      # (P, S)
        j3 = _inverse_cube_integral(self.base_start, self.base_end, points)       # (P, S)
        with np.errstate(divide="ignore"):
            reach = np.where(a[None, :] > 0, np.log(rho / np.where(a > 0, a, 1.0)[None, :]),
                             np.inf)                                              # (P, S)
        firsts = np.flatnonzero(np.r_[True, np.diff(self.part) != 0])
        present = self.part[firsts]
        widest = np.full((len(points), self.n_parts), np.inf)
        widest[:, present] = np.minimum.reduceat(reach, firsts, axis=1)
        n_f = len(fractions)
        tau = widest[..., None] * np.asarray(fractions)[None, None, :]             # (P, n, F)
        bound = np.zeros((len(points), self.n_parts, n_f))
        moving = (a > 0) | (a_step > 0)
        kappa = a[None, :] / rho
        for f in range(n_f):
            t = tau[:, self.part, f]                                              # (P, S)
            with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
                grow = np.exp(t)
                phi = (1 - kappa * grow) * (1 - kappa / grow)
                c2 = np.sqrt((grow * grow + 1 / (grow * grow)) / 2)               # cosh 2t
                psi = 1 + kappa * c2
                root = phi * np.sqrt(phi)
                term = (a_step * c2 * psi / (root * rho ** 2)
                        + a * c2 * (1 + 3 * psi ** 2 / phi) / root
                        * (j3 + a_step * c2 / rho ** 3))
            term = np.where(moving, term, 0.0)
            term = np.where(np.isfinite(t) & (phi > 0), term, np.inf)
            bound[:, present, f] = np.add.reduceat(term, firsts, axis=1)
        bound *= MU0_OVER_4PI
        bound[~(widest > 0)] = np.inf
        return tau, bound


def _remainder_factor(tau, n_turns):
    """sup |f - (DFT series of f up to harmonic N/2 - 1)| / K for a period analytic in the strip
    |Im a| < tau with |f| <= K there, from N samples (see :func:`turn_cover`)."""
    half = n_turns // 2
    with np.errstate(over="ignore", invalid="ignore", divide="ignore"):
        q = np.exp(-np.asarray(tau, dtype=float))
        q_half = q ** half
        q_n = q_half * q_half
        # sum over n = 1..N/2-1 of q^(N+n) + q^(N-n), in closed form
        aliases = (q_n + q_half) * q * (1 - q_half / q) / (1 - q)
        factor = 2 * (q_n + aliases) / (1 - q_n) + 2 * q_half / (1 - q)
    return np.where(tau > 0, factor, np.inf)


def _octagon(u, w):
    """(..., 4, 3) generators of the octagon circumscribing the ellipse u cos b + w sin b."""
    t = math.tan(math.pi / 8)
    return np.stack([t * (math.cos(j * math.pi / 4) * u + math.sin(j * math.pi / 4) * w)
                     for j in range(4)], axis=-2)


def turn_cover(samples, tau, strip, harmonics, circle=True):
    r"""A zonotope and a bound that hold every turn of a part, from equally spaced samples.

    Parameters
    ----------
    samples : (..., N, 3) [T/A]
        The part's field at the turns 2 pi k / N, k = 0..N-1 (N even).
    tau, strip : (..., F)
        Strip half-widths [rad] and the bound K of the part's turning field on them [T/A]
        (:meth:`_Turning.strip_bound`).
    harmonics : int
        Harmonics M whose ellipses become generators.
    circle : bool
        Also try the circle that holds the sampled curve (:func:`_circle_cover`) where the
        higher harmonics are more than CIRCLE_TRIAL_SHARE of the first, and keep it where it
        is smaller.

    Returns
    -------
    centre : (..., 3), generators : (..., 4 M, 3), bound : (...,), remainder : (...,),
    spread : (...,)
        Every turn's field is centre + sum_j s_j g_j + e for some s_j in [-1, 1] and |e| <= bound;
        remainder is the certified part of bound (the rest is the harmonics above M); spread the
        sum of every sampled harmonic's largest size.

    Notes
    -----
    *The field as a function of the turn.* A part's segments run between points
    :math:`P + W(a)`, :math:`W(a) = \cos a\,A + \sin a\,B` (:class:`~deviation.physics.routing.
    TurningPart`), so by Biot-Savart its field is

    .. math:: f(a) = \frac{\mu_0}{4\pi}\sum_{seg}\int_0^1
              (P_\lambda + W_\lambda) \times \frac{R}{(R\cdot R)^{3/2}}\,d\lambda,
              \qquad R = x - P(\lambda) - W(\lambda, a),

    a smooth 2 pi-periodic function. For an infinite straight pair it is exact in closed form:
    with the observer at complex position z about the supply and the return at :math:`s e^{ia}`,
    :math:`B_x - iB_y = \frac{\mu_0 I}{2\pi}\,(\frac{1}{z - s e^{ia}} - \frac{1}{z}) =
    \frac{\mu_0 I}{2\pi z}\sum_{n \ge 1} (s e^{ia}/z)^n`: harmonic n has amplitude
    :math:`\frac{\mu_0 I}{2\pi\rho}(s/\rho)^n` at distance rho. Close in they do not fade: at
    1.5 spacings the second is 2/3 of the first, the third 4/9. Four sampled turns and the
    octagon of the first harmonic's ellipse therefore miss up to half of the worst turn there,
    and the ratio of harmonics, not the distance alone, decides how many samples are needed.

    *Analytic in a strip.* Put :math:`a = t + i\tau`. Then
    :math:`W = \cosh\tau\,(\cos t A + \sin t B) + i \sinh\tau\,(-\sin t A + \cos t B)`, so with
    a = the largest singular value of [A B] on the segment, d = |x - P| >= rho:
    :math:`\mathrm{Re}(R\cdot R) = |\mathrm{Re}\,R|^2 - |\mathrm{Im}\,R|^2 \ge
    (d - a\cosh\tau)^2 - a^2\sinh^2\tau = (d - a e^{\tau})(d - a e^{-\tau})`, positive while
    :math:`\tau < \ln(\rho/a)`. The integrand is then analytic (principal branch of the power),
    and so is f, in the strip :math:`|\mathrm{Im}\,a| < \tau^* = \min_{seg}\ln(\rho/a)`.

    *A bound on the strip.* Subtracting a constant changes no harmonic but the zeroth; take
    :math:`g(a) = f(a) - f|_{W = 0}` and write it as :math:`\int_0^1 \partial_\sigma F(\sigma W)
    d\sigma`. With :math:`\kappa = a/\rho`, :math:`\varphi = (1 - \kappa e^\tau)(1 -
    \kappa e^{-\tau})`, :math:`\psi = 1 + \kappa\sqrt{\cosh 2\tau}`, :math:`|R\cdot R| \ge
    \varphi d^2`, :math:`|R| \le \psi d`, :math:`|W| \le a\sqrt{\cosh 2\tau}` (Hermitian norms;
    :math:`|u\times v| \le |u||v|` and :math:`|u\cdot v| \le |u||v|` hold for complex vectors),
    so on :math:`|\mathrm{Im}\,a| = \tau`

    .. math:: |g| \le K = \frac{\mu_0}{4\pi}\sum_{seg}\Big[\frac{a' c\,\psi}{\varphi^{3/2}\rho^2}
              + \frac{a c\,(1 + 3\psi^2/\varphi)}{\varphi^{3/2}}\Big(J_3 + \frac{a' c}{\rho^3}
              \Big)\Big],\quad c = \sqrt{\cosh 2\tau},

    a' the largest singular value of the change of [A B] along the segment and
    :math:`J_3 = \int dl/d^3` along it (closed form).

    *Harmonics and samples.* Shifting the contour of :math:`a_n = \frac{1}{2\pi}\int g(t)
    e^{-int}dt` to :math:`\mathrm{Im}\,t = \mp\tau` gives :math:`|a_n| \le K e^{-|n|\tau}`
    (Trefethen & Weideman 2014, section 3). The N-point DFT coefficient is
    :math:`\hat a_n = \sum_j a_{n + jN}` (aliasing), so
    :math:`f = \hat a_0 + \sum_{n=1}^{N/2-1} 2\,\mathrm{Re}(\hat a_n e^{ina}) + e(a)` with

    .. math:: |e| \le K\Big[\frac{2q^N}{1 - q^N}\Big(1 + \sum_{n=1}^{N/2-1}(q^n + q^{-n})\Big)
              + \frac{2 q^{N/2}}{1 - q}\Big],\quad q = e^{-\tau}.

    Every fraction of :math:`\tau^*` in ``_STRIP_FRACTIONS`` gives a valid bound; the smallest
    counts.

    *The cover.* Harmonic n, :math:`u\cos na + w\sin na` with :math:`u = 2\mathrm{Re}\,\hat a_n`,
    :math:`w = -2\mathrm{Im}\,\hat a_n`, runs on an ellipse, which lies inside the octagon
    :math:`\sum_{j=0}^{3}[-1, 1]\tan(\pi/8)(\cos(j\pi/4)u + \sin(j\pi/4)w)` (the regular octagon
    circumscribing the unit circle mapped by [u w]), at most :math:`1/\cos(\pi/8) = 1.082` times
    farther out in any direction. Harmonics 1..M become those generators; harmonics M+1..N/2-1
    count by their largest size (the largest singular value of [u w]) and e by its bound. The
    sum of sets holds f(a) for every a, so the worst over it is never less than the worst turn.

    References
    ----------
    L. N. Trefethen and J. A. C. Weideman, "The exponentially convergent trapezoidal rule",
    SIAM Review 56(3), 385-458, 2014, sections 3 and 7.
    """
    samples = np.asarray(samples, dtype=float)
    if samples.ndim == 2:                        # one part at one point
        out = turn_cover(samples[None], np.asarray(tau)[None], np.asarray(strip)[None],
                         harmonics, circle)
        return tuple(value[0] for value in out)
    n_turns = samples.shape[-2]
    cos, sin = _dft_tables(n_turns)                                         # (N/2, N)
    centre = samples.mean(axis=-2)
    u = 2 * np.matmul(cos, samples)                                         # (..., N/2-1, 3)
    w = 2 * np.matmul(sin, samples)
    size = _sigma(u, w)                                                      # (..., N/2-1)
    generators = _octagon(u[..., :harmonics, :], w[..., :harmonics, :])      # (..., M, 4, 3)
    generators = generators.reshape(generators.shape[:-3] + (4 * harmonics, 3))
    remainder = np.min(strip * _remainder_factor(tau, n_turns), axis=-1)
    bound = size[..., harmonics:].sum(axis=-1) + remainder
    if not circle:
        return centre, generators, bound, remainder, size.sum(axis=-1)
    # The other cover: the circle holding the sampled curve in the first harmonic's plane, tried
    # where the higher harmonics matter (elsewhere both covers are the first harmonic's).
    trial = size[..., 1:].sum(axis=-1) > CIRCLE_TRIAL_SHARE * size[..., 0]
    if not trial.any():
        return centre, generators, bound, remainder, size.sum(axis=-1)
    u_t, w_t, size_t = u[trial], w[trial], size[trial]
    pieces = [_circle_cover(u_t[i:i + _CURVES_PER_BLOCK], w_t[i:i + _CURVES_PER_BLOCK],
                            size_t[i:i + _CURVES_PER_BLOCK])
              for i in range(0, len(u_t), _CURVES_PER_BLOCK)]
    shift, octagon, apart = (np.concatenate(piece) for piece in zip(*pieces))
    # Keep whichever is smaller on average over directions (the mean half-width of a
    # segment [-g, g] is |g|/2, of a ball its radius).
    width = np.linalg.norm(generators[trial], axis=-1).sum(axis=-1) / 2 + bound[trial]
    width_circle = (np.linalg.norm(octagon, axis=-1).sum(axis=-1) / 2 + apart
                    + remainder[trial])
    better = np.zeros(trial.shape, dtype=bool)
    better[trial] = np.isfinite(width_circle) & (width_circle < width)
    keep = better[trial]
    centre[better] += shift[keep]
    generators[better] = 0.0
    generators[better, :4] = octagon[keep]
    bound[better] = apart[keep] + remainder[better]
    return centre, generators, bound, remainder, size.sum(axis=-1)


#: Higher harmonics, as a share of the first, above which :func:`turn_cover` also tries the
#: circle cover.
CIRCLE_TRIAL_SHARE = 0.005
#: Curves whose circle cover is found at once (each is evaluated at its J points).
_CURVES_PER_BLOCK = 4096
#: Points per period at which the sampled series is evaluated for the circle cover, per sample.
_CIRCLE_POINTS_PER_SAMPLE = 4


def _circle_cover(u, w, size):
    r"""A second cover of the series :math:`p(a) = \sum_n u_n\cos na + w_n\sin na` (about its
    mean): shift (..., 3), octagon generators (..., 4, 3) and a bound (...); infinite where the
    first harmonic has no plane.

    Notes
    -----
    Near a pair its turning field runs on a circle that the harmonics alone cover loosely: for
    an infinite pair (see :func:`turn_cover`) :math:`1/(z - s e^{ia})` is a circle through the
    inversion, of radius :math:`s/(\rho^2 - s^2)` about a centre moved
    :math:`s^2/(\rho(\rho^2 - s^2))` from the mean, while the harmonics add up to the larger
    :math:`s/(\rho(\rho - s))` in every direction. So p is evaluated at J equally spaced turns
    and written as x U + y W + o in the plane of the first harmonic (U = u_1, W = w_1, o the
    part out of it); the circle of centre (x_c, y_c), the middle of the extent of x and of y,
    and radius lambda, the largest distance of a sample from it in (x, y), holds every sample's
    in-plane part; its circumscribed octagon (generators as for a harmonic, of lambda U and
    lambda W) holds it too. Between two samples the curve stays within
    :math:`(\Delta^2/8)\sup|p''| \le (\Delta^2/8)\sum_n n^2 \sigma_n` of the chord
    (:math:`\Delta = 2\pi/J`, sigma_n the largest size of harmonic n), and the distance to a
    convex set is at most its larger value at the chord's ends; so every p(a) lies within
    :math:`\max|o| + (\Delta^2/8)\sum n^2\sigma_n` of the octagon.
    """
    n_h = u.shape[-2]
    count = max(64, _CIRCLE_POINTS_PER_SAMPLE * 2 * (n_h + 1))
    turns = 2 * np.pi * np.arange(count) / count
    order = np.arange(1, n_h + 1)
    cos, sin = np.cos(np.outer(turns, order)), np.sin(np.outer(turns, order))   # (J, H)
    curve = np.matmul(cos, u) + np.matmul(sin, w)                               # (..., J, 3)
    first, second = u[..., 0, :], w[..., 0, :]
    gram = np.stack([np.stack([np.einsum("...c,...c->...", first, first),
                               np.einsum("...c,...c->...", first, second)], -1),
                     np.stack([np.einsum("...c,...c->...", first, second),
                               np.einsum("...c,...c->...", second, second)], -1)], -2)
    det = gram[..., 0, 0] * gram[..., 1, 1] - gram[..., 0, 1] ** 2
    flat = ~(det > 1e-12 * np.maximum(gram[..., 0, 0] * gram[..., 1, 1], 1e-300))
    inverse = np.stack([np.stack([gram[..., 1, 1], -gram[..., 0, 1]], -1),
                        np.stack([-gram[..., 0, 1], gram[..., 0, 0]], -1)], -2)
    inverse = inverse / np.where(flat, 1.0, det)[..., None, None]
    along = np.matmul(curve, np.stack([first, second], -1))                     # (..., J, 2)
    xy = np.matmul(along, np.swapaxes(inverse, -1, -2))
    out = curve - xy[..., :1] * first[..., None, :] - xy[..., 1:] * second[..., None, :]
    middle = (xy.max(axis=-2) + xy.min(axis=-2)) / 2                            # (..., 2)
    radius = np.linalg.norm(xy - middle[..., None, :], axis=-1).max(axis=-1)
    step = 2 * np.pi / count
    margin = step ** 2 / 8 * (size * order ** 2).sum(axis=-1)
    apart = np.linalg.norm(out, axis=-1).max(axis=-1) + margin
    shift = middle[..., :1] * first + middle[..., 1:] * second
    octagon = _octagon(radius[..., None] * first, radius[..., None] * second)
    return shift, octagon, np.where(flat, np.inf, apart)


def _dft_tables(n_turns):
    """(N/2 - 1, N) cos(n a_k)/N and sin(n a_k)/N, n = 1..N/2-1, a_k = 2 pi k/N."""
    order = np.arange(1, n_turns // 2)[:, None]
    turns = 2 * np.pi * np.arange(n_turns)[None, :] / n_turns
    return np.cos(order * turns) / n_turns, np.sin(order * turns) / n_turns


def _known_lie(samples):
    """Centre, one generator (..., 1, 3) and zero bound of a part at exactly two turns."""
    first, second = samples[..., 0, :], samples[..., 1, :]
    return ((first + second) / 2, ((first - second) / 2)[..., None, :],
            np.zeros(samples.shape[:-2]))


#: Points whose turning parts are covered at once (the samples of every part at every turn are
#: held for them together).
_POINTS_PER_BLOCK = 2048


def _turned_part_covers(turning, points, harmonics, *, refine=True, circle=True):
    """Cover of each part of unknown turn at each point: centre (P, n, 3), generators
    (P, n, 4M, 3), bound (P, n), the field at turn 0 (P, n, 3), and within reach (P, n) bool.

    Sampled at TURN_SAMPLES[0] turns everywhere, then (``refine``) more densely at the points
    where the certified remainder exceeds TURN_REMAINDER_SHARE of the part's spread; ``circle``
    as for :func:`turn_cover`.
    """
    if len(points) > _POINTS_PER_BLOCK:          # bounded memory: each point stands alone
        blocks = [_turned_part_covers(turning, points[p0:p0 + _POINTS_PER_BLOCK], harmonics,
                                      refine=refine, circle=circle)
                  for p0 in range(0, len(points), _POINTS_PER_BLOCK)]
        return tuple(np.concatenate(pieces) for pieces in zip(*blocks))
    n_p, n = len(points), turning.n_parts
    centre = np.zeros((n_p, n, 3))
    generators = np.zeros((n_p, n, 4 * harmonics, 3))
    bound = np.zeros((n_p, n))
    at_zero = np.zeros((n_p, n, 3))
    todo = np.ones((n_p, n), dtype=bool)
    tau, strip = turning.strip_bound(points)
    levels = TURN_SAMPLES if refine else TURN_SAMPLES[:1]
    for level, n_turns in enumerate(levels):
        last = level == len(levels) - 1
        # Everything at the first level; then, part by part, only the points left to do.
        for j in ([None] if level == 0 else range(n)):
            rows = np.arange(n_p) if j is None else np.flatnonzero(todo[:, j])
            if not len(rows):
                continue
            cols = np.arange(n) if j is None else np.array([j])
            sub = turning if j is None else turning.subset(cols)
            samples = sub.fields(points[rows], 2 * np.pi * np.arange(n_turns) / n_turns)
            c, g, b, rest, spread = turn_cover(samples, tau[rows][:, cols], strip[rows][:, cols],
                                               harmonics, circle)
            ix = np.ix_(rows, cols)
            centre[ix], generators[ix], bound[ix] = c, g, b
            at_zero[ix] = samples[:, :, 0]
            todo[ix] = (not last) & np.isfinite(rest) & (rest > TURN_REMAINDER_SHARE * spread)
        if not todo.any():
            break
    reach = ~np.isfinite(bound)
    bound[reach] = WITHIN_REACH_T_PER_A
    return centre, generators, bound, at_zero, reach


def parts_of_runs(runs, points_m, conductors=None, *, nearest=True, nearest_m=None) -> RunParts:
    """:class:`RunParts` of some runs (the plan's :class:`~deviation.plan.Run` values).

    ``conductors``, if given, are the runs already routed (``plan.conductors_of``); ``nearest``
    False leaves the nearest distances out (a search over many points does not need them);
    ``nearest_m`` gives them, already found (:func:`nearest_by_run`).

    Notes
    -----
    A pair's lie and a twisted run's untwisted ends are the parts of a run that may turn about
    its axis (:func:`~deviation.physics.routing.turning_run`). A lie the plan gives puts the
    return at two turns (left or right, above or below): exactly those two fields. A lie not
    known, and each untwisted end (on its own, whatever the other end does), may take any turn:
    :func:`turn_cover` holds every one. A twisted run is then held no weaker than the floor
    (:func:`twisted_floor`).
    """
    points = np.asarray(points_m, dtype=float).reshape(-1, 3)
    geometries = [r.geometry for r in runs]
    routed = conductors if conductors is not None else route_runs(geometries)
    inside = np.zeros(len(points), dtype=bool)
    unit, nearest_m = run_fields_at(routed, len(runs), points, nearest=nearest, inside=inside,
                                    nearest_m=nearest_m)
    n_p, n_r = unit.shape[:2]
    spread = np.zeros((n_p, n_r, SPREAD_GENERATORS, 3))
    bound = np.zeros((n_p, n_r))
    # (run, part, turns, routed turn) for a lie the plan gives; (run, first generator slot,
    # part, harmonics, routed turn) for a part of unknown turn.
    known, free = [], []
    twisted = []
    for i, run in enumerate(runs):
        g = run.geometry
        if g.return_kind not in ("paired", "twisted"):
            continue
        parts = turning_parts(g)
        if g.return_kind == "paired" and getattr(run, "lie", "not known") in KNOWN_LIE_TURNS_DEG:
            known.append((i, parts[0], KNOWN_LIE_TURNS_DEG[run.lie],
                          math.radians(g.return_angle_deg)))
            continue
        if g.return_kind == "twisted":
            twisted.append(i)
        harmonics = PAIR_HARMONICS if len(parts) == 1 else END_HARMONICS
        for k, part in enumerate(parts):
            free.append((i, 4 * harmonics * k, part, harmonics,
                         math.radians(g.return_angle_deg) if g.return_kind == "paired" else 0.0))
    # The field as routed holds each part at its routed turn; swap that for the part's cover.
    for i, part, turns, routed_rad in known:
        fields = _Turning.of([part]).fields(points, np.radians(np.r_[turns, 0.0]) +
                                            np.r_[0.0, 0.0, routed_rad])[:, 0]
        centre, generator, _ = _known_lie(fields[:, :2])
        unit[:, i] += centre - fields[:, 2]
        spread[:, i, :1] = generator
    for harmonics in sorted({f[3] for f in free}):
        chosen = [f for f in free if f[3] == harmonics]
        turning = _Turning.of([f[2] for f in chosen])
        centre, generators, extra, routed_at, reach = _turned_part_covers(turning, points,
                                                                          harmonics)
        for j, (i, slot, part, _, routed_rad) in enumerate(chosen):
            if routed_rad:         # routed at another turn than the first sample's
                routed_at[:, j] = _Turning.of([part]).fields(points, np.array([routed_rad]))[:, 0, 0]
            unit[:, i] += centre[:, j] - routed_at[:, j]
            spread[:, i, slot:slot + 4 * harmonics] = generators[:, j]
            bound[:, i] += extra[:, j]
            inside |= reach[:, j]
    if twisted:
        bound[:, twisted] += twisted_floor([runs[i] for i in twisted], points, unit[:, twisted],
                                           spread[:, twisted], bound[:, twisted])
    return RunParts(unit, spread, bound, nearest_m, inside)


def _one_group_field(fixed, points):
    """(P, 3) [T per A]: the field of one fixed part's segments ``(start, end, weight, ...)``."""
    start, end, weight = fixed[0], fixed[1], fixed[2]
    group = np.zeros(len(weight), dtype=int)
    return segment_field_by_group(start, end, weight, group, 1, points)[0][:, 0]


def twisted_floor(runs, points, unit_t, spread_t, bound_t):
    r"""(P, n) [T/A] what the floor adds to each twisted run's bound of unknown direction.

    Parameters
    ----------
    runs : sequence of Run (twisted)
    points : (P, 3) [m]
    unit_t, spread_t, bound_t : the runs' own parts (P, n, 3), (P, n, G, 3), (P, n) [T/A]

    Notes
    -----
    Moser & Spencer (1968) measured the fall of a twisted pair's field only out to 1.5 lay
    lengths, about 50 dB below the same pair untwisted. Beyond that a run is held no weaker
    than that fraction f of the same run laid as a pair of unknown lie, in the figure the budget
    holds: the largest horizontal part at the worst attitude. Whatever the heel and pitch, the
    pair's held figure is at most the largest 3-D size over its cover, U (the worst attitude can
    at most lay the whole vector level; U is taken as the centre's size plus each octagon's
    farthest reach, 1/cos(pi/8) times its ellipse's, plus its bound), and the twisted run's is
    at least its largest level horizontal size over its own cover plus its bound, L (level is
    one attitude). Adding
    max(0, f U - L) as a bound of unknown direction therefore holds the run at no less than
    f times the pair at every attitude, and adds nothing where the run is already above it.
    """
    pairs = [r.geometry for r in runs]
    fixed_parts = [turning_run(as_paired(g)) for g in pairs]
    turning = _Turning.of([parts[0] for _, parts in fixed_parts])
    # An upper bound on the pair is all the floor needs: sampled once, no circle.
    centre, generators, extra, _, _ = _turned_part_covers(turning, points, PAIR_HARMONICS,
                                                          refine=False, circle=False)
    supply = np.stack([_one_group_field(fixed, points) for fixed, _ in fixed_parts],
                      axis=1)                                                 # (P, n, 3)
    # Each octagon of generators tan(pi/8) (cos(j pi/4) U + sin(j pi/4) W) lies within
    # 1/cos(pi/8) of its ellipse, whose farthest point is the largest singular value of [U W].
    blocks = generators.reshape(generators.shape[:-2] + (-1, 4, 3))
    reach = _sigma(blocks[..., 0, :], blocks[..., 2, :]) / math.tan(math.pi / 8)
    pair_3d = (np.linalg.norm(supply + centre, axis=-1)
               + reach.sum(axis=-1) / math.cos(math.pi / 8) + extra)
    own = worst_combination(unit_t, spread_t, np.ones(spread_t.shape[-2], dtype=bool))[0]
    return np.maximum(TWISTED_FLOOR_FRACTION * pair_3d - (own + bound_t), 0.0)
