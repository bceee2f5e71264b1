"""Shortcuts of the wire near-field path against the paths they replace (issue 18: evaluate speed).

Each shortcut only skips work; these tests check that it gives the same answer as the full path on
cases chosen to sit on both sides of its thresholds (the full path is the reference, not a number).
"""

import math

import numpy as np
import pytest

from rfsafe.antenna.wire import WireAntennaSpec, solve
from rfsafe.antenna.wire import fields as F
from rfsafe.errors import InputError

F_HZ = 14.1e6


def _bent_spec(segments=None):
    # A bent wire (three straight pieces, so several runs) and a straight one, 1 mm and 5 mm radius.
    wires = [{"label": "bent", "points_m": [[0, 0, 5], [4, 0, 5], [4, 3, 6], [1, 3, 8]], "radius_m": 0.001},
             {"label": "rod", "points_m": [[8, 0, 1], [8, 0, 6]], "radius_m": 0.005}]
    if segments is not None:
        for w in wires:
            w["segments"] = segments
    return WireAntennaSpec.model_validate({"wires": wires, "feeds": [{"wire": "bent", "position": 0.2}]})


def _full_check(sol, pts):
    """check_points with the run screen switched off (the segment-by-segment reference)."""
    saved = F._clear_of_wires
    F._clear_of_wires = lambda *a: False
    try:
        return F.check_points(sol, pts)
    finally:
        F._clear_of_wires = saved


def _outcome(fn, sol, pts):
    try:
        fn(sol, pts)
        return None
    except InputError as err:
        return str(err)


@pytest.mark.parametrize("enforce", [True, False])
def test_run_screen_refuses_exactly_what_the_segment_check_refuses(enforce):
    # Points at random from 0 to 40 radii of the wires (across the 3-radii limit), one at a time, and in
    # sets: the screened check must raise the same error (same point, same text) or pass the same points.
    sol = solve(_bent_spec(None if enforce else 4), F_HZ, enforce_limits=enforce)
    st = sol.structure
    rng = np.random.default_rng(7)
    seg = rng.integers(0, st.num_segments, 400)
    t = rng.uniform(0, 1, 400)[:, None]
    on = st.start_m[seg] + t * (st.end_m[seg] - st.start_m[seg])
    off = rng.normal(size=(400, 3))
    off /= np.linalg.norm(off, axis=1)[:, None]
    pts = on + off * rng.uniform(0, 40 * 0.005, 400)[:, None]
    pts = pts[pts[:, 2] >= 0]
    refused = 0
    for p in pts:
        full = _outcome(_full_check, sol, p[None])
        refused += full is not None
        assert _outcome(F.check_points, sol, p[None]) == full
    assert 0 < refused < len(pts)   # both sides of the limit were tried
    for chunk in np.array_split(pts, 9):
        assert _outcome(F.check_points, sol, chunk) == _outcome(_full_check, sol, chunk)
    far = np.array([[20.0, 20.0, 2.0], [-5.0, 1.0, 0.5]])
    assert F._clear_of_wires(st, far, sol.wavelength_m, sol.wavelength_m / (2 * math.pi), enforce)


def test_run_screen_keeps_the_long_segment_refusal():
    # Four segments per wire at 14.1 MHz are longer than lambda/20 (common practice limit, see fields.py):
    # a point within lambda/2pi of them is refused with limits enforced, by the screened check as by the full one.
    sol = solve(_bent_spec(4), F_HZ, enforce_limits=False)
    from dataclasses import replace
    enforced = replace(sol, limits_enforced=True)
    near = np.array([[2.0, 0.5, 5.0]])
    assert _outcome(_full_check, enforced, near) is not None
    assert _outcome(F.check_points, enforced, near) == _outcome(_full_check, enforced, near)
    assert _outcome(F.check_points, sol, near) is None


def test_run_distances_match_the_segment_distances():
    # nearest_run_distance_m against geometry.point_segment_distances minimised over every segment, within
    # the tolerance it states (points from on the wire to 30 m away).
    from rfsafe.antenna.wire.geometry import point_segment_distances

    sol = solve(_bent_spec(), F_HZ)
    st = sol.structure
    rng = np.random.default_rng(3)
    pts = np.concatenate([rng.uniform([-5, -5, 0], [15, 10, 12], (500, 3)),
                          st.start_m + rng.normal(scale=0.01, size=st.start_m.shape)])
    exact = point_segment_distances(pts[:, None, :], st.start_m[None], st.end_m[None]).min(axis=1)
    d_run, tol = F.nearest_run_distance_m(st, pts)
    assert 0 < tol < 1e-7
    assert np.max(np.abs(d_run - exact)) <= tol


@pytest.mark.parametrize("r_m", [0.05, 0.3, 1.0, 2.5, 7.0])
def test_shell_points_are_those_the_segment_distances_keep(r_m):
    # _wire_shell_points (run distances, segment distances only near the threshold) against the filter on the
    # segment distances of every point; the extra centres put shell points exactly 0.999 r_m from the rod and
    # just inside and outside it, so both branches are taken.
    from rfsafe import assess as A

    sol = solve(_bent_spec(), F_HZ)
    st = sol.structure
    nodes = np.unique(np.concatenate([st.start_m, st.end_m]), axis=0)
    rod = np.array([8.0, 0.0, 3.0])   # on the vertical rod (x = 8, y = 0)
    extra = np.array([rod - [0.001 * r_m * (1 + e), 0, 0] for e in (-1e-7, 0.0, 1e-7)])
    for centres in (nodes, np.concatenate([nodes, extra])):
        pts = (centres[:, None, :] + r_m * A._SHELL_DIRECTIONS[None]).reshape(-1, 3)
        full = pts[(pts[:, 2] >= 0) & (A._wire_distance_m(sol, pts) >= 0.999 * r_m)]
        got = A._wire_shell_points([sol], r_m, centres)
        assert got.shape == full.shape and np.array_equal(got, full)


def _dipole_over(ground, load=False):
    spec = {"ground": ground,
            "wires": [{"label": "top", "points_m": [[-5.0, 0, 6.0], [5.0, 0, 6.0]], "radius_m": 0.001},
                      {"label": "drop", "points_m": [[5.0, 0, 6.0], [5.0, 0, 2.0], [5.0, 3.0, 2.0]],
                       "radius_m": 0.001}],
            "feeds": [{"wire": "top", "position": 0.5}]}
    if load:
        spec["loads"] = [{"wire": "drop", "position": 0.5, "resistance_ohm": 50.0}]
    return WireAntennaSpec.model_validate(spec)


def test_fields_together_are_the_fields_one_by_one():
    # The same antenna over a perfect ground and in free space (common real runs, images on one only), and
    # with a load: near_fields_together gives bit for bit what near_fields gives for each alone, on a point
    # set large enough for the run-by-run path (the path that shares work).
    sols = [solve(_dipole_over("perfect"), F_HZ), solve(_dipole_over("free-space"), F_HZ)]
    try:
        sols.append(solve(_dipole_over("perfect", load=True), F_HZ))
    except InputError:   # no loads in this schema version: two structures still share their runs
        pass
    x, y, z = np.meshgrid(np.linspace(-12, 12, 41), np.linspace(-8, 10, 31), [0.5, 1.5, 2.5])
    pts = np.column_stack([x.ravel(), y.ravel(), z.ravel()])
    geo = F._runs(sols[0].structure)
    assert len(pts) * len(geo["t"]) > F._SMALL
    together = F.near_fields_together([(s.structure, s.segment_current_a) for s in sols], sols[0].k, pts)
    for s, (e, h) in zip(sols, together):
        e1, h1 = F.near_fields(s.structure, s.k, s.segment_current_a, pts)
        assert np.array_equal(e, e1) and np.array_equal(h, h1)


def test_unit_fields_together_fill_each_solution_with_its_own_fields():
    from rfsafe.antenna.wire.solver import unit_fields_together

    a, b = solve(_dipole_over("perfect"), F_HZ), solve(_dipole_over("free-space"), F_HZ)
    ref_a, ref_b = solve(_dipole_over("perfect"), F_HZ), solve(_dipole_over("free-space"), F_HZ)
    x, y = np.meshgrid(np.linspace(-12, 12, 61), np.linspace(-8, 10, 41))
    pts = np.column_stack([x.ravel(), y.ravel(), np.full(x.size, 1.5)])
    unit_fields_together([a, b], pts, field="map")
    assert len(a._unit_fields) == 2 and len(b._unit_fields) == 2     # the kept set and the point count
    for s, r in ((a, ref_a), (b, ref_b)):
        for got, want in zip(s.fields_rms(pts, 400.0), r.fields_rms(pts, 400.0)):
            assert np.array_equal(got, want)
    with pytest.raises(InputError):   # a point on the wire: refused as fields_phasor refuses it
        unit_fields_together([ref_a, ref_b], np.array([[0.0, 0.0, 6.0]] + pts.tolist()), field="map")


def test_maps_computed_together_equal_the_maps_one_by_one(monkeypatch):
    # The wire demo (invented station: two configurations on one antenna at 7.05 MHz, a choke variant, ground
    # bounds): the near-field maps with their fields shared ahead (assess._map_fields_together) against the maps
    # each computed alone, bit for bit.
    from pathlib import Path

    from rfsafe import assess as A
    from rfsafe.antenna.wire import solver as S
    from rfsafe.station.load import load_station

    path = Path(__file__).resolve().parent.parent / "reports_demo" / "demo_wire_station.toml"

    def maps():
        S._shared.clear()
        A._kept_values.clear()
        result, _ = A.assess_with_emitters(load_station(path))
        return [c.near_field_map for c in result.configurations]

    together = maps()
    monkeypatch.setattr(A, "_map_fields_together", lambda loaded: None)
    alone = maps()
    assert sum(m is not None for m in alone) == 4
    for a, b in zip(together, alone):
        for env in ("controlled", "uncontrolled"):
            assert np.array_equal(a.e_ratio[env], b.e_ratio[env], equal_nan=True)
            assert np.array_equal(a.h_ratio[env], b.h_ratio[env], equal_nan=True)
