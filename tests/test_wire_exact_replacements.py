"""Cheaper routes of the wire code against the numpy and rfsafe routes they replace, bit for bit (issue 18).

Each replacement only saves time (an import, array operations, Python overhead); it must give the same
bits as the route it replaces, which is the reference here (kept in this file or called from numpy).
"""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from rfsafe.antenna.wire.geometry import unique_ints, unique_inverse, unique_rows
from rfsafe.antenna.wire.kernel import _leggauss, gauss_legendre_01
from rfsafe.antenna.wire.legendre_table import HALF_RULES


def _same_bits(a, b) -> bool:
    a, b = np.asarray(a), np.asarray(b)
    return a.dtype == b.dtype and a.shape == b.shape and a.tobytes() == b.tobytes()


#: The numpy release whose leggauss output the table holds (its eigenvalues come from LAPACK, whose last bits
#: may differ in another build or release; there the table stays the same rule, within rounding).
TABLE_NUMPY = "2.4.6"


@pytest.mark.parametrize("n", sorted(HALF_RULES))
def test_stored_gauss_legendre_rules_are_numpys_bit_for_bit(n):
    # the reference: numpy's own leggauss (Golub-Welsch eigenvalues, one Newton step, symmetrised)
    x, w = np.polynomial.legendre.leggauss(n)
    xs, ws = _leggauss(n)
    np.testing.assert_allclose(xs, x, rtol=0, atol=1e-15)
    np.testing.assert_allclose(ws, w, rtol=1e-14, atol=0)
    # exact for polynomials of degree 2n - 1 (Gauss-Legendre, any textbook: integral of x^k over [-1, 1])
    for k in range(2 * n):
        assert float(np.sum(ws * xs ** k)) == pytest.approx(2.0 / (k + 1) if k % 2 == 0 else 0.0, abs=1e-13)
    if np.__version__ == TABLE_NUMPY:
        assert _same_bits(xs, x) and _same_bits(ws, w)


def test_rules_beyond_the_table_come_from_numpy():
    n = max(HALF_RULES) + 3
    x, w = np.polynomial.legendre.leggauss(n)
    xs, ws = _leggauss(n)
    assert _same_bits(xs, x) and _same_bits(ws, w)
    nodes, weights = gauss_legendre_01(n)
    assert _same_bits(nodes, 0.5 * (x + 1.0)) and _same_bits(weights, 0.5 * w)


def test_the_table_covers_the_rules_of_the_fill_and_of_small_pattern_grids():
    from rfsafe.antenna.wire import solver

    # fill rules (far, wide, near), the power check's base rule, the ground's 8 points, pattern grids up to kD = 24
    assert {solver.N_FAR, solver.N_WIDE, solver.N_NEAR, solver.N_POWER, 8} | set(range(24, 49)) <= set(HALF_RULES)


@settings(max_examples=300, deadline=None)
@given(st.lists(st.integers(-2 ** 40, 2 ** 40), max_size=60), st.sampled_from(["int64", "int32", "intp", "uint8"]))
def test_unique_ints_is_np_unique(values, dtype):
    a = np.array([v % 256 for v in values] if dtype == "uint8" else
                 [v % 2 ** 31 for v in values] if dtype == "int32" else values, dtype=dtype)
    assert _same_bits(unique_ints(a), np.unique(a))


@settings(max_examples=300, deadline=None)
@given(st.lists(st.integers(-50, 50), max_size=60), st.booleans())
def test_unique_inverse_is_np_unique_with_return_inverse(values, square):
    a = np.array(values, dtype=np.intp)
    if square and len(a) >= 4:
        a = a[: (len(a) // 2) * 2].reshape(2, -1)
    u, inv = unique_inverse(a)
    ref_u, ref_inv = np.unique(a, return_inverse=True)
    assert _same_bits(u, ref_u) and _same_bits(inv, ref_inv)


@settings(max_examples=300, deadline=None)
@given(st.lists(st.tuples(*[st.sampled_from([0.0, -0.0, 1.0, -2.5, 1e-12, 3.0, float("nan"), float("inf")])] * 3),
                max_size=40),
       st.sampled_from([1.0, 0.3, 1e-9]))
def test_unique_rows_is_np_unique_axis_0(rows, scale):
    # repeated rows, negative zeros, NaN and infinities (these three handed to np.unique itself)
    a = np.array(rows, dtype=float).reshape(-1, 3) * scale
    assert _same_bits(unique_rows(a), np.unique(a, axis=0))


def test_unique_rows_of_wire_nodes():
    rng = np.random.default_rng(7)
    nodes = np.round(rng.normal(size=(50, 3)) * 10, 3)
    a = np.concatenate([nodes, nodes[::3], nodes[5:9]])
    assert _same_bits(unique_rows(a), np.unique(a, axis=0))


def _radiation_integrals_one_by_one(alpha, d, k):
    """The four F terms of kernel.radiation_integrals computed one at a time (its earlier form, the reference)."""
    s = np.sin(k * d)

    def f(x):
        return d * np.exp(0.5j * x * d) * np.sinc(x * d / (2.0 * np.pi))

    j2 = (f(alpha + k) - f(alpha - k)) / (2j * s)
    j1 = np.exp(1j * alpha * d) * (f(-alpha + k) - f(-alpha - k)) / (2j * s)
    return j1, j2


@pytest.mark.parametrize("shape", ["flat", "matrix", "scalar", "large"])
def test_radiation_integrals_stacked_are_the_terms_one_by_one(shape):
    from rfsafe.antenna.wire.kernel import radiation_integrals

    rng = np.random.default_rng(11)
    k = 2 * np.pi / 7.3
    for _ in range(50):
        if shape == "flat":      # the near-axis entries of the segment sum: one alpha per segment
            n = int(rng.integers(1, 30))
            alpha = k * rng.choice([1.0, -1.0], n) * (1 - rng.uniform(0, 1e-3, n) * rng.integers(0, 2, n))
            d = rng.uniform(0.05, 0.7, n)
        elif shape == "matrix":  # directions x segments of one run (its length broadcast)
            alpha = k * rng.uniform(-1, 1, (int(rng.integers(1, 9)), 5))
            alpha[0, :2] = k, -k
            d = np.full(5, rng.uniform(0.05, 0.7))
        elif shape == "large":   # arrays above numpy's 256 kB for evaluating in place into temporaries
            alpha = k * rng.uniform(-1, 1, (int(rng.integers(2000, 6000)), 7))
            d = rng.uniform(0.05, 0.7, 7)
        else:
            alpha, d = k * float(rng.uniform(-1, 1)), float(rng.uniform(0.05, 0.7))
        got = radiation_integrals(alpha, d, k)
        ref = _radiation_integrals_one_by_one(alpha, d, k)
        assert all(_same_bits(g, r) for g, r in zip(got, ref))


# --- the radiation vector: real segments and images together, against one part after the other ---

def _segment_apply_one_part(r, k, setup):
    """solver._segment_apply as it was for one part (two-dimensional arrays), the reference."""
    from rfsafe.antenna.wire import solver as S

    s0, sdir, d, cur1, cur2, c1, c0, jks_i2, jks_i1, apart, s1_apart = setup
    alpha = k * (r @ sdir.T)
    p0 = np.exp(1j * k * (r @ s0.T))
    p1 = np.empty_like(p0)
    p1[:, :-1] = p0[:, 1:]
    if s1_apart is not None:
        p1[:, apart] = np.exp(1j * k * (r @ s1_apart.T))
    den = k * k - alpha * alpha
    amp = p1 * (c1 + alpha * jks_i2)
    amp += p0 * (c0 - alpha * jks_i1)
    near = np.abs(den) < S._NEAR_AXIS * k * k
    with np.errstate(divide="ignore", invalid="ignore"):
        amp /= den
    if near.any():
        a_n = alpha[near]
        qn = np.nonzero(near)[1]
        j1, j2 = _radiation_integrals_one_by_one(a_n, d[qn], k)
        amp[near] = p0[near] * (cur1[qn] * j1 + cur2[qn] * j2)
    return amp @ sdir


def _run_vector_one_part(r, k, setup):
    """solver._run_vector as it was for one part, the reference."""
    from rfsafe.antenna.wire import solver as S

    runs, d, sdir = setup["runs"], setup["d"], setup["sdir"]
    nb, na, nr = setup["nb"], setup["na"], len(runs)
    s0, cur1, cur2 = setup["s0"], setup["cur1"], setup["cur2"]
    alpha = k * (r @ sdir.T)
    ad = (alpha * d).T.reshape(-1)
    zb = S._powers(np.exp(1j * ad), nb).reshape(nr, len(r), nb)
    za = S._powers(np.exp(1j * nb * ad), na).reshape(nr, len(r), na)
    mix = np.matmul(zb, setup["coef"]).reshape(nr, len(r), 2, na)
    mix *= za[:, :, None, :]
    poly = mix.sum(axis=-1).transpose(1, 2, 0)
    den = k * k - alpha * alpha
    amp = np.exp(1j * k * (r @ setup["s0_first"].T)) * (poly[:, 0] + setup["jks"] * alpha * poly[:, 1])
    near = np.abs(den) < S._NEAR_AXIS * k * k
    with np.errstate(divide="ignore", invalid="ignore"):
        amp /= den
    amp[near] = 0.0
    out = amp @ sdir
    for j in np.flatnonzero(near.any(axis=0)):
        a, b = runs[j]
        rn = np.flatnonzero(near[:, j])
        j1, j2 = _radiation_integrals_one_by_one(k * (r[rn] @ sdir[j])[:, None] * np.ones(b - a),
                                                 np.full(b - a, d[j]), k)
        p0 = np.exp(1j * k * (r[rn] @ s0[a:b].T))
        out[rn] += np.sum(p0 * (cur1[a:b] * j1 + cur2[a:b] * j2), axis=1)[:, None] * sdir[j]
    return out


def _radiation_vector_part_by_part(st, k, seg_i, rhat):
    """solver._Radiator as it was: each part (real, image) on its own, pieces chunked, added in order."""
    import math

    from rfsafe.antenna.wire import solver as S

    out = np.zeros(rhat.shape[:-1] + (3,), dtype=complex)
    flat = rhat.reshape(-1, 3)
    res = out.reshape(-1, 3)
    for s0, s1, _r, sign, _d in st.sources():
        sd = s1 - s0
        d = np.linalg.norm(sd, axis=1)
        sdir = sd / d[:, None]
        cur1, cur2 = sign * seg_i[:, 0], sign * seg_i[:, 1]
        runs = [(a, b) for a, b in S._uniform_runs(s0, s1) if b - a >= S._RUN_MIN]
        single = np.ones(len(s0), dtype=bool)
        for a, b in runs:
            single[a:b] = False
        one = np.flatnonzero(single)
        width = [math.isqrt(b - a) + 1 for a, b in runs]
        setups = [S._run_setup(k, s0, s1, cur1, cur2, [r for r, w in zip(runs, width) if w == u])
                  for u in sorted(set(width))]
        if len(one):
            seg = S._segment_setup(k, s0[one], s1[one], sdir[one], d[one], cur1[one], cur2[one])
            step = max(1, S._CHUNK // len(seg[0]))
            for i in range(0, len(flat), step):
                res[i:i + step] += _segment_apply_one_part(flat[i:i + step], k, seg)
        for setup in setups:
            step = max(1, S._CHUNK // (len(setup["runs"]) * setup["width"]))
            for i in range(0, len(flat), step):
                res[i:i + step] += _run_vector_one_part(flat[i:i + step], k, setup)
    return out


def _radiator_cases():
    from rfsafe.antenna.wire import WireAntennaSpec, load_wire_file
    from rfsafe.cli.cmd_demo import demo_dir
    from rfsafe.station.load import load_station

    cases = []
    loaded = load_station(demo_dir() / "demo_wire_station.toml")
    for ant, f_hz in (("wire-dipole-40m", 7.1e6), ("wire-dipole-40m-choke", 7.05e6), ("wire-vertical-20m", 14.1e6)):
        spec = loaded.wire_specs[ant]
        cases += [(f"{ant} {g}", spec.model_copy(update={"ground": g}), f_hz) for g in ("perfect", "free-space")
                  if g == "perfect" or ant != "wire-vertical-20m"]   # a ground-fed vertical needs its ground
    for name in ("wire_beam_3el_20m", "wire_inverted_v_40m", "wire_trap_dipole_40m_20m", "wire_ground_plane_20m"):
        wf = load_wire_file(demo_dir() / f"{name}.toml")
        cases.append((name, wf, wf.freq_mhz * 1e6))
    # a long bent wire over ground (several run widths, single segments, many chunks of the pattern grid)
    cases.append(("long bent wire", WireAntennaSpec.model_validate({"ground": "perfect", "wires": [
        {"points_m": [[0, 0, 2], [30, 0, 6], [30, 12, 6], [29, 12.5, 6.2]], "radius_m": 0.001,
         "max_segment_m": 0.3}], "feeds": [{"wire": 0, "position": 0.1}]}), 21.2e6))
    return cases


@pytest.mark.parametrize("case", _radiator_cases(), ids=lambda c: c[0])
def test_radiation_vector_of_parts_together_is_part_by_part(case):
    from rfsafe.antenna.wire import solve
    from rfsafe.antenna.wire import solver as S

    _name, spec, f_hz = case
    sol = solve(spec, f_hz)
    st, k, seg_i = sol.structure, sol.k, sol.segment_current_a
    if st.soil_eps_c is not None:
        pytest.skip("real soil: the space wave takes _radiation_vector part by part")
    rad = S._Radiator(st, k, seg_i)
    rng = np.random.default_rng(5)
    axes = np.unique(np.round(st.direction, 12), axis=0)
    # one direction, the peak search's steps, up to the largest call evaluated together, beyond it (and with
    # arrays of a part between 128 and 256 kB and above), the pattern grid's sizes
    limit = getattr(rad, "stack_max_dirs", 100)
    for count in (1, 2, 8, 24, limit, limit + 1, 561, 1134, 4000):
        r = rng.normal(size=(count, 3))
        # along the wires (the sinc branches of both routes), exactly and within the near-axis cone
        r[: count // 2] = axes[rng.integers(0, len(axes), count // 2)] * rng.choice([1, -1], (count // 2, 1))
        r[: count // 2] += rng.choice([0.0, 1e-9, 1e-5, 1e-3, 3e-2], (count // 2, 1)) * rng.normal(size=(count // 2, 3))
        r /= np.linalg.norm(r, axis=1)[:, None]
        assert _same_bits(rad(r), _radiation_vector_part_by_part(st, k, seg_i, r))
    th, ph = np.meshgrid(np.linspace(0, np.pi, 17), np.linspace(0, 2 * np.pi, 33), indexing="ij")
    grid = S._directions(th, ph)   # (17, 33, 3): the shape of the pattern grid
    assert _same_bits(rad(grid), _radiation_vector_part_by_part(st, k, seg_i, grid))


def test_a_kept_impedance_matrix_is_the_fill_of_that_structure():
    """solve() reuses the matrix of an equal structure (the demo's dipole and the same dipole with a choke on its
    feedline, which solve adds after the fill): the solution is bit for bit the one with a fresh fill."""
    from rfsafe.antenna.wire import solver as S
    from rfsafe.cli.cmd_demo import demo_dir
    from rfsafe.station.load import load_station

    loaded = load_station(demo_dir() / "demo_wire_station.toml")
    plain, choke = loaded.wire_specs["wire-dipole-40m"], loaded.wire_specs["wire-dipole-40m-choke"]
    fills = []
    fill = S.impedance_matrix
    try:
        S.impedance_matrix = lambda st: fills.append(st) or fill(st)
        S._kept_matrices.clear()
        S.solve(plain, 7.05e6, field_prefix="antennas[0].wire.")
        kept = S.solve(choke, 7.05e6, field_prefix="antennas[1].wire.")
        assert len(fills) == 1                            # the dipole's matrix was reused
        S._kept_matrices.clear()
        fresh = S.solve(choke, 7.05e6, field_prefix="antennas[1].wire.")
        assert len(fills) == 2
    finally:
        S.impedance_matrix = fill
    assert _same_bits(kept.impedance_matrix_ohm, fresh.impedance_matrix_ohm)
    assert _same_bits(kept.segment_current_a, fresh.segment_current_a)
    assert (kept.gain_dbi, kept.feed_impedance_ohm, kept.radiated_power_w) == (
        fresh.gain_dbi, fresh.feed_impedance_ohm, fresh.radiated_power_w)
    # another frequency or ground is another matrix
    other = S.solve(plain, 7.1e6)
    assert other.impedance_matrix_ohm.shape == kept.impedance_matrix_ohm.shape
    assert not _same_bits(other.impedance_matrix_ohm, kept.impedance_matrix_ohm)


@pytest.mark.parametrize("order", ["perfect first", "free space first"])
@pytest.mark.parametrize("antenna", ["wire-dipole-40m", "wire-dipole-40m-choke"])
def test_small_point_sets_together_are_the_fields_one_by_one(antenna, order):
    """fields.near_fields_together on point sets small enough for the all-runs path (places, shells, keep-out
    steps): the node phases of the antenna over ground are shared with its free-space twin, bit for bit the
    fields near_fields gives each alone."""
    from rfsafe.antenna.wire import fields as F
    from rfsafe.antenna.wire import solve
    from rfsafe.cli.cmd_demo import demo_dir
    from rfsafe.station.load import load_station

    spec = load_station(demo_dir() / "demo_wire_station.toml").wire_specs[antenna]
    sols = [solve(spec.model_copy(update={"ground": g}), 7.05e6) for g in ("perfect", "free-space")]
    if order != "perfect first":
        sols = sols[::-1]
    items = [(s.structure, s.segment_current_a) for s in sols]
    rng = np.random.default_rng(2)
    for n in (1, 2, 4, 37, 120, 400):
        pts = np.column_stack([rng.uniform(-15, 15, n), rng.uniform(-5, 25, n), rng.uniform(0, 10, n)])
        pts[: n // 2, 1] = 10.0                   # on the dipole's line (beyond or beside its ends)
        pts[: n // 4, 2] = 8.0
        pts[: n // 4, 0] = rng.choice([-14.0, 12.5, 0.3], n // 4)
        geos = [F._runs(st) for st, _ in items]
        assert all(len(pts) * len(g["t"]) <= F._SMALL for g in geos) and F._run_prefixes(geos)   # the shared path
        together = F.near_fields_together(items, sols[0].k, pts)
        for (st, seg_i), (e, h) in zip(items, together):
            e1, h1 = F.near_fields(st, sols[0].k, seg_i, pts)
            assert _same_bits(e, e1) and _same_bits(h, h1)


def test_point_segment_distances_are_the_clip_and_norm_ones():
    from rfsafe.antenna.wire.geometry import point_segment_distances

    rng = np.random.default_rng(9)
    for shape in [(1, 1), (7, 1), (5, 13), (300, 40)]:
        pts = rng.normal(size=(shape[0], 1, 3)) * 5
        a0 = rng.normal(size=(shape[1], 3)) * 5
        a1 = a0 + rng.normal(size=(shape[1], 3)) * rng.choice([0.0, 1e-9, 1.0], (shape[1], 1))
        a1[0] = a0[0]                       # a zero-length segment (0/0: NaN, as before)
        pts[0, 0] = a0[-1]                  # a point on a segment end
        u = a1 - a0
        uu = np.einsum("...i,...i->...", u, u)
        w = pts - a0
        with np.errstate(divide="ignore", invalid="ignore"):
            ref = np.linalg.norm(w - np.clip(np.einsum("...i,...i->...", w, u) / uu, 0.0, 1.0)[..., None] * u, axis=-1)
            got = point_segment_distances(pts, a0, a1)
        assert _same_bits(got, ref)


def test_fields_together_refuse_what_fields_phasor_refuses():
    """unit_fields_together checks the points once for solutions on the same segments when the first check
    implies the others (solver._same_check); a point below the ground is still refused whichever comes first."""
    from rfsafe.antenna.wire import solve
    from rfsafe.antenna.wire import solver as S
    from rfsafe.cli.cmd_demo import demo_dir
    from rfsafe.errors import InputError
    from rfsafe.station.load import load_station

    spec = load_station(demo_dir() / "demo_wire_station.toml").wire_specs["wire-dipole-40m"]
    per, free = (solve(spec.model_copy(update={"ground": g}), 7.1e6) for g in ("perfect", "free-space"))
    assert S._same_check(per, free) and not S._same_check(free, per)
    for pts in (np.array([[1.0, 2.0, -0.5], [3.0, 4.0, 1.0]]),       # below the ground (the perfect one refuses)
                np.array([[0.0, 10.0, 8.0005], [3.0, 4.0, 1.0]])):    # on the dipole (both refuse)
        for order in ((per, free), (free, per)):
            fresh = [solve(spec.model_copy(update={"ground": s.ground}), 7.1e6) for s in order]
            with pytest.raises(InputError) as together:
                S.unit_fields_together(fresh, pts, field="p")
            with pytest.raises(InputError) as alone:
                for s in fresh:
                    s.fields_rms(pts, 1.0, field="p")
            assert str(together.value) == str(alone.value)


@pytest.mark.parametrize("n_points", [1, 4, 300, 2000])   # the all-runs path and the run-by-run path
def test_choke_sweep_fields_are_near_fields_one_by_one(n_points):
    from rfsafe.antenna.wire import fields as F
    from rfsafe.antenna.wire import solve
    from rfsafe.antenna.wire.shield import ChokeSweep
    from rfsafe.antenna.wire.solver import segment_currents
    from rfsafe.cli.cmd_demo import demo_dir
    from rfsafe.station.load import load_station

    spec = load_station(demo_dir() / "demo_wire_station.toml").wire_specs["wire-dipole-40m-choke"]
    sol = solve(spec, 7.05e6)
    rng = np.random.default_rng(4)
    pts = np.column_stack([rng.uniform(-12, 12, n_points), rng.uniform(-4, 20, n_points), rng.uniform(0.2, 3, n_points)])
    sw = ChokeSweep(sol, pts)
    st = sol.structure
    for c, (e, h) in ((sol.basis_current_a, (sw._ea, sw._ha)), (sw._b, (sw._eb, sw._hb))):
        e1, h1 = F.near_fields(st, sol.k, segment_currents(st, c), pts)
        assert _same_bits(e, e1) and _same_bits(h, h1)
