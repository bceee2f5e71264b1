"""The Hertzian dipoles standing for the segment currents in the Sommerfeld remainder of the near fields.

ground._remainder_dipoles picks, run by run, a per-segment Gauss-Legendre rule or a run rule (moments matched to
polynomials along a straight run). Both are numerical shortcuts for the integral of the remainder along the wires;
they are checked against the same integral with 8 nodes per segment, which agrees with the direct Sommerfeld
integral (tests/test_ground.py, test_solver_near_fields_equal_the_direct_sommerfeld_sum, 6 nodes per segment:
within 0.5 %; measured 3e-4 at the base of the vertical below).
"""

import numpy as np
import pytest

from rfsafe.antenna.wire import ground as g
from rfsafe.antenna.wire.fields import near_fields
from rfsafe.antenna.wire.geometry import point_segment_distances
from rfsafe.antenna.wire.model import WireAntennaSpec
from rfsafe.antenna.wire.solver import solve

F_HZ = 7.1e6


def _spec(wires, feed=0, position=0.5, soil="medium-dry-ground"):
    return WireAntennaSpec.model_validate({"ground": "real", "soil": soil, "wires": wires,
                                           "feeds": [{"wire": feed, "position": position}]})


def _vertical_with_radials():
    wires = [{"label": "v", "points_m": [[0, 0, 0.3], [0, 0, 10.6]], "radius_m": 0.002}]
    for i in range(4):
        a = i * np.pi / 2
        wires.append({"points_m": [[0, 0, 0.3], [10.3 * np.cos(a), 10.3 * np.sin(a), 0.3]], "radius_m": 0.002})
    return _spec(wires, feed="v", position=0.0)


CASES = {
    "dipole 8 m up": _spec([{"points_m": [[-10.05, 0, 8.0], [10.05, 0, 8.0]], "radius_m": 0.001}]),
    "inverted V": _spec([{"points_m": [[-9, 0, 5], [0, 0, 10]], "radius_m": 0.001, "segments": 15},
                         {"points_m": [[0, 0, 10], [9, 0, 5]], "radius_m": 0.001, "segments": 15}], position=1.0),
    "vertical with radials 0.3 m up": _vertical_with_radials(),
    "dipole 10 m over sea water": _spec([{"points_m": [[-10.05, 0, 10], [10.05, 0, 10]], "radius_m": 0.001,
                                          "segments": 31}], soil="sea-water"),
    "long wire 80 m, 6 m up": _spec([{"points_m": [[-40, 0, 6], [40, 0, 6]], "radius_m": 0.001, "segments": 120}],
                                    position=0.1),
}


def _fine(st, k, cur, nq=8):
    pts, w, f1, f2 = g._segment_nodes(st, k, nq)
    c = cur[:, 0, None] * f1 + cur[:, 1, None] * f2
    return pts.reshape(-1, 3), ((c * w)[..., None] * st.direction[:, None, :]).reshape(-1, 3)


def _worst_errors(spec, heights=(0.0, 0.5, 1.5)):
    """Largest difference of the remainder E and H from the 8-node rule, each over the total field at the place
    (floored at a tenth of the map's largest: nulls and far corners aside), and the most dipoles used."""
    sol = solve(spec, F_HZ)
    st, k, cur = sol.structure, sol.k, sol.segment_current_a
    xs = np.linspace(-25, 25, 31) + 0.37
    gx, gy = np.meshgrid(xs, xs)
    worst_e = worst_h = 0.0
    count = 0
    for z in heights:
        pts = np.c_[gx.ravel(), gy.ravel(), np.full(gx.size, z)]
        pts = pts[point_segment_distances(pts[:, None, :], st.start_m[None], st.end_m[None]).min(1) > 0.05]
        tab = g.structure_table(st, k, pts)
        e_ref, h_ref = g.remainder_fields(tab, *_fine(st, k, cur), pts)
        e_tot, h_tot = near_fields(st, k, cur, pts)
        src, mom = g._remainder_dipoles(st, k, cur, pts)
        e, h = g.remainder_fields(tab, src, mom, pts)
        ne, nh = np.linalg.norm(e_tot, axis=1), np.linalg.norm(h_tot, axis=1)
        worst_e = max(worst_e, np.max(np.linalg.norm(e - e_ref, axis=1) / np.maximum(ne, 0.1 * ne.max())))
        worst_h = max(worst_h, np.max(np.linalg.norm(h - h_ref, axis=1) / np.maximum(nh, 0.1 * nh.max())))
        count = max(count, len(src))
    return worst_e, worst_h, count, st.num_segments


@pytest.mark.parametrize("name", list(CASES))
def test_remainder_dipoles_agree_with_eight_nodes_per_segment(name):
    # Within 0.3 % of the field (the tables' own interpolation error, which the results state) at maps on the
    # ground, 0.5 m and 1.5 m up; measured worst 0.24 % (E, 1.5 m above the vertical's base), 0.02 % for the dipoles
    # and the inverted V (which take the run rule: 10 dipoles for 20 segments, 16 for 30, 9 for 31), 0.11 % (H at
    # ground level) for the long wire (42 for 120; against the direct Sommerfeld integral there 0.16 %, the
    # per-segment rule 0.08 %).
    e, h, count, ns = _worst_errors(CASES[name])
    assert e < 3e-3 and h < 3e-3, (e, h)
    if "vertical" not in name:
        assert count < ns            # the run rule took the high horizontal runs with fewer dipoles


def test_the_earlier_one_node_per_height_rule_fails_that_check(monkeypatch):
    # The check above can fail: the rule used before (one node per segment length / height sum, no run rule) errs
    # by twice the bound beside and above the radials of a ground-mounted vertical on this grid (0.68 % measured;
    # 3.9 % in H at ground level on a 0.4 m grid).
    monkeypatch.setattr(g, "FIELD_NODES_PER_HEIGHT", 1.0)
    monkeypatch.setattr(g, "FIELD_NODES_PER_HEIGHT_SLOPED", 1.0)
    monkeypatch.setattr(g, "RUN_NODES_PER_HEIGHT", 0.0)
    e, h, _, _ = _worst_errors(CASES["vertical with radials 0.3 m up"])
    assert max(e, h) > 5e-3


def test_run_rule_matches_the_current_moments_exactly():
    # The run rule's moments integrate the run's current against polynomials of degree below n exactly: the total
    # moment (degree 0) and the first moment (degree 1) equal those of the 8-node rule (to rounding).
    sol = solve(CASES["dipole 8 m up"], F_HZ)
    st, k, cur = sol.structure, sol.k, sol.segment_current_a
    idx = np.arange(st.num_segments)
    src, mom = g._run_dipoles(st, cur, idx, 6, g._segment_nodes(st, k, g._RUN_MOMENT_NODES))
    fs, fm = _fine(st, k, cur)
    assert np.allclose(mom.sum(0), fm.sum(0), rtol=1e-10, atol=1e-12 * np.abs(fm).max())
    assert np.allclose((src[:, 0, None] * mom).sum(0), (fs[:, 0, None] * fm).sum(0), rtol=1e-10,
                       atol=1e-10 * np.abs(fm).max())
