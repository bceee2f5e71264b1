"""The coax shield's outer surface as a conductor (rfsafe.antenna.wire.shield): geometry, common-mode
current, the choke's limit (balanced feed), the choke sweep and the required-choke search."""

import math

import numpy as np
import pytest

from rfsafe.antenna.wire import WireAntennaSpec, solve
from rfsafe.antenna.wire.model import check_wire_antenna
from rfsafe.antenna.wire.shield import (CHOKE_SCAN_OHM, ChokeSweep, common_mode_current, expand_shield,
                                        required_choke_ohm)
from rfsafe.errors import InputError

F_HZ = 7.1e6
DIPOLE = {"ground": "perfect",
          "wires": [{"label": "dipole", "points_m": [[-10.05, 0, 8], [10.05, 0, 8]], "radius_m": 0.001}],
          "feeds": [{"wire": "dipole", "position": 0.5}]}
ROUTE_OPEN = {"joins": "start-side", "route_m": [[0, 0, 1.0], [3.0, 2.5, 1.0]], "radius_m": 0.005, "far_end": "open"}
PLACES = np.array([[3.0, 2.0, 1.2], [4.0, 3.0, 1.5], [0.0, 6.0, 1.5]])


def spec(shield=None, **extra):
    d = dict(DIPOLE, **extra)
    if shield is not None:
        d["shield"] = shield
    return WireAntennaSpec.model_validate(d)


def test_expansion_cuts_the_fed_wire_and_steps_the_radius_by_at_most_two():
    s = spec(ROUTE_OPEN)
    ex = expand_shield(s, check_wire_antenna(s))
    w = ex.spec.wires
    # The two parts of the dipole meet at the feed point and keep its length (construction).
    assert w[0].points_m[-1] == w[1].points_m[0] == [0.0, 0.0, 8.0]
    assert w[0].points_m[0] == [-10.05, 0, 8] and w[1].points_m[-1] == [10.05, 0, 8]
    radii = [0.001] + [w[i].radius_m for i in ex.route_wires]
    assert radii[-1] == 0.005
    assert all(max(a, b) / min(a, b) <= 2 + 1e-12 for a, b in zip(radii[:-1], radii[1:]))
    # The source sits on the inner conductor's part (the end side here), at the junction.
    assert ex.spec.feeds[0].wire == 1 and ex.spec.feeds[0].position == 0.0
    # Route length: 7 m down, then 3.905 m across (construction).
    assert ex.route_length_m == pytest.approx(7.0 + math.hypot(3.0, 2.5), rel=1e-12)


def _max_cm(sol):
    return common_mode_current(sol, 100.0).max_current_a_rms


def test_choke_drives_the_solution_toward_the_balanced_feed():
    # As the choke's impedance grows, the common-mode current and the field near the route fall
    # toward the balanced-feed solution (the same dipole without the shield): common practice for
    # choke baluns. The limit keeps the isolated shield as a parasitic conductor, which the balanced
    # model leaves out: fields agree within 3 % there (its induced current is under 1 % of the
    # unchoked common-mode current).
    balanced = solve(spec(), F_HZ)
    e_bal, h_bal = balanced.fields_rms(PLACES, 100.0)
    currents, e_near = [], []
    for z in (None, 30.0, 300.0, 3000.0, 3e4, 3e5):
        sh = dict(ROUTE_OPEN, **({} if z is None else {"choke": {"resistance_ohm": z}}))
        sol = solve(spec(sh), F_HZ)
        currents.append(_max_cm(sol))
        e, h = sol.fields_rms(PLACES, 100.0)
        e_near.append(e[0])
    # Falling while the choke sets the current; beyond ~30 kohm what is left is the current the dipole
    # induces on the (now isolated) shield, which no choke at the feed removes.
    assert all(b < a for a, b in zip(currents[:4], currents[1:5]))
    assert max(currents[4:]) < 0.01 * currents[0]
    assert all(b < a for a, b in zip(e_near[:4], e_near[1:4]))      # falling while the choke matters
    assert e_near[0] > 5 * e_bal[0]                                 # the unchoked shield dominates here
    assert e[0] == pytest.approx(e_bal[0], rel=0.03)
    np.testing.assert_allclose(e, e_bal, rtol=0.03)
    np.testing.assert_allclose(h, h_bal, rtol=0.03)
    assert sol.feed_impedance_ohm[0] == pytest.approx(balanced.feed_impedance_ohm[0], rel=0.01)


def test_choke_sweep_equals_a_new_solution():
    # Sherman-Morrison (rank-one update) is exact: the swept fields equal a fresh solve (1e-9,
    # rounding of two dense solves).
    base = solve(spec(ROUTE_OPEN), F_HZ)
    sweep = ChokeSweep(base, PLACES)
    zs = np.array([50.0, 400 + 900j, 2000 - 500j])
    e_all, _ = sweep.fields_rms(zs, 100.0)          # vectorised over choke values
    assert e_all.shape == (3, len(PLACES))
    for z in (50.0, 400 + 900j, 2000 - 500j):
        direct = solve(spec(dict(ROUTE_OPEN, choke={"resistance_ohm": z.real if isinstance(z, complex) else z,
                                                    "reactance_ohm": z.imag if isinstance(z, complex) else 0.0})),
                       F_HZ)
        e_s, h_s = sweep.fields_rms(z, 100.0)
        e_d, h_d = direct.fields_rms(PLACES, 100.0)
        np.testing.assert_allclose(e_s, e_d, rtol=1e-9)
        np.testing.assert_allclose(e_all[list(zs).index(z)], e_d, rtol=1e-9)
        np.testing.assert_allclose(h_s, h_d, rtol=1e-9)
        assert sweep.max_common_mode_a_rms(z, 100.0) == pytest.approx(_max_cm(direct), rel=1e-9)


def test_open_far_end_carries_no_current_and_a_grounded_one_does():
    # Boundary conditions: the current vanishes at a free wire end; a wire end on a perfect ground
    # carries current into its image (image theory, Balanis Sec. 4.7).
    open_ = common_mode_current(solve(spec(ROUTE_OPEN), F_HZ), 100.0)
    assert open_.current_a_rms[-1] == 0.0
    grounded = dict(ROUTE_OPEN, route_m=ROUTE_OPEN["route_m"] + [[3.0, 2.5, 0.0]], far_end="ground")
    cm = common_mode_current(solve(spec(grounded), F_HZ), 100.0)
    assert cm.current_a_rms[-1] > 0.01 * cm.max_current_a_rms


def test_required_choke_is_the_root_of_a_monotone_ratio():
    # ratio(z) = (100 / |z|)^2 reaches 1 at |z| = 100 ohm exactly (closed form); Brent's root finder
    # to xtol 1e-4 in ln|z|.
    need, note = required_choke_ohm(lambda z: (100.0 / np.maximum(np.abs(z), 1e-9)) ** 2)
    assert need == pytest.approx(100.0, rel=2e-4)
    assert note.startswith("resistive choke")


def test_required_choke_takes_the_last_crossing_when_the_ratio_is_not_monotone():
    # A choke can resonate with the shield: the ratio dips below 1 near 10 ohm, rises above it near
    # 1 kohm and falls below again at 20 kohm. The answer must be the 20 kohm crossing (conservative).
    def ratio(z):
        m = np.maximum(np.abs(np.asarray(z)), 1e-300)
        return 3.0 / (1 + m / 5) + 2.0 * np.exp(-(np.log10(m) - 3) ** 2 / 0.1) + (20e3 / m) ** 0.5 * 0.5
    need, _ = required_choke_ohm(ratio)
    assert ratio(need) == pytest.approx(1.0, abs=1e-6)
    assert need > 1e3
    assert np.all(ratio(CHOKE_SCAN_OHM[CHOKE_SCAN_OHM >= need]) <= 1 + 1e-9)


def test_required_choke_reports_none_needed_and_not_reachable():
    assert required_choke_ohm(lambda z: np.full(np.shape(z), 0.5))[0] == 0.0
    need, note = required_choke_ohm(lambda z: np.full(np.shape(z), 1.5))
    assert need is None and "no resistive choke up to 1e+06 ohm" in note


@pytest.mark.parametrize("shield, extra, message", [
    (dict(ROUTE_OPEN, far_end="ground"), {},
     r"^shield\.far_end: \"ground\" needs the last route point on a perfect ground"),
    (dict(ROUTE_OPEN, route_m=[[0, 0, 1.0], [3.0, 2.5, 0.0]]), {},
     r"^shield\.far_end: \"open\" ends on the ground"),
    (dict(ROUTE_OPEN, route_m=[[0, 0, 8.0], [3.0, 2.5, 1.0]]), {},
     r"^shield\.route_m\[0\]: \[0\.0, 0\.0, 8\.0\] repeats the previous point of the route"),
    (dict(ROUTE_OPEN, choke={"position": 1.0, "resistance_ohm": 100.0}), {},
     r"^shield\.choke\.position: 1\.0 is the open far end of the shield"),
    (dict(ROUTE_OPEN, choke={"distance_m": 50.0, "resistance_ohm": 100.0}), {},
     r"^shield\.choke\.distance_m: 50\.0 is beyond the end of the shield route"),
    (dict(ROUTE_OPEN, feed=1), {}, r"^shield\.feed: 1 is not a feed index \(accepted: 0 to 0\)$"),
    (ROUTE_OPEN, {"feeds": [{"wire": "dipole", "position": 0.0}]},
     r"^feeds\[0\]\.position: 0\.0 is a wire end: a feedline shield needs a feed inside a wire"),
    (dict(ROUTE_OPEN, route_m=[[0, 0, 7.99], [3.0, 2.5, 1.0]]), {},
     r"^shield\.route_m\[0\]: \[0\.0, 0\.0, 7\.99\] is too close to the feed point for the step"),
    (dict(ROUTE_OPEN, choke={"resistance_ohm": 100.0, "coil_q": 5.0}), {}, r"^shield\.choke\.coil_q: 5\.0 needs inductance_uh"),
])
def test_bad_shields_name_the_field(shield, extra, message):
    with pytest.raises(InputError, match=message):
        solve(spec(shield, **extra), F_HZ)


def test_declared_choke_is_reported_and_a_load_on_the_fed_wire_follows_the_cut():
    sh = dict(ROUTE_OPEN, choke={"circuit": "parallel", "resistance_ohm": 3000.0, "inductance_uh": 60.0,
                                 "capacitance_pf": 8.5, "distance_m": 2.0})
    loads = [{"wire": "dipole", "distance_m": 15.0, "inductance_uh": 1.0, "label": "coil"}]
    sol = solve(spec(sh, loads=loads), F_HZ)
    cm = common_mode_current(sol, 100.0)
    assert cm.choke_distance_m == pytest.approx(2.0, abs=0.05)    # on a node within one short segment
    assert cm.choke_impedance_ohm == sol.load_impedance_ohm[sol.shield.choke_load]
    # The coil 15 m from the west end lies on the east part, 4.95 m from the feed point.
    assert sol.structure.load_position_m[0] == pytest.approx([4.95, 0.0, 8.0], abs=1e-9)


def test_segment_currents_from_the_sparse_half_map_equal_the_dense_product():
    # The half-to-basis map is held sparse (no dense N^2 matrix, no complex copy of it): the same sums.
    from rfsafe.antenna.wire import solver

    sol = solve(spec(ROUTE_OPEN), F_HZ)
    st = sol.structure
    c = sol.basis_current_a
    whole = (st.half_to_basis.toarray() @ c).reshape(-1, 2)
    np.testing.assert_array_equal(solver.segment_currents(st, c), whole)
    np.testing.assert_array_equal(sol.segment_current_a, whole)
