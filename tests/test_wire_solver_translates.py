"""The wire solver's translated-pair shortcuts against the paths they replace.

Along a straight run of equal segments, and between runs laid along the same step vector (the
elements of an array, the straight pieces of a long wire), the geometry of segment i of one run
against segment j of the other depends on i - j only. The solver computes the fill's kernel sums and
the radiated-power kernel once per offset and looks them up per pair (``solver._translate_sums``,
``solver._power_table``); with ``solver._TRANSLATES = False`` every pair is computed on its own, as
before. The closed-form field and kernel are those of Richmond, NASA CR-2396 (1974) and Balanis,
Antenna Theory, 3rd ed., Sec. 8.5; the translation invariance of e^{-jkR}/R and sin(kR)/R is exact,
so the two routes differ only by rounding: the tolerances (1e-12 relative to the largest entry)
are some 1000 times the differences measured (up to 6e-15 on the matrix, 8e-14 on the power) and
far below the 5e-9 of the fill's other shortcuts (tests/test_wire_fill.py). A wrong offset or a
wrongly shared table would move entries by their own size.

The other rewritten steps are checked the same way: the pattern's phases shared between joined
segments against the segment-by-segment radiation integrals, the full-field blocks of distant
non-parallel pairs (grouped by kernel value) against the per-pair field, and the nodes of a wire
placed all at once against the node-by-node formula.
"""

import math

import numpy as np
import pytest

from rfsafe.antenna.wire import WireAntennaSpec, solve
from rfsafe.antenna.wire import solver as S
from rfsafe.antenna.wire.geometry import build_structure
from rfsafe.antenna.wire.loads import loaded_geometry
from rfsafe.antenna.wire.model import check_wire_antenna

F_HZ = 299_792_458.0  # lambda = 1 m
K = 2 * math.pi


def _spec(d):
    return WireAntennaSpec.model_validate(d)


def _structure(spec, f_hz=F_HZ):
    feeds = check_wire_antenna(spec)
    geo = loaded_geometry(spec, feeds)
    return build_structure(geo.spec, f_hz, geo.feed_wires, load_places=geo.load_places, wire_fields=geo.wire_fields)


def _array(side, ground="free-space", z0=-0.25):
    """Equal parallel dipoles on a square grid 0.3 lambda apart, one fed (runs that are translates)."""
    wires = [{"points_m": [[0.3 * i, 0.3 * j, z0], [0.3 * i, 0.3 * j, z0 + 0.5]], "radius_m": 0.002, "segments": 21}
             for i in range(side) for j in range(side)]
    return _spec({"ground": ground, "wires": wires, "feeds": [{"wire": 0}]})


CASES = {
    "array of dipoles": lambda: _array(3),
    "long wire fed off centre": lambda: _spec({"wires": [{"points_m": [[0, 0, 0], [6, 0, 0.5]], "radius_m": 0.002,
                                                          "segments": 151}], "feeds": [{"wire": 0, "position": 0.3}]}),
    "inverted V": lambda: _spec({"wires": [
        {"points_m": [[-2.4, 0, 0.0], [0, 0, 1.8]], "radius_m": 0.002, "segments": 60, "label": "a"},
        {"points_m": [[0, 0, 1.8], [2.4, 0, 0.0]], "radius_m": 0.002, "segments": 60}],
        "feeds": [{"wire": "a", "position": 1.0}]}),
    # horizontal elements: their images are translates too; vertical ones: reversed, not translates
    "beam over ground": lambda: _spec({"ground": "perfect", "wires": [
        {"points_m": [[-le / 2, y, 0.6], [le / 2, y, 0.6]], "radius_m": 0.00425, "segments": 21}
        for y, le in ((-0.2, 0.482), (0.0, 0.47), (0.2, 0.424))], "feeds": [{"wire": 1}]}),
    "array of verticals over ground": lambda: _array(2, "perfect", 0.1),
    "wire with a radius step": lambda: _spec({"wires": [
        {"points_m": [[0, 0, -0.5], [0, 0, 0.0]], "radius_m": 0.002, "segments": 20, "label": "a"},
        {"points_m": [[0, 0, 0.0], [0, 0, 0.5]], "radius_m": 0.003, "segments": 20}],
        "feeds": [{"wire": "a", "position": 0.5}]}),
}


def _rel(a, b):
    return float(np.max(np.abs(np.asarray(a) - np.asarray(b))) / np.max(np.abs(b)))


@pytest.fixture
def reference_path(monkeypatch):
    def use(flag):
        monkeypatch.setattr(S, "_TRANSLATES", flag)
    return use


@pytest.mark.parametrize("name", list(CASES))
def test_fill_with_translated_pairs_equals_the_pair_by_pair_fill(name, reference_path):
    st = _structure(CASES[name]())
    fast = S.impedance_matrix(st)
    reference_path(False)
    slow = S.impedance_matrix(st)
    assert _rel(fast, slow) < 1e-12


@pytest.mark.parametrize("name", list(CASES))
def test_power_check_with_translated_pairs_equals_the_pair_by_pair_sum(name, reference_path):
    sol = solve(CASES[name](), F_HZ)
    fast = S._radiated_power(sol.structure, sol.k, sol.segment_current_a)
    reference_path(False)
    slow = S._radiated_power(sol.structure, sol.k, sol.segment_current_a)
    assert fast == pytest.approx(slow, rel=1e-12)


def test_the_shortcut_is_taken_where_it_applies():
    """Runs found as expected: the fed dipole of the array is two runs (the feed node splits it), the
    radius step splits the wire, and the array's 81 run pairs come down to few distinct ones."""
    st = _structure(_array(3))
    runs = S._segment_runs(st.start_m, st.end_m, st.radius_m)
    assert sorted(runs["size"].tolist()) == [10, 11] + [21] * 8
    assert np.all(runs["run"] >= 0)
    pairs = S._translated_pairs(runs, runs, lambda i, j: st.start_m[runs["first"][i]] - st.start_m[runs["first"][j]])
    ia, _ib, rep, _inv = pairs
    assert len(ia) == 8 * 8 + 2            # the 21-segment runs with each other, each half of the fed one with itself
    assert len(rep) < len(ia) / 2          # the grid repeats its relative positions
    st = _structure(CASES["wire with a radius step"]())
    runs = S._segment_runs(st.start_m, st.end_m, st.radius_m)
    assert np.all(np.diff(st.radius_m[runs["first"]]) != 0) and len(runs["size"]) >= 2


def test_a_run_off_its_progression_is_not_taken_as_one():
    st = _structure(CASES["long wire fed off centre"]())
    s0, s1 = st.start_m.copy(), st.end_m.copy()
    runs = S._segment_runs(s0, s1, st.radius_m)
    assert len(runs["size"]) == 2                                  # the pieces either side of the feed
    s1[5, 2] += 1e-9                                               # one node moved by 2.5e-8 of a segment
    s0[6, 2] += 1e-9
    runs = S._segment_runs(s0, s1, st.radius_m)
    assert runs["run"][5] == -1 or runs["size"][runs["run"][5]] < 40


def test_pattern_phases_shared_between_joined_segments():
    """_segment_sum (one phase per node where segments join) against the radiation integrals segment by
    segment (kernel.radiation_integrals, the sinc form), for a few directions (the peak search's path)."""
    from rfsafe.antenna.wire.kernel import radiation_integrals

    sol = solve(CASES["beam over ground"](), F_HZ)
    st, seg_i = sol.structure, sol.segment_current_a
    rng = np.random.default_rng(3)
    r = rng.normal(size=(40, 3))
    r /= np.linalg.norm(r, axis=1)[:, None]
    s0, s1 = st.start_m, st.end_m
    d = np.linalg.norm(s1 - s0, axis=1)
    sdir = (s1 - s0) / d[:, None]
    fast = S._segment_sum(r, K, s0, s1, sdir, d, seg_i[:, 0], seg_i[:, 1])
    j1, j2 = radiation_integrals(K * (r @ sdir.T), d, K)
    slow = (np.exp(1j * K * (r @ s0.T)) * (seg_i[:, 0] * j1 + seg_i[:, 1] * j2)) @ sdir
    assert _rel(fast, slow) < 1e-12


def test_full_field_blocks_of_distant_pairs_equal_the_per_pair_field():
    """_general_blocks (node-shared kernel values, terms grouped) against _pair_list's per-pair closed-form
    field (kernel.segment_e_terms) with the same N_WIDE-point rule, for the legs of an inverted V."""
    st = _structure(CASES["inverted V"]())
    ts = S._test_side(st, K)
    src = S._source_side(ts, K, next(st.sources()), None)
    ip, iq = src["wide"]
    assert len(ip) > 1000
    rows = np.arange(0, 10)
    sel = np.isin(ip, rows)
    cols = np.unique(iq[sel])
    gen = S._general_blocks(ts, K, src, 0, 10, cols)
    assert _rel(S._general_blocks(ts, K, src, np.arange(10), None, cols), gen) == 0
    pos = np.searchsorted(cols, iq[sel])
    blocks = S._pair_list(ts, K, ip[sel], iq[sel], "wide", src)
    assert _rel(gen[ip[sel], :, pos, :], blocks) < 1e-12


def test_nodes_placed_at_once_equal_the_node_by_node_formula():
    """geometry._segment_wire places all nodes in one vectorised step; the earlier code placed them one
    by one (searchsorted per arc length). Same arithmetic, so the same bits."""
    from rfsafe.antenna.wire import geometry as G

    spec = _spec({"wires": [{"points_m": [[0, 0, 0], [1.0, 0.2, 0.3], [1.7, -0.4, 0.9], [2.5, 0.0, 1.0]],
                             "radius_m": 0.002, "segments": 97}], "feeds": [{"wire": 0, "position": 0.37}]})
    w = spec.wires[0]
    nodes, _feed = G._segment_wire(w, "wires[0]", [0.37], 1.0)
    # the earlier node-by-node code
    pts = np.asarray(w.points_m, dtype=float)
    piece = np.linalg.norm(np.diff(pts, axis=0), axis=1)
    cum = np.concatenate([[0.0], np.cumsum(piece)])
    total = cum[-1]
    breaks = sorted(list(cum) + [0.37 * total])
    merged = [breaks[0]]
    for b in breaks[1:]:
        if b - merged[-1] > G.JOIN_TOLERANCE_M:
            merged.append(b)
    merged[-1] = total
    sub = [merged[i + 1] - merged[i] for i in range(len(merged) - 1)]
    counts = G._allocate(w.segments, sub)

    def at(arc):
        j = min(int(np.searchsorted(cum, arc, side="right")) - 1, len(piece) - 1)
        t = (arc - cum[j]) / piece[j]
        return pts[j] + t * (pts[j + 1] - pts[j])

    arcs = [0.0]
    for i, n in enumerate(counts):
        arcs.extend(merged[i] + sub[i] * (np.arange(1, n + 1) / n))
    arcs = np.asarray(arcs)
    arcs[-1] = total
    ref = np.array([at(a) for a in arcs])
    for j, c in enumerate(cum):
        ref[int(np.argmin(np.abs(arcs - c)))] = pts[j]
    np.testing.assert_array_equal(nodes, ref)


@pytest.mark.parametrize("name", ["inverted V", "wire with a radius step", "beam over ground"])
def test_near_blocks_with_grouped_terms_equal_the_field_of_segment_e_terms(name):
    """_pair_blocks_grouped (the near pairs' blocks: self terms, neighbours, touching wires) against
    _pair_blocks, which takes the field from kernel.segment_e_terms as written in the references."""
    st = _structure(CASES[name]())
    ts = S._test_side(st, K)
    tested = 0
    for source in st.sources():
        src = S._source_side(ts, K, source, None)
        ip, iq = src["near"]
        if not len(ip):            # the images of wires above ground have none
            continue
        tested += 1
        b = np.sqrt(ts.a2[ip])
        sa, wa = S.sinh_rule(0.5 * ts.tl[ip], b, S.N_NEAR)
        sp = np.concatenate([sa, ts.tl[ip, None] - sa], axis=1)
        wp = np.concatenate([wa, wa], axis=1)
        f1, f2 = S._test_shapes(sp, ts.tl[ip, None], K)
        x = ts.t0[ip, None, :] + sp[..., None] * ts.tdir[ip, None, :]
        args = (x, wp, f1, f2, ts.tdir[ip, None], src["s0"][iq, None], src["sdir"][iq, None], src["sl"][iq, None],
                ts.a2[ip, None], K)
        assert _rel(S._pair_blocks_grouped(*args), S._pair_blocks(*args)) < 1e-12
    assert tested


def _demo(name):
    import tomllib
    from pathlib import Path

    from rfsafe.antenna.wire.model import WireFile

    path = Path(__file__).resolve().parents[1] / "reports_demo" / name
    wf = WireFile.model_validate(tomllib.loads(path.read_text()))
    return wf, wf.freq_mhz * 1e6


RUN_BASIS_CASES = dict(CASES)
RUN_BASIS_CASES["array of dipoles, 4 x 4"] = lambda: _array(4)
RUN_BASIS_CASES["long wire fed off centre, 400 segments"] = lambda: _spec({"wires": [
    {"points_m": [[0, 0, 0], [16, 0, 0.0]], "radius_m": 0.002, "segments": 401}],
    "feeds": [{"wire": 0, "position": 0.3}]})
RUN_BASIS_CASES["two wires end to end, one reversed"] = lambda: _spec({"wires": [
    {"points_m": [[0, 0, 0], [1, 0, 0.0]], "radius_m": 0.002, "segments": 30, "label": "a"},
    {"points_m": [[2, 0, 0], [1, 0, 0.0]], "radius_m": 0.002, "segments": 30}],
    "feeds": [{"wire": "a", "position": 0.5}]})


@pytest.mark.parametrize("name", list(RUN_BASIS_CASES) + ["wire_beam_3el_20m.toml", "wire_ground_plane_20m.toml",
                                                         "wire_inverted_v_40m.toml", "wire_trap_dipole_40m_20m.toml"])
def test_entries_written_per_offset_from_the_run_tables_equal_the_row_block_fill_bit_for_bit(name, monkeypatch):
    """solver._run_bases / _run_basis_fill combine the same table blocks with the same operations in the same
    order as the row-block projection (weights +1 only): the matrices are identical, not merely close."""
    if name.endswith(".toml"):
        spec, f_hz = _demo(name)
        feeds = check_wire_antenna(spec)
        geo = loaded_geometry(spec, feeds)
        st = build_structure(geo.spec, f_hz, geo.feed_wires, load_places=geo.load_places, wire_fields=geo.wire_fields)
    else:
        st = _structure(RUN_BASIS_CASES[name]())
    fast = S.impedance_matrix(st)
    monkeypatch.setattr(S, "_RUN_BASES", False)
    slow = S.impedance_matrix(st)
    assert np.array_equal(fast, slow)


def test_entries_from_the_run_tables_are_most_of_an_array_and_a_long_wire():
    """The shortcut applies where it should: nearly every needed segment pair of an array of equal dipoles
    and of a long wire is left to the run tables (the row-block fill keeps the rest)."""
    for spec in (_array(4), RUN_BASIS_CASES["long wire fed off centre, 400 segments"]()):
        st = _structure(spec)
        k = 2 * math.pi * st.freq_hz / S.C0_M_S
        need, _sym = S._needed_pairs(st)
        ts = S._test_side(st, k)
        truns = S._segment_runs(st.start_m, st.end_m, st.radius_m)
        srcs = [S._source_side(ts, k, src, need, truns) for src in st.sources()]
        plan = S._run_bases(st, srcs, need, S._gather_map(st.half_to_basis))
        assert plan is not None and plan["regular"].mean() > 0.9
        assert plan["need_seg"].sum() < 0.6 * need.sum()
    st = _structure(CASES["beam over ground"]())   # two source sets (images): not taken
    k = 2 * math.pi * st.freq_hz / S.C0_M_S
    need, _sym = S._needed_pairs(st)
    ts = S._test_side(st, k)
    truns = S._segment_runs(st.start_m, st.end_m, st.radius_m)
    srcs = [S._source_side(ts, k, src, need, truns) for src in st.sources()]
    assert S._run_bases(st, srcs, need, S._gather_map(st.half_to_basis)) is None
