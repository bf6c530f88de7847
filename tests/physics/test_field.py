"""The segment and dipole fields against textbook formulas, magpylib and scipy quadrature."""

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from deviation.physics import field
from deviation.physics.field import InsideConductorError, dipole_field, segment_field

MU0 = 4e-7 * math.pi
BACKENDS = ["numpy", pytest.param("compiled", marks=pytest.mark.compiled)]


def polygon(vertices):
    v = np.asarray(vertices, dtype=float)
    return v, np.roll(v, -1, axis=0)


@pytest.mark.parametrize("backend", BACKENDS)
def test_long_wire_matches_mu0_i_over_2pi_r(backend):
    # Griffiths, Introduction to Electrodynamics, ch. 5: B = mu0 I / (2 pi d); 10 A at 0.5 m -> 4.000 uT.
    b = segment_field([[-1e4, 0, 0]], [[1e4, 0, 0]], [10.0], [[0, 0.5, 0]], backend=backend)
    assert np.linalg.norm(b) * 1e6 == pytest.approx(4.000, rel=1e-7)
    # Right-hand rule: current along +x, observer at +y -> field along +z.
    assert b[0, 2] > 0 and abs(b[0, 0]) < 1e-18 and abs(b[0, 1]) < 1e-18


@pytest.mark.parametrize("backend", BACKENDS)
def test_finite_segment_matches_sin_theta_formula(backend):
    # Griffiths eq. 5.37, B = mu0 I/(4 pi d)(sin t2 - sin t1): 1 m, 1 A, 1 m off the midpoint
    # on the perpendicular -> 0.089443 uT (Griffiths, ch. 5, finite segment).
    b = segment_field([[-0.5, 0, 0]], [[0.5, 0, 0]], [1.0], [[0, 1.0, 0]], backend=backend)
    assert np.linalg.norm(b) * 1e6 == pytest.approx(0.089443, abs=5e-7)
    assert np.linalg.norm(b) == pytest.approx(1e-7 * 2 * 0.5 / math.sqrt(1.25), rel=1e-12)


@pytest.mark.parametrize("backend", BACKENDS)
def test_square_loop_centre_is_2sqrt2_mu0_i_over_pi_a(backend):
    # Textbook: B = 2 sqrt(2) mu0 I / (pi a); a = 1 m, 1 A -> 1.13137 uT (Griffiths, ch. 5).
    start, end = polygon([[-.5, -.5, 0], [.5, -.5, 0], [.5, .5, 0], [-.5, .5, 0]])
    b = segment_field(start, end, np.ones(4), [[0, 0, 0]], backend=backend)
    assert b[0, 2] * 1e6 == pytest.approx(1.13137, abs=5e-6)
    assert b[0, 2] == pytest.approx(2 * math.sqrt(2) * MU0 / math.pi, rel=1e-12)


def test_polygon_of_many_sides_converges_to_circular_loop_on_axis():
    # Textbook: B = mu0 I R^2 / (2 (R^2 + z^2)^(3/2)). An inscribed N-gon is low by O(1/N^2).
    radius, z = 0.3, 0.2
    exact = MU0 * radius ** 2 / (2 * (radius ** 2 + z ** 2) ** 1.5)
    errors = []
    for sides in (64, 256, 1024):
        angle = np.linspace(0, 2 * np.pi, sides, endpoint=False)
        start, end = polygon(np.c_[radius * np.cos(angle), radius * np.sin(angle), 0 * angle])
        b = segment_field(start, end, np.ones(sides), [[0, 0, z]])
        errors.append(abs(b[0, 2] - exact) / exact)
    assert errors[-1] < 1e-5
    assert errors[0] / errors[1] == pytest.approx(16, rel=0.05)      # second order


def test_two_wire_line_matches_mu0_i_s_over_2pi_r1_r2():
    # Two-wire line (Griffiths, ch. 5, by superposition): |B| = mu0 I s / (2 pi r1 r2) for infinite wires;
    # 10 A, s = 5 mm, d = 0.5 m -> 0.0400 uT.
    s, d, current = 0.005, 0.5, 10.0
    start = [[-1e4, s / 2, 0], [1e4, -s / 2, 0]]
    end = [[1e4, s / 2, 0], [-1e4, -s / 2, 0]]
    b = segment_field(start, end, [current, current], [[0, 0, d]])
    r = math.hypot(d, s / 2)
    assert np.linalg.norm(b) == pytest.approx(MU0 * current * s / (2 * math.pi * r * r), rel=1e-9)
    assert np.linalg.norm(b) * 1e6 == pytest.approx(0.0400, abs=5e-5)


def test_supply_and_return_either_side_of_sensor_add_to_2mu0_i_over_pi_r():
    # Two long wires, sensor midway (Griffiths, ch. 5, superposition): B = 2 mu0 I / (pi r);
    # 5 A, r = 0.2 m -> 20.0 uT.
    start = [[-1e4, 0.1, 0], [1e4, -0.1, 0]]
    end = [[1e4, 0.1, 0], [-1e4, -0.1, 0]]
    b = segment_field(start, end, [5.0, 5.0], [[0, 0, 0]])
    assert np.linalg.norm(b) * 1e6 == pytest.approx(20.0, rel=1e-7)


def test_small_loop_far_away_matches_dipole():
    # Dipole of a small loop, m = I A (Griffiths, ch. 5-6): 0.1 m square loop, 1 A (m = 0.01 A m^2), at 2 m on its axis 2.500e-4 uT,
    # in its plane 1.250e-4 uT (Griffiths eq. 5.89).
    start, end = polygon([[-.05, -.05, 0], [.05, -.05, 0], [.05, .05, 0], [-.05, .05, 0]])
    observers = [[0, 0, 2.0], [2.0, 0, 0]]
    loop = segment_field(start, end, np.ones(4), observers)
    dipole = dipole_field([[0, 0, 0.01]], [[0, 0, 0]], observers)
    # The loop's finite size corrects the dipole by O((a/r)^2) ~ 1e-3 at 2 m, 1e-5 at 20 m.
    assert loop[0, 2] * 1e6 == pytest.approx(2.500e-4, rel=2e-3)
    assert -loop[1, 2] * 1e6 == pytest.approx(1.250e-4, rel=2e-3)
    assert dipole[0, 2] * 1e6 == pytest.approx(2.500e-4, rel=1e-12)
    assert -dipole[1, 2] * 1e6 == pytest.approx(1.250e-4, rel=1e-12)
    far = [[0, 0, 20.0], [20.0, 0, 0]]
    np.testing.assert_allclose(segment_field(start, end, np.ones(4), far),
                               dipole_field([[0, 0, 0.01]], [[0, 0, 0]], far), rtol=2e-5, atol=1e-24)


def test_observer_on_the_wire_is_an_error_not_zero():
    with pytest.raises(InsideConductorError) as caught:
        segment_field([[0, 0, 0]], [[1, 0, 0]], [1.0], [[0.5, 0.001, 0]], radius_m=0.002)
    assert caught.value.segment_index == 0
    assert caught.value.distance_m == pytest.approx(0.001)
    # Exactly on the axis with no radius given is still reported.
    with pytest.raises(InsideConductorError):
        segment_field([[0, 0, 0]], [[1, 0, 0]], [1.0], [[0.5, 0, 0]])
    b, inside = segment_field([[0, 0, 0]], [[1, 0, 0]], [1.0], [[0.5, 0, 0], [0.5, 1, 0]],
                              return_inside=True)
    assert inside.tolist() == [True, False]


def test_observer_beyond_segment_end_on_its_line_has_zero_field():
    # Biot-Savart: dl x r vanishes on the line's extension; not inside the conductor.
    b = segment_field([[0, 0, 0]], [[1, 0, 0]], [1.0], [[2.0, 0, 0]], radius_m=0.01)
    assert np.all(b == 0)


def test_zero_length_segment_contributes_nothing():
    b = segment_field([[0, 0, 0], [0, 0, 0]], [[1, 0, 0], [0, 0, 0]], [1.0, 5.0], [[0, 1, 0]])
    ref = segment_field([[0, 0, 0]], [[1, 0, 0]], [1.0], [[0, 1, 0]])
    np.testing.assert_array_equal(b, ref)


def test_near_wire_close_to_axis_has_no_cancellation_loss():
    # Observer 1 nm off a 1 m segment's middle: the exact value mu0 I / (2 pi d) * L/sqrt(L^2+4d^2)
    # needs the cancellation-free denominator (a.b ~ -0.25, |a||b| ~ 0.25).
    d = 1e-9
    b = segment_field([[-0.5, 0, 0]], [[0.5, 0, 0]], [1.0], [[0, d, 0]])
    exact = 1e-7 * 2 * 0.5 / (d * math.sqrt(0.25 + d * d))
    assert b[0, 2] == pytest.approx(exact, rel=1e-12)


@pytest.mark.parametrize("backend", BACKENDS)
def test_states_share_geometry_and_match_one_at_a_time(backend):
    rng = np.random.default_rng(3)
    start = rng.normal(size=(30, 3))
    end = start + rng.normal(scale=0.3, size=(30, 3))
    currents = rng.normal(size=(30, 4))
    points = rng.normal(scale=3, size=(50, 3)) + 5
    together = segment_field(start, end, currents, points, backend=backend)
    for k in range(4):
        alone = segment_field(start, end, currents[:, k], points, backend=backend)
        np.testing.assert_allclose(together[:, k, :], alone, rtol=1e-12, atol=1e-24)


@pytest.mark.compiled
def test_compiled_kernel_matches_numpy_reference():
    rng = np.random.default_rng(5)
    start = rng.uniform(-1, 1, (300, 3))
    end = start + rng.uniform(-0.2, 0.2, (300, 3))
    currents = rng.uniform(-20, 20, (300, 3))
    points = rng.uniform(-2, 2, (2000, 3))
    ref, inside_ref = segment_field(start, end, currents, points, radius_m=0.002,
                                    return_inside=True, backend="numpy")
    fast, inside = segment_field(start, end, currents, points, radius_m=0.002,
                                 return_inside=True, backend="compiled")
    assert (inside == inside_ref).all()
    ok = ~inside
    np.testing.assert_allclose(fast[ok], ref[ok], rtol=1e-11, atol=1e-22)


def test_matches_magpylib_polyline_at_random_geometries():
    # Oracle: magpylib's line-current source (independent implementation, SI units).
    magpylib = pytest.importorskip("magpylib")
    rng = np.random.default_rng(11)
    for _ in range(20):
        vertices = rng.uniform(-1, 1, (6, 3))
        current = float(rng.uniform(-50, 50))
        observers = rng.uniform(-3, 3, (40, 3))
        source = magpylib.current.Polyline(current=current, vertices=vertices)
        expected = magpylib.getB(source, observers)
        got = segment_field(vertices[:-1], vertices[1:], np.full(5, current), observers)
        np.testing.assert_allclose(got, expected, rtol=1e-8, atol=1e-15)


def test_matches_scipy_quad_of_the_biot_savart_integrand():
    # Oracle sharing no formula: B = mu0 I/(4 pi) * integral of dl x r / |r|^3, by scipy.quad.
    quad = pytest.importorskip("scipy.integrate").quad
    rng = np.random.default_rng(2)
    for _ in range(10):
        a, b, p = rng.uniform(-1, 1, (3, 3))
        p = p * 2
        direction = b - a

        def integrand(t, c, a=a, p=p, direction=direction):
            r = p - (a + t * direction)
            return np.cross(direction, r)[c] / np.linalg.norm(r) ** 3

        expected = [1e-7 * 3.0 * quad(integrand, 0, 1, args=(c,), epsabs=0, epsrel=1e-12)[0]
                    for c in range(3)]
        got = segment_field([a], [b], [3.0], [p])[0]
        np.testing.assert_allclose(got, expected, rtol=1e-9, atol=1e-20)


def test_default_backend_stays_numpy_for_small_jobs(monkeypatch):
    # A small check must not import the compiled kernel (start-up cost).
    import sys
    monkeypatch.delitem(sys.modules, "deviation.physics._kernels", raising=False)
    segment_field(np.zeros((10, 3)), np.ones((10, 3)), np.ones(10), np.full((10, 3), 5.0))
    assert "deviation.physics._kernels" not in sys.modules
    assert field.COMPILED_MIN_PAIRS > 100


# Property tests ---------------------------------------------------------------------------------

coords = st.floats(-2, 2, allow_nan=False, allow_infinity=False)
vec = st.tuples(coords, coords, coords)


def _far_enough(start, end, point):
    return field.point_segment_distance([start], [end], [point])[0, 0] > 0.05


@settings(max_examples=60, deadline=None)
@given(vec, vec, vec, vec, st.floats(-100, 100), st.floats(-100, 100))
def test_superposition_and_linearity_in_current(a, b, c, p, i1, i2):
    if not (_far_enough(a, b, p) and _far_enough(b, c, p)):
        return
    both = segment_field([a, b], [b, c], [i1, i2], [p])
    one = segment_field([a], [b], [i1], [p]) + segment_field([b], [c], [i2], [p])
    np.testing.assert_allclose(both, one, rtol=1e-10, atol=1e-18)
    doubled = segment_field([a], [b], [2 * i1], [p])
    np.testing.assert_allclose(doubled, 2 * segment_field([a], [b], [i1], [p]), rtol=1e-12,
                               atol=1e-20)


@settings(max_examples=60, deadline=None)
@given(vec, vec, vec, st.floats(0.01, 100), st.floats(-50, 50))
def test_scaling_lengths_and_currents_together_keeps_the_field(a, b, p, scale, current):
    # B ~ I / length: scaling both by the same factor leaves B unchanged.
    if not _far_enough(a, b, p):
        return
    base = segment_field([a], [b], [current], [p])
    scaled = segment_field([np.multiply(a, scale)], [np.multiply(b, scale)], [current * scale],
                           [np.multiply(p, scale)])
    np.testing.assert_allclose(scaled, base, rtol=1e-9, atol=1e-18)


@settings(max_examples=60, deadline=None)
@given(vec, vec, vec, vec, st.floats(0, 2 * math.pi), st.floats(-50, 50))
def test_rigid_motion_rotates_the_field_with_the_geometry(a, b, p, shift, angle, current):
    if not _far_enough(a, b, p):
        return
    c, s = math.cos(angle), math.sin(angle)
    rot = np.array([[c, -s, 0], [s, c, 0], [0, 0, 1]]) @ np.array(
        [[1, 0, 0], [0, c, -s], [0, s, c]])
    move = lambda v: rot @ np.asarray(v) + np.asarray(shift)  # noqa: E731
    base = segment_field([a], [b], [current], [p])[0]
    moved = segment_field([move(a)], [move(b)], [current], [move(p)])[0]
    np.testing.assert_allclose(moved, rot @ base, rtol=1e-8, atol=1e-16)


@settings(max_examples=60, deadline=None)
@given(vec, vec, vec, st.floats(-50, 50))
def test_reversed_current_flips_the_field(a, b, p, current):
    if not _far_enough(a, b, p):
        return
    forward = segment_field([a], [b], [current], [p])
    np.testing.assert_allclose(segment_field([a], [b], [-current], [p]), -forward, rtol=1e-14,
                               atol=0)
    np.testing.assert_allclose(segment_field([b], [a], [current], [p]), -forward, rtol=1e-12,
                               atol=1e-20)


def test_tiny_segment_pointing_at_observer_is_not_inside():
    # Regression (found by hypothesis): a segment shorter than rounding, on the observer's line.
    b = segment_field([[0, 0, 0]], [[0, 0, 5.9e-161]], [1.0], [[0, 0, 1.0]])
    assert np.all(b == 0)


@pytest.mark.compiled
def test_grouped_compiled_kernel_matches_numpy_per_group():
    # The compiled grouped sum is the same arithmetic as the NumPy one: per group, to rounding,
    # including the inside mask of each group.
    pytest.importorskip("numba")
    from deviation.physics.field import segment_field_by_group

    rng = np.random.default_rng(4)
    start = rng.normal(size=(300, 3))
    end = start + rng.normal(size=(300, 3)) * 0.4
    group = np.sort(rng.integers(0, 7, 300))
    weight = rng.choice([-1.0, 1.0, 2.5], 300)
    points = np.vstack([rng.normal(size=(400, 3)) * 2, start[:3] + 1e-4])
    a, inside_a = segment_field_by_group(start, end, weight, group, 7, points, radius_m=1e-3,
                                         backend="numpy")
    b, inside_b = segment_field_by_group(start, end, weight, group, 7, points, radius_m=1e-3,
                                         backend="compiled")
    np.testing.assert_allclose(b, a, rtol=1e-12, atol=1e-12 * np.abs(a).max())
    assert (inside_a == inside_b).all() and inside_a.any()


# --- the compiled kernel: accuracy against 50 digits, the kept vertex, the word before a wait ---

def _oracle_50_digits(start, end, point, current):
    """Field of one segment in 50-digit arithmetic by the textbook form through the foot of the
    perpendicular, B = mu0 I/(4 pi d^2) (u x rho) (u.b/|b| - u.a/|a|) (Griffiths, Introduction
    to Electrodynamics, 4th ed., example 5.5), sharing no expression with the package's
    closed form; the inputs are the same doubles, taken exactly."""
    mp = pytest.importorskip("mpmath")
    with mp.workdps(50):
        s, e, p = ([mp.mpf(float(x)) for x in v] for v in (start, end, point))
        length = [e[i] - s[i] for i in range(3)]
        norm = mp.sqrt(sum(x * x for x in length))
        u = [x / norm for x in length]
        a = [s[i] - p[i] for i in range(3)]
        b = [e[i] - p[i] for i in range(3)]
        along = -sum(u[i] * a[i] for i in range(3))
        rho = [p[i] - s[i] - along * u[i] for i in range(3)]
        d2 = sum(x * x for x in rho)
        u_x_rho = [u[1] * rho[2] - u[2] * rho[1], u[2] * rho[0] - u[0] * rho[2],
                   u[0] * rho[1] - u[1] * rho[0]]
        cosines = (sum(u[i] * b[i] for i in range(3)) / mp.sqrt(sum(x * x for x in b))
                   - sum(u[i] * a[i] for i in range(3)) / mp.sqrt(sum(x * x for x in a)))
        scale = mp.mpf("1e-7") * mp.mpf(float(current)) * cosines / d2    # mu0/4pi, SI 1e-7
        return np.array([float(x * scale) for x in u_x_rho])


@pytest.mark.parametrize("backend", BACKENDS)
def test_field_agrees_with_a_50_digit_oracle_to_a_few_units_in_the_last_place(backend):
    # Oracle: mpmath at 50 digits (above). Segments near and far, observers beside, beyond the
    # ends (a.b > 0) and alongside (a.b < 0), a chain of them sharing vertices as routed runs do.
    rng = np.random.default_rng(3)
    start = rng.uniform(-1, 1, (120, 3))
    end = start + rng.normal(scale=0.3, size=(120, 3))
    end[60:] = np.roll(start[60:], -1, axis=0)           # a closed chain: each ends where the
    end[-1] = start[60]                                   # next starts
    points = np.concatenate([rng.uniform(-2, 2, (40, 3)), rng.uniform(-40, 40, (8, 3))])
    fields = segment_field(start, end, np.eye(120) * 3.0, points, backend=backend)  # (P, S, 3)
    eps = np.finfo(float).eps
    worst = 0.0
    for s in range(0, 120, 3):
        for p in range(len(points)):
            expected = _oracle_50_digits(start[s], end[s], points[p], 3.0)
            error = np.abs(fields[p, s] - expected).max() / np.linalg.norm(expected)
            # Rounding a = s - p and b = e - p alone moves a x b by ~eps |a||b|: no float64
            # evaluation does better than a few eps times |a||b|/|a x b| (large far away).
            a, b = start[s] - points[p], end[s] - points[p]
            condition = np.linalg.norm(a) * np.linalg.norm(b) / np.linalg.norm(np.cross(a, b))
            worst = max(worst, error / (eps * (1.0 + condition)))
    assert worst < 8.0


@pytest.mark.compiled
def test_a_vertex_kept_from_the_segment_before_gives_the_same_bits_as_computed_afresh():
    # Along a chain every segment after the first reuses the vector, square and length to its
    # start from the segment before; taken alone (odd and even segments apart, so none follows
    # another) each is computed afresh. Per-segment fields must agree to the bit.
    rng = np.random.default_rng(8)
    chain = np.cumsum(rng.normal(scale=0.1, size=(301, 3)), axis=0)
    start, end = chain[:-1], chain[1:]
    points = rng.uniform(-1.5, 1.5, (700, 3))
    every = np.arange(300)
    together, _ = field.segment_field_by_group(start, end, np.full(300, 2.5), every, 300, points,
                                               radius_m=1e-4, backend="compiled")
    for half in (every[0::2], every[1::2]):
        alone, _ = field.segment_field_by_group(start[half], end[half], np.full(150, 2.5),
                                                np.arange(150), 150, points, radius_m=1e-4,
                                                backend="compiled")
        np.testing.assert_array_equal(alone, together[:, half])
    summed = segment_field(start, end, np.full(300, 2.5), points, radius_m=1e-4,
                           backend="compiled")
    np.testing.assert_allclose(summed, together.sum(axis=1), rtol=1e-12, atol=1e-20)


class _Reporter:
    """A progress reporter (deviation.progress) keeping the steps started and finished."""

    def __init__(self):
        self.steps = []

    def start(self, label, total):
        self.steps.append([label, total, 0, False])
        record = self.steps[-1]

        class Handle:
            def advance(self, n=1):
                record[2] += n

            def done(self):
                record[3] = True

        return Handle()


@pytest.mark.compiled
def test_a_call_that_compiles_is_reported_once_as_a_progress_step(monkeypatch, capsys):
    # The library never prints: a compiling call is a progress step (which the command line
    # draws as one line on a terminal only), reported once per kernel and process.
    from deviation import progress
    from deviation.physics import _kernels

    monkeypatch.setattr(_kernels, "_needs_compiling", lambda kernel: True)
    monkeypatch.setattr(_kernels, "_checked", set())
    reporter = _Reporter()
    with progress.reporting(reporter):
        for _ in range(2):
            segment_field([[0, 0, 0.0]], [[1, 0, 0.0]], [1.0], [[0, 1, 0.0]], backend="compiled")
    assert reporter.steps == [[_kernels.COMPILING_LABEL, 1, 1, True]]
    monkeypatch.setattr(_kernels, "_checked", set())
    segment_field([[0, 0, 0.0]], [[1, 0, 0.0]], [1.0], [[0, 1, 0.0]], backend="compiled")
    assert capsys.readouterr() == ("", "")                 # no reporter: nothing anywhere
    # Nothing is reported when numba's cache already holds the kernels for this machine.
    monkeypatch.undo()
    assert not _kernels._needs_compiling(_kernels._kernel)


@pytest.mark.compiled
def test_an_empty_cache_is_known_to_need_compiling(tmp_path):
    # In a fresh process with an empty numba cache, both kernels need compiling (asked of the
    # cache index only: nothing is compiled here).
    import subprocess
    import sys

    code = ("from deviation.physics import _kernels as k; "
            "print(k._needs_compiling(k._kernel), k._needs_compiling(k._group_kernel))")
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                          env={**__import__("os").environ, "NUMBA_CACHE_DIR": str(tmp_path)})
    assert done.stdout.split() == ["True", "True"], done.stderr
