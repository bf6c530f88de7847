"""The side of a paired return on vertical stretches, exactly as docs/routing.md states it,
checked against magpylib's line currents with the geometry written out here from that rule."""

import math

import numpy as np
import pytest

from deviation.physics.field import segment_field
from deviation.physics.routing import RunGeometry, offset_polyline, route_run

SPACING_M = 0.004
CURRENT_A = 6.0


def left_normal(a, b):
    """The rule's left normal of the stretch a -> b: z x (b - a), horizontal, unit length."""
    d = np.subtract(b, a)
    n = np.array([-d[1], d[0], 0.0])
    return n / np.linalg.norm(n)


def mitred(normals, spacing_m):
    """The documented offsets: spacing along the end stretches' normals; at an inner waypoint on
    the bisector, at the distance that keeps both offset stretches one spacing away
    (s / cos(half the turn)), at most 3 s; a reversal keeps the first stretch's normal."""
    offsets = [normals[0] * spacing_m]
    for before, after in zip(normals, normals[1:]):
        m = before + after
        if np.linalg.norm(m) < 1e-9:
            offsets.append(before * spacing_m)
            continue
        m = m / np.linalg.norm(m)
        offsets.append(m * min(spacing_m / (m @ before), 3 * spacing_m))
    offsets.append(normals[-1] * spacing_m)
    return np.array(offsets)


def magpylib_loop_field(supply, back, observers):
    """A paired run as one closed line current: along the supply, through the load to the
    return, back along the return, through the source (magpylib, SI units)."""
    magpylib = pytest.importorskip("magpylib")
    vertices = np.vstack([supply, back[::-1], supply[:1]])
    return magpylib.current.Polyline(current=CURRENT_A, vertices=vertices).getB(observers)


def our_field(route, observers):
    start, end, sign = route_run(RunGeometry("pedestal", np.asarray(route, dtype=float),
                                             "paired", spacing_m=SPACING_M))
    return segment_field(start, end, sign * CURRENT_A, np.asarray(observers, dtype=float),
                         backend="numpy")


def assert_same_components(ours, theirs):
    # Two independent line-current codes on the same wires (magpylib agrees with ours to about
    # 1e-10 in the project's benchmarks): every component to 1e-9 of the field's size.
    for a, b in zip(np.atleast_2d(ours), np.atleast_2d(theirs)):
        np.testing.assert_allclose(a, b, rtol=1e-9, atol=1e-9 * np.linalg.norm(b))


# A cable from the panel, aft under the cockpit sole, up the compass pedestal through a gland
# half way up, and a short way forward into the binnacle (metres; x forward, y port, z up).
PANEL = (4.0, 0.6, 0.9)
UNDER_SOLE = (1.8, 0.2, 0.9)
PEDESTAL_FOOT = (1.6, 0.0, 1.0)
GLAND = (1.6, 0.0, 1.3)
PEDESTAL_TOP = (1.6, 0.0, 1.7)
BINNACLE = (1.7, 0.0, 1.75)
COMPASS = (1.6, 0.0, 1.95)
OBSERVERS = [COMPASS, (1.6, 0.15, 1.95), (1.45, -0.1, 1.5), (2.0, 0.3, 1.2)]


def test_a_vertical_stretch_takes_the_next_non_vertical_stretchs_side_not_the_nearest():
    route = np.array([PANEL, UNDER_SOLE, PEDESTAL_FOOT, GLAND, PEDESTAL_TOP, BINNACLE])
    aft = left_normal(PANEL, UNDER_SOLE)             # aft and a little to starboard
    down_slope = left_normal(UNDER_SOLE, PEDESTAL_FOOT)
    forward = left_normal(PEDESTAL_TOP, BINNACLE)    # (0, 1, 0): port
    # Both vertical stretches (foot to gland, gland to top) take the side of the next stretch
    # along the route that is not vertical: the one into the binnacle. The nearest one to the
    # first of them would be the stretch before it; the rule does not look back while one
    # follows.
    normals = [aft, down_slope, forward, forward, forward]
    back = route + mitred(normals, SPACING_M)
    np.testing.assert_allclose(offset_polyline(route, SPACING_M), back, rtol=0, atol=1e-15)
    # On the pedestal the return lies to port of the supply, one spacing away.
    assert back[3] == pytest.approx(np.add(GLAND, (0.0, SPACING_M, 0.0)), abs=1e-15)
    assert_same_components(our_field(route, OBSERVERS),
                           magpylib_loop_field(route, back, OBSERVERS))
    # The other reading (the previous stretch's side) is another field at the compass:
    wrong = route + mitred([aft, down_slope, down_slope, down_slope, forward], SPACING_M)
    other = magpylib_loop_field(route, wrong, [COMPASS])
    assert np.linalg.norm(other - our_field(route, [COMPASS])) > 1e-3 * np.linalg.norm(other)


def test_a_route_that_ends_going_up_the_pedestal_keeps_the_last_side_before_it():
    route = np.array([PANEL, UNDER_SOLE, PEDESTAL_FOOT, GLAND, PEDESTAL_TOP])
    aft = left_normal(PANEL, UNDER_SOLE)
    down_slope = left_normal(UNDER_SOLE, PEDESTAL_FOOT)
    # No stretch that is not vertical follows: the last one before them gives the side.
    normals = [aft, down_slope, down_slope, down_slope]
    back = route + mitred(normals, SPACING_M)
    np.testing.assert_allclose(offset_polyline(route, SPACING_M), back, rtol=0, atol=1e-15)
    # (1, -1, 0)/sqrt 2: aft of travel's left is to starboard and forward here.
    assert back[-1] == pytest.approx(np.add(PEDESTAL_TOP, SPACING_M * np.array(
        [1.0, -1.0, 0.0]) / math.sqrt(2)), abs=1e-15)
    assert_same_components(our_field(route, OBSERVERS),
                           magpylib_loop_field(route, back, OBSERVERS))


def test_a_slightly_tilted_stretch_is_not_vertical_and_keeps_its_own_side():
    # Leaning 1 mm aft over 0.7 m: its own horizontal direction (aft) gives its side, to
    # starboard, although the stretch after it goes forward.
    tilted = (1.599, 0.0, 1.7)
    route = np.array([UNDER_SOLE, PEDESTAL_FOOT, tilted, BINNACLE])
    normals = [left_normal(UNDER_SOLE, PEDESTAL_FOOT), left_normal(PEDESTAL_FOOT, tilted),
               left_normal(tilted, BINNACLE)]
    assert normals[1] == pytest.approx([0.0, -1.0, 0.0])
    back = route + mitred(normals, SPACING_M)
    np.testing.assert_allclose(offset_polyline(route, SPACING_M), back, rtol=0, atol=1e-15)
    assert_same_components(our_field(route, OBSERVERS),
                           magpylib_loop_field(route, back, OBSERVERS))


def test_a_route_that_is_only_vertical_has_its_return_to_port():
    route = np.array([PEDESTAL_FOOT, GLAND, PEDESTAL_TOP])
    back = offset_polyline(route, SPACING_M)
    np.testing.assert_allclose(back - route, [[0.0, SPACING_M, 0.0]] * 3, rtol=0, atol=1e-15)
    assert_same_components(our_field(route, OBSERVERS[1:]),
                           magpylib_loop_field(route, back, OBSERVERS[1:]))
