"""The fast matrix fill, pattern and power check of the wire solver against their direct evaluation.

The solver shares work between pairs (one kernel value per test point and source *node*, the upper
triangle of a symmetric matrix mirrored, straight runs of equal segments summed as polynomials,
the symmetric power double sum taken once per pair). Each shortcut is exact algebra; these tests
compare it with the direct evaluation of the same formulas -- every segment pair with the full
closed-form filament field (Richmond, NASA CR-2396, 1974; Balanis, Antenna Theory, 3rd ed., Sec. 8.5),
no symmetry assumed; every segment's radiation integral on its own -- on the structures the solver
serves: dipole, inverted V, vertical over a perfect ground, beams, a trap dipole with its feedline
shield, a junction of two radii, a long wire. The tolerance, 5e-9 relative to the largest entry, is
that of the mirrored entries: the direct Z is symmetric only up to the error of the 8-point test
quadrature (measured 1e-13 to 1.4e-9, the largest on the demo inverted V), so mirroring changes
an entry by no more than the quadrature already does -- far below the discretisation error of
the method (per cent level, see test_wire_solver.py). The other shortcuts agree to 1e-11 or better.
"""

import math

import numpy as np
import pytest

from rfsafe.antenna.wire import WireAntennaSpec, load_wire_file, solve
from rfsafe.antenna.wire import solver as S
from rfsafe.antenna.wire.geometry import build_structure
from rfsafe.antenna.wire.kernel import gauss_legendre_01, radiation_integrals, sinh_rule
from rfsafe.antenna.wire.loads import loaded_geometry
from rfsafe.antenna.wire.model import check_wire_antenna
from rfsafe.cli.cmd_demo import demo_dir

F_HZ = 299_792_458.0  # lambda = 1 m
K = 2 * math.pi


def _spec(d):
    return WireAntennaSpec.model_validate(d)


def _beam(height=None):
    z = 0.0 if height is None else height
    wires = [{"points_m": [[-le / 2, y, z], [le / 2, y, z]], "radius_m": 0.00425, "segments": 21}
             for y, le in ((-0.2, 0.482), (0.0, 0.47), (0.2, 0.424))]
    return _spec({"ground": "free-space" if height is None else "perfect", "wires": wires, "feeds": [{"wire": 1}]})


CASES = {
    "dipole": lambda: (_spec({"wires": [{"points_m": [[0, 0, -0.24], [0, 0, 0.24]], "radius_m": 0.003,
                                         "segments": 21}], "feeds": [{"wire": 0}]}), F_HZ),
    "inverted V over ground": lambda: (_spec({"ground": "perfect", "wires": [
        {"points_m": [[-0.3, 0, 0.3], [0, 0, 0.5]], "radius_m": 0.002, "segments": 15},
        {"points_m": [[0, 0, 0.5], [0.3, 0, 0.3]], "radius_m": 0.002, "segments": 15}],
        "feeds": [{"wire": 0, "position": 1.0}]}), F_HZ),
    "vertical over ground": lambda: (_spec({"ground": "perfect", "wires": [
        {"points_m": [[0, 0, 0], [0, 0, 0.25]], "radius_m": 0.002, "segments": 15}],
        "feeds": [{"wire": 0, "position": 0.0}]}), F_HZ),
    "beam": lambda: (_beam(), F_HZ),
    "beam over ground": lambda: (_beam(0.6), F_HZ),
    "radials of another radius": lambda: (_spec({"ground": "perfect", "wires": [
        {"points_m": [[0, 0, 0.02], [0, 0, 0.27]], "radius_m": 0.002, "segments": 16},
        {"points_m": [[0, 0, 0.02], [0.25, 0, 0.02]], "radius_m": 0.0015, "segments": 12},
        {"points_m": [[0, 0, 0.02], [-0.25, 0, 0.02]], "radius_m": 0.0015, "segments": 12}],
        "feeds": [{"wire": 0, "position": 0.0}]}), F_HZ),
    "long wire": lambda: (_spec({"wires": [{"points_m": [[0, 0, 0], [6, 0, 0.5]], "radius_m": 0.002,
                                            "segments": 151}], "feeds": [{"wire": 0, "position": 0.3}]}), F_HZ),
}


def _demo_case(name):
    wf = load_wire_file(demo_dir() / name)
    return wf, wf.freq_mhz * 1e6


CASES["trap dipole with its shield (demo)"] = lambda: _demo_case("wire_trap_dipole_40m_20m.toml")
CASES["ground plane with radials (demo)"] = lambda: _demo_case("wire_ground_plane_20m.toml")
CASES["inverted V (demo)"] = lambda: _demo_case("wire_inverted_v_40m.toml")


def _structure(spec, f_hz):
    feeds = check_wire_antenna(spec)
    geo = loaded_geometry(spec, feeds)
    return build_structure(geo.spec, f_hz, geo.feed_wires, load_places=geo.load_places, wire_fields=geo.wire_fields)


def direct_fill(st):
    """Z by the direct route: every segment pair, 8 Gauss-Legendre points (the sinh rule for pairs
    closer than a test-segment length), the closed-form field of both source halves at each point,
    the dense projection p.T S p; no symmetry used."""
    k = 2 * math.pi * st.freq_hz / S.C0_M_S
    t0 = st.start_m
    tl = np.linalg.norm(st.end_m - t0, axis=1)
    tdir = (st.end_m - t0) / tl[:, None]
    ns = len(t0)
    a2 = np.broadcast_to(st.radius_m[:, None] ** 2, (ns, ns))
    s_mat = np.zeros((2 * ns, 2 * ns), dtype=complex)
    xg, wg = gauss_legendre_01(S.N_FAR)
    for s0, s1, _r, sign, dist in st.sources():
        sl = np.linalg.norm(s1 - s0, axis=1)
        sdir = (s1 - s0) / sl[:, None]
        s = tl[:, None] * xg
        w = tl[:, None] * wg
        f1, f2 = S._test_shapes(s, tl[:, None], k)
        x = t0[:, None, :] + s[..., None] * tdir[:, None, :]
        blocks = S._pair_blocks(x[:, None], w[:, None], f1[:, None], f2[:, None], tdir[:, None, None],
                                s0[None, :, None], sdir[None, :, None], sl[None, :, None], a2[..., None], k)
        ip, iq = np.nonzero(dist < tl[:, None])
        sa, wa = sinh_rule(0.5 * tl[ip], np.sqrt(a2[ip, iq]), S.N_NEAR)
        s = np.concatenate([sa, tl[ip, None] - sa], axis=1)
        w = np.concatenate([wa, wa], axis=1)
        f1, f2 = S._test_shapes(s, tl[ip, None], k)
        x = t0[ip, None, :] + s[..., None] * tdir[ip, None, :]
        blocks[ip, iq] = S._pair_blocks(x, w, f1, f2, tdir[ip, None], s0[iq, None], sdir[iq, None],
                                        sl[iq, None], a2[ip, iq, None], k)
        s_mat += sign * blocks.transpose(0, 2, 1, 3).reshape(2 * ns, 2 * ns)
    p = st.half_to_basis
    return p.T @ s_mat @ p


def direct_radiation_vector(st, k, seg_i, rhat):
    """N(r_hat) segment by segment with the sinc form of kernel.radiation_integrals (no shortcut)."""
    flat = np.asarray(rhat).reshape(-1, 3)
    out = np.zeros((len(flat), 3), dtype=complex)
    for s0, s1, _r, sign, _d in st.sources():
        d = np.linalg.norm(s1 - s0, axis=1)
        sdir = (s1 - s0) / d[:, None]
        j1, j2 = radiation_integrals(k * (flat @ sdir.T), d, k)
        amp = sign * np.exp(1j * k * (flat @ s0.T)) * (seg_i[:, 0] * j1 + seg_i[:, 1] * j2)
        out += amp @ sdir
    return out.reshape(np.shape(rhat)[:-1] + (3,))


def _rel(a, b):
    return float(np.max(np.abs(np.asarray(a) - np.asarray(b))) / np.max(np.abs(b)))


@pytest.mark.parametrize("name", list(CASES))
def test_fast_fill_equals_the_direct_fill(name):
    st = _structure(*CASES[name]())
    assert _rel(S.impedance_matrix(st), direct_fill(st)) < 5e-9


def test_the_matrix_is_symmetric_where_it_is_mirrored_and_not_at_a_radius_step():
    # Reciprocity of the Galerkin matrix (Harrington 1968, Sec. 4): symmetric on wires of one radius;
    # at a radius step the reduced kernel differs between the two sides (see impedance_matrix), so
    # those entries are computed both ways and the fast fill still equals the direct one (above).
    for name in ("dipole", "inverted V over ground", "beam over ground", "long wire", "inverted V (demo)"):
        z = direct_fill(_structure(*CASES[name]()))
        assert _rel(z, z.T) < 5e-9, name
    z = direct_fill(_structure(*CASES["radials of another radius"]()))
    assert _rel(z, z.T) > 1e-3


@pytest.mark.parametrize("count", [2000, 56, 1])   # the pattern grid, a step of the peak search, one direction
@pytest.mark.parametrize("name", ["beam over ground", "long wire", "inverted V over ground", "dipole"])
def test_straight_runs_give_the_segment_by_segment_radiation_vector(name, count):
    sol = solve(*CASES[name]())
    st, seg_i = sol.structure, sol.segment_current_a
    rng = np.random.default_rng(3)
    r = rng.normal(size=(max(count, 40), 3))
    r[:40] = st.direction[0] + 1e-4 * rng.normal(size=(40, 3))   # along the wire: the sinc branch
    r = r[-count:] if count > 1 else r[:1]
    r /= np.linalg.norm(r, axis=1)[:, None]
    assert _rel(S._radiation_vector(st, K, seg_i, r), direct_radiation_vector(st, K, seg_i, r)) < 1e-9


@pytest.mark.parametrize("name", ["beam over ground", "inverted V over ground", "dipole"])
def test_power_check_equals_the_full_double_sum(name):
    sol = solve(*CASES[name]())
    st, seg_i, k = sol.structure, sol.segment_current_a, sol.k
    # the full double sum of _radiated_power's docstring, every ordered pair of points
    d = st.length_m
    xg, wg = gauss_legendre_01(S.N_POWER)
    s, w = d[:, None] * xg, d[:, None] * wg
    sk = np.sin(k * d)[:, None]
    cur = (seg_i[:, :1] * np.sin(k * (d[:, None] - s)) + seg_i[:, 1:] * np.sin(k * s)) / sk * w
    chg = k * (-seg_i[:, :1] * np.cos(k * (d[:, None] - s)) + seg_i[:, 1:] * np.cos(k * s)) / sk * w
    a = (st.start_m[:, None, :] + s[..., None] * st.direction[:, None, :]).reshape(-1, 3)
    ja = (cur[..., None] * st.direction[:, None, :]).reshape(-1, 3)
    total = 0.0
    for s0, s1, _r, sign, _d in st.sources():
        sdir = (s1 - s0) / d[:, None]
        b = (s0[:, None, :] + s[..., None] * sdir[:, None, :]).reshape(-1, 3)
        jb = (sign * cur[..., None] * sdir[:, None, :]).reshape(-1, 3)
        r = np.linalg.norm(a[:, None] - b[None], axis=-1)
        kern = np.where(r > 0, np.sin(k * r) / np.where(r > 0, r, 1.0), k)
        total += np.real(k * np.einsum("ai,ab,bi->", ja.conj(), kern, jb)
                         - np.einsum("a,ab,b->", chg.reshape(-1).conj(), kern, sign * chg.reshape(-1)) / k)
    assert S._radiated_power(st, k, seg_i) == pytest.approx(S.ETA0_OHM / (8 * math.pi) * total, rel=1e-11)


@pytest.mark.parametrize("name", ["trap dipole with its shield (demo)", "beam over ground", "inverted V over ground",
                                  "vertical over ground"])
def test_solution_equals_the_one_from_the_direct_fill_and_pattern(name, monkeypatch):
    """Feed impedance, currents, gain, front-to-back, radiated power and near fields with the fast
    routes and with the direct ones (monkeypatched in)."""
    spec, f_hz = CASES[name]()
    fast = solve(spec, f_hz)
    monkeypatch.setattr(S, "impedance_matrix", direct_fill)
    monkeypatch.setattr(S, "_radiation_vector", direct_radiation_vector)
    slow = solve(spec, f_hz)
    # trap resonance: the matrix with loads is ill-conditioned, rounding is amplified to ~1e-8
    tol = 1e-6
    assert _rel(fast.feed_impedance_ohm, slow.feed_impedance_ohm) < tol
    assert _rel(fast.basis_current_a, slow.basis_current_a) < tol
    assert fast.gain_dbi == pytest.approx(slow.gain_dbi, abs=1e-6)
    assert fast.front_to_back_db == pytest.approx(slow.front_to_back_db, abs=1e-4)
    assert fast.radiated_power_w == pytest.approx(slow.radiated_power_w, rel=tol)
    st = fast.structure
    rng = np.random.default_rng(5)
    lo, hi = st.start_m.min(0), st.start_m.max(0)
    pts = lo + (hi - lo + 0.2 * fast.wavelength_m) * rng.random((200, 3)) + [0, 0.05 * fast.wavelength_m, 0.01]
    pts[:, 2] = np.abs(pts[:, 2]) + 0.02 * fast.wavelength_m
    e_fast, h_fast = fast.fields_phasor(pts, 100.0)
    e_slow, h_slow = slow.fields_phasor(pts, 100.0)
    assert _rel(e_fast, e_slow) < tol and _rel(h_fast, h_slow) < tol


def test_diameter_equals_the_largest_pairwise_distance():
    """The pruned search of solver._diameter returns exactly the brute-force maximum (it compares the
    same pairs that can attain it), for random clouds, mirrored ones (images) and a circle (no pruning)."""
    rng = np.random.default_rng(7)
    clouds = [rng.normal(size=(int(rng.integers(2, 300)), 3)) * rng.random(3) * 10 for _ in range(60)]
    clouds += [np.concatenate([c, c * [1.0, 1.0, -1.0]]) for c in clouds[:20]]
    t = np.linspace(0.0, 2 * math.pi, 400, endpoint=False)
    clouds.append(np.column_stack([np.cos(t), np.sin(t), 0 * t]))
    for c in clouds:
        assert S._diameter(c) == float(np.max(np.linalg.norm(c[:, None] - c[None], axis=-1)))


def test_mirroring_by_tiles_copies_exactly_what_the_mask_copies():
    """solver._mirror_upper (tiles) against the boolean-mask assignment it replaces, bit for bit, for sizes
    below, at and above the tile and not multiples of it."""
    rng = np.random.default_rng(11)
    for n in (1, 2, 5, 127, 128, 129, 300, 513):
        z = rng.normal(size=(n, n)) + 1j * rng.normal(size=(n, n))
        ref = z.copy()
        low = np.tril(np.ones((n, n), dtype=bool), -1)
        ref[low] = ref.T[low]
        S._mirror_upper(z)
        assert np.array_equal(z, ref)
        S._mirror_upper(z, tile=7)
        assert np.array_equal(z, ref)
