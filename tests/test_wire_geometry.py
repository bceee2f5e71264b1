"""Segmentation, junctions and the refusals of the wire solver (model and geometry checks).

The numbers checked here are not measurements: they follow from the geometry each test builds
(elementary analytic geometry, common practice) and from the solver's stated rules: the default
segment length lambda/40, segments between 4 radii and lambda/10 (the usual thin-wire guidance, common
practice; e.g. Balanis, Antenna Theory, ch. 8), and one basis function per interior node.
"""

import math

import numpy as np
import pytest

from rfsafe.antenna.wire import WireAntennaSpec, solve, validate_wire_antenna
from rfsafe.antenna.wire.geometry import build_structure, segment_distances
from rfsafe.antenna.wire.model import check_wire_antenna
from rfsafe.errors import InputError

F_HZ = 299_792_458.0  # lambda = 1 m exactly (c = 299 792 458 m/s, SI definition)


def spec(wires, feeds=({"wire": 0},), ground="free-space"):
    return WireAntennaSpec.model_validate({"ground": ground, "wires": list(wires), "feeds": list(feeds)})


def wire(*pts, radius=1e-3, **kw):
    return {"points_m": [list(p) for p in pts], "radius_m": radius, **kw}


def test_default_rule_is_lambda_over_40_and_feeds_and_corners_are_nodes():
    s = spec([wire((-0.3, 0, 0.5), (0, 0, 0.7), (0.3, 0, 0.5))], [{"wire": 0, "position": 0.3}])
    st = build_structure(s, F_HZ, check_wire_antenna(s))
    assert st.length_m.max() <= 1 / 40 + 1e-12  # the stated default rule, lambda/40 (1e-12: rounding)
    nodes = np.concatenate([st.start_m, st.end_m])
    assert np.min(np.linalg.norm(nodes - [0, 0, 0.7], axis=1)) < 1e-12  # the corner
    # the feed at 30 % of a two-piece wire: arc length along the polyline (elementary geometry)
    total = 2 * math.hypot(0.3, 0.2)
    along = 0.3 * total
    expect = np.array([-0.3, 0, 0.5]) + along / math.hypot(0.3, 0.2) * np.array([0.3, 0, 0.2])
    assert np.allclose(st.feed_position_m[0], expect)


def test_segments_are_split_over_pieces_by_length():
    s = spec([wire((0, 0, 0), (0, 0, 0.3), (0.1, 0, 0.3), segments=8)], [{"wire": 0, "position": 0.5}])
    st = build_structure(s, F_HZ, check_wire_antenna(s))
    assert st.num_segments == 8
    assert st.num_unknowns == 7  # free ends carry no basis function: 8 segments, 7 interior nodes


def test_junction_of_n_wires_has_n_minus_1_basis_functions_and_ground_ends_one_each():
    radials = [wire((0, 0, 0.3), (0.25 * math.cos(a), 0.25 * math.sin(a), 0.2), segments=5)
               for a in (0, 2.1, 4.2)]
    s = spec([wire((0, 0, 0.3), (0, 0, 0.55), segments=5), *radials], [{"wire": 0, "position": 0.0}])
    st = build_structure(s, F_HZ, check_wire_antenna(s))
    # 4 wires of 5 segments: 4 interior nodes each, plus n - 1 = 3 functions at the 4-wire junction
    # (current continuity, Kirchhoff's current law: common practice)
    assert st.num_unknowns == 4 * 4 + 3
    assert np.count_nonzero(st.feed_coupling) == 3  # the feed drives every junction function
    g = spec([wire((0, 0, 0), (0, 0, 0.25), segments=5)], [{"wire": 0, "position": 0.0}], ground="perfect")
    # image theory (Balanis sec. 4.7): the grounded end continues into its image, so it carries a function
    assert build_structure(g, F_HZ, check_wire_antenna(g)).num_unknowns == 5


def test_segment_distances_cover_crossing_parallel_and_end_cases():
    a0, a1 = np.array([[0, 0, 0.0]]), np.array([[1, 0, 0.0]])
    b0 = np.array([[0.5, -1, 0.2], [0, 1, 0], [2, 0, 0], [0.2, 0.3, 0]])
    b1 = np.array([[0.5, 1, 0.2], [1, 1, 0], [3, 0, 0], [0.8, 0.3, 0]])
    # distances read off the construction (elementary geometry): crossing 0.2 m above, parallel 1 m away,
    # collinear with a 1 m gap, parallel 0.3 m away
    np.testing.assert_allclose(segment_distances(a0, a1, b0, b1)[0], [0.2, 1.0, 1.0, 0.3])


@pytest.mark.parametrize("wires,feeds,ground,message", [
    ([wire((0, 0, -0.25), (0, 0, 0.25), segments=4)], [{"wire": 0}], "free-space",
     r"^wires\[0\]\.segments: 4 gives segments of 0\.125 m on wire 'wires\[0\]', longer than lambda/10 = 0\.1 m "
     r"at 299\.792 MHz \(accepted: at most lambda/10, e\.g\. segments >= 5\)$"),
    ([wire((0, 0, -0.25), (0, 0, 0.25), radius=0.004, segments=40)], [{"wire": 0}], "free-space",
     r"^wires\[0\]\.segments: 40 gives a segment of 0\.0125 m .* shorter than 4 wire radii \(0\.016 m\)"),
    ([wire((0, 0, -0.25), (0, 0, 0.25)), wire((-0.2, 0, 0.1), (0.2, 0, 0.1))], [{"wire": 0}], "free-space",
     r"^wires\[0\]: \"wires\[0\]\" touches or crosses wire 'wires\[1\]' near .* without a junction"),
    ([wire((0, 0, -0.25), (0, 0, 0.25)), wire((0, 0, 0.0), (0.2, 0, 0.1))], [{"wire": 0, "position": 0.2}],
     "free-space", r"split a wire at a T-junction"),
    ([wire((0, 0, -0.25), (0, 0, 0.25))], [{"wire": 0, "position": 1.0}], "free-space",
     r"^feeds\[0\]\.position: 1\.0 is a free end of wire 'wires\[0\]', where no current flows"),
    ([wire((0, 0, 0), (0, 0, 0.25), radius=0.003), wire((0, 0, 0), (0.25, 0, 0), radius=0.001)],
     [{"wire": 0, "position": 0.0}], "free-space",
     r"^wires\[0\]\.radius_m: 0\.003 joins wire 'wires\[1\]' of radius 0\.001 m .* within a factor of 2"),
    ([wire((-0.25, 0, 0.0008), (0.25, 0, 0.0008))], [{"wire": 0}], "perfect",
     r"^wires\[0\]: \"wires\[0\]\" comes within 0\.0016 m of its ground image"),
])
def test_geometry_that_would_give_a_wrong_answer_is_refused(wires, feeds, ground, message):
    with pytest.raises(InputError, match=message):
        solve(spec(wires, feeds, ground), F_HZ)


@pytest.mark.parametrize("data,message", [
    ({"wires": [wire((0, 0, 0), (0, 0, 1))], "feeds": [{"wire": 0}], "grund": "perfect"},
     r"^grund: is not a known key \(accepted keys: ground, soil, soil_relative_permittivity, soil_conductivity_s_m, wires, feeds, loads, shield\)$"),
    ({"wires": [wire((0, 0, 0), (0, 0, 1), radius=-1.0)], "feeds": [{"wire": 0}]},
     r"^wires\[0\]\.radius_m: -1\.0 is out of range \(accepted: > 0\)$"),
    ({"wires": [wire((0, 0, 0), (0, 0, 1), radius="1mm")], "feeds": [{"wire": 0}]},
     r"^wires\[0\]\.radius_m: \"1mm\" must be a number$"),
    ({"wires": [{"points_m": [[0, 0, 0], [0, 0]], "radius_m": 0.001}], "feeds": [{"wire": 0}]},
     r"^wires\[0\]\.points_m\[1\]: \[0, 0\] has too few items \(accepted: at least 3\)"),
    ({"wires": [wire((0, 0, 0), (0, 0, 1))], "feeds": [{"wire": "driven"}]},
     r"^feeds\[0\]\.wire: \"driven\" is not a wire label \(declared labels: none; or give the index from 0\)$"),
    ({"wires": [wire((0, 0, 0), (0, 0, 1))], "feeds": [{"wire": 3}]},
     r"^feeds\[0\]\.wire: 3 is not a wire index \(accepted: 0 to 0\)$"),
    ({"wires": [wire((0, 0, 0), (0, 0, 1), label="a"), wire((1, 0, 0), (1, 0, 1), label="a")],
      "feeds": [{"wire": "a"}]}, r"^wires\[1\]\.label: \"a\" is a duplicate label"),
    ({"wires": [wire((0, 0, 0), (0, 0, 0), (0, 0, 1))], "feeds": [{"wire": 0}]},
     r"^wires\[0\]\.points_m\[1\]: \[0\.0, 0\.0, 0\.0\] repeats the previous point"),
    ({"ground": "perfect", "wires": [wire((0, 0, -1), (0, 0, 1))], "feeds": [{"wire": 0}]},
     r"^wires\[0\]\.points_m\[0\]: \[0\.0, 0\.0, -1\.0\] is below the perfect ground"),
    ({"wires": [wire((0, 0, 0), (0, 0, 1), segments=9, max_segment_m=0.1)], "feeds": [{"wire": 0}]},
     r"^wires\[0\]\.max_segment_m: give either segments or max_segment_m, not both$"),
    ({"wires": [wire((0, 0, 0), (0, 0, 1))], "feeds": [{"wire": 0}, {"wire": 0}]},
     r"^feeds\[1\]\.position: 0\.5 is the place of feeds\[0\]"),
])
def test_bad_tables_name_the_field_and_the_value(data, message):
    with pytest.raises(InputError, match=message):
        validate_wire_antenna(data)


def test_prefix_names_the_station_path():
    with pytest.raises(InputError, match=r"^antennas\[2\]\.wire\.wires\[0\]\.radius_m: "):
        validate_wire_antenna({"wires": [wire((0, 0, 0), (0, 0, 1), radius=0.0)], "feeds": [{"wire": 0}]},
                              prefix="antennas[2].wire.")
    s = spec([wire((0, 0, -0.25), (0, 0, 0.25), segments=4)])
    with pytest.raises(InputError, match=r"^antennas\[2\]\.wire\.wires\[0\]\.segments: 4 "):
        solve(s, F_HZ, field_prefix="antennas[2].wire.")
    with pytest.raises(InputError, match=r"^freq_hz: -1\.0 must be a finite frequency > 0 Hz$"):
        solve(s, -1.0)


def test_sparse_half_map_answers_like_the_dense_matrix():
    # A junction of three wires (a half-function in two basis functions) and a plain wire: the sparse
    # half-to-basis map gives the dense matrix's entries, nonzeros (row-major), row blocks and products.
    from rfsafe.antenna.wire.geometry import HalfMap

    s = WireAntennaSpec.model_validate({
        "wires": [{"points_m": [[0, 0, 0.5], [0.3, 0, 0.5]], "radius_m": 1e-3, "segments": 5},
                  {"points_m": [[0.3, 0, 0.5], [0.6, 0.1, 0.5]], "radius_m": 1e-3, "segments": 4},
                  {"points_m": [[0.3, 0, 0.5], [0.3, 0.3, 0.5]], "radius_m": 1e-3, "segments": 4}],
        "feeds": [{"wire": 0}]})
    st = build_structure(s, F_HZ, check_wire_antenna(s))
    p = st.half_to_basis
    assert isinstance(p, HalfMap)
    dense = np.zeros(p.shape)
    for r, c, v in zip(p.rows, p.cols, p.vals):
        dense[r, c] += v
    assert np.array_equal(p.toarray(), dense)
    assert set(np.unique(dense)) <= {-1.0, 0.0, 1.0} and np.abs(dense).sum(axis=1).max() >= 2   # a junction
    assert all(np.array_equal(a, b) for a, b in zip(np.nonzero(p), np.nonzero(dense)))
    assert np.array_equal(p[3:11], dense[3:11]) and p[len(dense):].shape == (0, p.shape[1])
    ri, ci = np.meshgrid(np.arange(p.shape[0]), np.arange(p.shape[1]), indexing="ij")
    assert np.array_equal(p[ri.ravel(), ci.ravel()], dense.ravel())
    c = np.random.default_rng(1).normal(size=p.shape[1]) + 1j
    np.testing.assert_allclose(p @ c, dense @ c, rtol=0, atol=1e-15)
    m = np.arange(p.shape[0] * 2.0).reshape(2, -1)
    assert np.array_equal(m @ p, m @ dense) and np.array_equal(p.T, dense.T)
