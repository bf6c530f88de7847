"""Runs turned into conductors: return kinds, sides, closure, and the twisted pair's accuracy."""

import math

import numpy as np
import pytest

from deviation.physics import routing
from deviation.physics.field import segment_field
from deviation.physics.routing import Conductors, RunGeometry, route_run, route_runs, twisted_helices

MU0 = 4e-7 * math.pi


def field_of(run, points):
    start, end, sign = route_run(run)
    return segment_field(start, end, sign * 1.0, points)


def straight(length):
    return np.array([[0.0, 0, 0], [length, 0, 0]])


def test_paired_return_lies_to_port_of_a_forward_run():
    start, end, sign = route_run(RunGeometry("r", straight(2.0), "paired", spacing_m=0.01))
    back = start[sign < 0]
    assert np.allclose(back[:, 1], 0.01) and np.allclose(back[:, 2], 0.0)


def test_paired_run_matches_two_wire_line_far_field():
    # Two-wire line |B| = mu0 I s / (2 pi r1 r2) (textbook), long pair, middle.
    s, d = 0.005, 0.5
    run = RunGeometry("r", np.array([[-500.0, 0, 0], [500.0, 0, 0]]), "paired", spacing_m=s)
    b = field_of(run, [[0, s / 2, d]])     # on the pair's midplane
    r = math.hypot(d, s / 2)
    assert np.linalg.norm(b) == pytest.approx(MU0 * s / (2 * math.pi * r * r), rel=1e-5)


def test_paired_corner_keeps_the_spacing():
    route = np.array([[0.0, 0, 0], [1, 0, 0], [1, -1, 0]])     # forward, then to starboard
    back = routing.offset_polyline(route, 0.02)
    # The left side of a right turn is its outside; the mitre keeps 0.02 m from both stretches.
    assert back[1] == pytest.approx([1.02, 0.02, 0.0])
    assert back[2] == pytest.approx([1.02, -1.0, 0.0])


def test_vertical_stretch_borrows_its_neighbours_side():
    route = np.array([[0.0, 0, 0], [1, 0, 0], [1, 0, 1]])
    back = routing.offset_polyline(route, 0.01)
    assert back[2] == pytest.approx([1.0, 0.01, 1.0])


def test_separate_return_is_closed_through_load_and_source():
    run = RunGeometry("r", straight(2.0), "separate",
                      return_route_m=np.array([[2.0, 0, -0.5], [0.0, 0, -0.5]]))
    start, end, sign = route_run(run)
    # Closed loop: each vertex is entered as often as it is left.
    assert np.allclose(np.sum(end * sign[:, None], axis=0), np.sum(start * sign[:, None], axis=0))
    # A closed 2 m x 0.5 m rectangle: at its centre B = mu0 I sqrt(a^2 + b^2) / (pi a b) for
    # sides 2a x 2b (sum of four finite-segment fields, Griffiths eq. 5.37; a = b gives the
    # square-loop value, Griffiths ch. 5).
    b = field_of(run, [[1.0, 0, -0.25]])
    a_, b_ = 1.0, 0.25
    assert np.linalg.norm(b) == pytest.approx(MU0 * math.hypot(a_, b_) / (math.pi * a_ * b_),
                                              rel=1e-12)


def test_none_is_one_open_conductor():
    start, end, sign = route_run(RunGeometry("r", straight(2.0), "none"))
    assert len(sign) == 1 and sign[0] == 1


def test_twisted_pair_50db_below_pair_at_1p5_lay():
    # Moser & Spencer, IEEE Trans. EMC 10(3), 1968: ~50 dB below the untwisted pair at r = 1.5 p.
    # Closed circuit, long enough that the ends do not matter at the middle; a perfect helix
    # into the terminals (no untwisted ends), as measured.
    lay, s = 0.05, 0.005
    route = straight(100 * lay)
    angles = np.linspace(0, 2 * np.pi, 8, endpoint=False)
    offsets = np.linspace(0, lay, 5, endpoint=False)
    points = np.array([[50 * lay + o, 1.5 * lay * math.cos(a), 1.5 * lay * math.sin(a)]
                       for a in angles for o in offsets])
    twisted = field_of(RunGeometry("t", route, "twisted", spacing_m=s, lay_m=lay,
                                   untwisted_end_m=0.0), points)
    pair = field_of(RunGeometry("p", route, "paired", spacing_m=s), points)
    ratio_db = 20 * math.log10(np.linalg.norm(pair, axis=1).max()
                               / np.linalg.norm(twisted, axis=1).max())
    assert ratio_db == pytest.approx(50, abs=2)


def test_twisted_helices_keep_the_spacing_and_the_lay():
    supply, back = twisted_helices(straight(0.3), 0.006, 0.1, 12)
    centre = (supply + back) / 2
    assert np.allclose(centre[:, 1:], 0, atol=1e-15)
    # One turn per lay: the supply returns to its starting azimuth every 0.1 m.
    every_lay = supply[::12]
    assert np.allclose(every_lay[:, 1:], every_lay[0, 1:])


def test_segment_currents_follow_sign_and_run():
    conductors = route_runs([RunGeometry("a", straight(1), "paired", spacing_m=0.01),
                             RunGeometry("b", straight(1), "none")])
    currents = conductors.segment_currents(np.array([[2.0, 0.0], [3.0, -1.0]]))
    assert isinstance(conductors, Conductors) and conductors.run_names == ["a", "b"]
    assert set(np.unique(currents[conductors.run_index == 0, 0])) == {-2.0, 2.0}
    assert np.all(currents[conductors.run_index == 1] == [3.0, -1.0])


def test_the_routes_cross_product_is_numpys_to_the_bit():
    # routing._cross replaces numpy.cross (the same products and differences, in its order)
    # in the loops over stretches; the same numbers to the bit, signed zeros included.
    from deviation.physics.routing import _cross

    rng = np.random.default_rng(20)
    a, b = rng.normal(size=(500, 3)), rng.normal(size=(500, 3))
    a[::7] = 0.0
    b[::5, 1] = -0.0
    for x, y in ((a, b), ([0.0, 0.0, 1.0], b), (a[3], b[4])):
        assert np.array_equal(_cross(x, y), np.cross(x, y))
        assert np.array_equal(np.signbit(_cross(x, y)), np.signbit(np.cross(x, y)))
