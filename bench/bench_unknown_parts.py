"""Parts of unknown direction, each case against a brute force over its turns (magpylib).

    python bench/bench_unknown_parts.py          # every case
    python bench/bench_unknown_parts.py A B      # some: A ends, A2 ends end-on, B floor, D fit

A  a twisted strobe feed out to a wingtip, a magnetometer 4 in (0.1016 m) off its end: the held
   figure against the worst over both untwisted ends' turns;
B  a 60 A run twisted at 40 mm lay 0.15 m under a compass: the held figure against the floor
   (50 dB under the same pair's worst lie) and against the worst over its ends' turns;
D  two 20 A pairs of unknown lie 5 cm from an electronic compass measured as one total current:
   what compensation leaves, against the host's fit redone over both lies (5 degree steps).

The lie of a single pair at 1.5 to 60 spacings: bench/bench_lie_bound.py. Written against the
public API only (``held_of`` also reads the older name of the held figure), so the same script
gives before-and-after figures across versions.
"""
import math
import sys

import magpylib
import numpy as np

import deviation
from deviation.physics.routing import offset_polyline, twisted_conductors

H_UT = 20.0
H = H_UT * 1e-6


def site():
    return [{"setting": "horizontal_field_ut", "value": H_UT},
            {"setting": "vertical_field_ut", "value": 40}]


def held_of(st):
    return st.held if hasattr(st, "held") else st.budget_used_deg


def deg(bh):
    return math.degrees(math.asin(min(1.0, bh / H)))


def loop_field(supply, back, current, at):
    """magpylib: supply source->load, back source->load (return), closed at both ends."""
    verts = np.vstack([supply, back[::-1], supply[:1]])
    return magpylib.current.Polyline(current=current, vertices=verts).getB(np.asarray(at))


def rotate_about(points, origin, axis, angle):
    axis = axis / np.linalg.norm(axis)
    v = points - origin
    c, s = math.cos(angle), math.sin(angle)
    return origin + v * c + np.cross(axis, v) * s + axis * (v @ axis)[:, None] * (1 - c)


# --- case A: the untwisted end -----------------------------------------------------------------
def ends_worst(route, s, lay, end, current, at, step=2.0):
    """Worst level horizontal field over both ends' turns (magpylib), and at the laid turn."""
    route = np.asarray(route, dtype=float)
    supply, back = twisted_conductors(route, s, lay, end)
    axis = route[1] - route[0]
    length = np.linalg.norm(axis)
    along = (back - route[0]) @ axis / length
    r = np.linalg.norm((back - route[0]) - np.outer(along, axis / length), axis=1)
    lead = (along <= end + 1e-12) & (r > 0.75 * s)
    tail = (along >= length - end - 1e-12) & (r > 0.75 * s)
    base = loop_field(supply, back, current, at)
    fl, ft = [], []
    for t in np.radians(np.arange(0, 360, step)):
        b2 = back.copy()
        b2[lead] = rotate_about(back[lead], route[0], axis, t)
        fl.append(loop_field(supply, b2, current, at) - base)
        b3 = back.copy()
        b3[tail] = rotate_about(back[tail], route[0], axis, t)
        ft.append(loop_field(supply, b3, current, at) - base)
    total = base + np.array(fl)[:, None, :] + np.array(ft)[None, :, :]
    return np.hypot(total[..., 0], total[..., 1]).max(), math.hypot(*base[:2])


def case_ends(at=(0.1016, 5.0, 0.0)):
    route = np.array([[0, 0.3, 0.0], [0, 5.0, 0.0]])
    s, lay, end, current = 0.0035, 0.025, 0.15, 3.0
    runs = [{"run": "strobe feed", "circuits": "strobe", "route": "0, 0.3, 0 > 0, 5, 0",
             "return": "twisted", "spacing": "3.5 mm", "lay": "25 mm"}]
    sens = [{"sensor": "wingtip mag", "at": ", ".join(map(str, at)), "kind": "magnetometer",
             "budget_deg": 1.0}]
    plan = deviation.plan_from_tables({"site": site(), "runs": runs,
                                       "states": [{"circuit": "strobe", "on": current}],
                                       "sensors": sens})
    st = deviation.check(plan, remedies=False).sensors[0].states[0]
    worst, laid = ends_worst(route, s, lay, end, current, at)
    print(f"A ends at {at}: held {held_of(st):.5f} deg; worst over both ends' turns "
          f"{deg(worst):.5f} deg; as laid {deg(laid):.5f} deg; ratio {held_of(st) / deg(worst):.4f}")


# --- case B: the twisted floor -----------------------------------------------------------------
def case_floor(ends="0.15 m"):
    common = {"circuits": "c", "route": "-1, 0, -0.15 > 1, 0, -0.15", "spacing": "10 mm"}
    def held(kind, **extra):
        runs = [{"run": "feed", "return": kind, **common, **extra}]
        plan = deviation.plan_from_tables({"site": site(), "runs": runs,
                                           "states": [{"circuit": "c", "on": 60.0}],
                                           "sensors": [{"sensor": "compass", "at": "0, 0, 0",
                                                        "kind": "magnetic compass",
                                                        "budget_deg": 1.0}]})
        return held_of(deviation.check(plan, remedies=False).sensors[0].states[0])
    pair = held("paired")
    twisted = held("twisted", lay="40 mm", untwisted_ends=ends)
    route = np.array([[-1, 0, -0.15], [1, 0, -0.15]])
    worst = 0.0
    for a in np.radians(np.arange(0, 360, 0.5)):
        back = offset_polyline(route, 0.01)
        back = rotate_about(back, route[0], route[1] - route[0], a)
        b = loop_field(route, back, 60.0, (0, 0, 0))
        worst = max(worst, math.hypot(b[0], b[1]))
    floor = deg(10 ** (-50 / 20) * worst)
    own, laid = ends_worst(route, 0.01, 0.04, float(ends.split()[0]), 60.0, (0, 0, 0))
    print(f"B floor, ends {ends}: twisted held {twisted:.4f} deg; its worst over the ends' turns "
          f"{deg(own):.4f} (as laid {deg(laid):.4f}); pair held {pair:.3f} deg (brute {deg(worst):.3f}); "
          f"50 dB under the pair {floor:.4f} deg; held/max(floor, own) {twisted / max(floor, deg(own)):.3f}")


# --- case D: compensation over the pairs' lies -------------------------------------------------
def case_compensation(step_deg=5.0):
    from deviation.electronic import electronic_report
    s = 0.008
    routes = {"pair a": np.array([[-3, 0, -0.05], [3, 0, -0.05]]),
              "pair b": np.array([[0.05, -3, -0.01], [0.05, 3, -0.01]])}
    runs = [{"run": name, "circuits": name, "route": " > ".join(", ".join(map(str, p)) for p in r),
             "return": "paired", "spacing": "8 mm"} for name, r in routes.items()]
    states = [{"circuit": "pair a", "off": 0, "a on": 20, "b on": 0, "both": 20},
              {"circuit": "pair b", "off": 0, "a on": 0, "b on": 20, "both": 20}]
    plan = deviation.plan_from_tables({
        "site": site(), "runs": runs, "states": states,
        "sensors": [{"sensor": "ecompass", "at": "0, 0, 0", "kind": "electronic compass",
                     "budget_deg": 2.0, "reference_state": "off", "measured_currents": "total"}]})
    analysis = deviation.check(plan, remedies=False)
    [report] = electronic_report(analysis)
    told = max(s_.compensated_horizontal_t for s_ in report.states)
    # brute force over both lies: per-ampere fields by magpylib, the host's fit by lstsq
    turns = np.radians(np.arange(0, 360, step_deg))
    per = {}
    for name, route in routes.items():
        axis = route[1] - route[0]
        left = np.cross([0, 0, 1.0], axis)
        left /= np.linalg.norm(left)
        back0 = route + s * left
        per[name] = np.array([loop_field(route, rotate_about(back0, route[0], axis, t), 1.0,
                                         (0, 0, 0)) for t in turns])
    cur = np.array([[0, 20, 0, 20], [0, 0, 20, 20.0]])           # (C, K)
    m = cur.sum(axis=0)                                           # total channel
    worst = 0.0
    for fa in per["pair a"]:
        for fb in per["pair b"]:
            fields = np.array([fa, fb])                           # (C, 3)
            b = cur.T @ fields                                    # (K, 3)
            k = np.linalg.lstsq((m - m[0])[:, None], b - b[0], rcond=None)[0]
            res = b - b[0] - (m - m[0])[:, None] * k
            worst = max(worst, np.hypot(res[:, 0], res[:, 1]).max())
    print(f"D compensation: told {told * 1e9:.1f} nT ({deg(told):.3f} deg); worst over the lies "
          f"{worst * 1e9:.1f} nT ({deg(worst):.3f} deg); ratio {told / worst:.4f}")


if __name__ == "__main__":
    which = sys.argv[1:] or ["A", "A2", "B", "D"]
    if "A" in which:
        case_ends()
    if "A2" in which:
        case_ends(at=(0.0, 5.1016, 0.0))
    if "B" in which:
        case_floor()
        case_floor("0 m")
    if "D" in which:
        case_compensation()
