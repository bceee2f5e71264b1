"""Thin-wire moment-method solver: Pocklington's equation, Galerkin with piecewise-sinusoidal functions.

The current on the wires is expanded in piecewise-sinusoidal (PWS) basis functions and tested with
the same functions (Galerkin; Richmond's reaction method). The matrix element between test function
m and source function n is the reaction

    Z_mn = - int_m I_m(s) s_m . E_n(r_m(s)) ds ,

where E_n is the *closed-form* field of the sinusoidal filament currents of basis n (see
``kernel``), evaluated with the reduced thin-wire kernel (source on the axis, test point on the
surface, distances sqrt(rho^2 + a^2)). Only a one-dimensional Gauss-Legendre quadrature along the
test segment remains, vectorised over all segment pairs; pairs closer than one test-segment length
use a sinh-mapped rule clustered at the segment ends, where the reduced kernel peaks. Kernel values
are shared between the two segments of a node, parallel pairs need only them, and the symmetric
matrix is computed as one triangle and mirrored (``impedance_matrix``). Along straight runs of
equal segments, and between runs laid along the same step (the elements of an array), the geometry
of a pair depends only on the segment offset: those kernel sums are computed once per offset and
looked up (``_translate_sums``; the radiated-power kernel likewise, ``_power_table``), and the entries
of Z between basis functions inside such runs are written per offset (``_run_bases``). A perfectly
conducting ground at z = 0 is represented by images. Delta-gap sources at nodes give the voltage
vector V_m = sum_f g_fm V_f, and Z I = V is solved densely.

Pattern and gain come from the radiation integrals of the PWS currents (closed form); the radiated
power, from the real part of the currents' mutual impedance with the exact kernel sin(kR)/R (O(N^2),
independent of the fill; above ``_POWER_SUM_MAX_SEGMENTS`` segments, and over real soil, the sphere
integral of the far-field intensity on the pattern grid), is reported against the input power
0.5 Re(sum V I*) as a check of the solution.

References
----------
R. F. Harrington, Field Computation by Moment Methods, Macmillan, 1968 (Galerkin method, reaction).
J. H. Richmond, "Radiation and scattering by thin-wire structures in the complex frequency domain,"
NASA CR-2396, 1974 (PWS reaction method for wire structures).
C. A. Balanis, Antenna Theory: Analysis and Design, 3rd ed., Wiley, 2005, Ch. 8 (Pocklington's
integral equation, reduced kernel, delta-gap source, moment method) and Ch. 4 (pattern, directivity,
image theory Sec. 4.7).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import NamedTuple

import numpy as np

from rfsafe.antenna.wire.geometry import HalfMap, Structure, build_structure, unique_ints, unique_inverse
from rfsafe.antenna.wire.kernel import (ETA0_OHM, gauss_legendre_01, radiation_integrals,
                                        segment_e_terms, sinh_rule)
from rfsafe.antenna.wire.loads import load_impedances_ohm, loaded_geometry
from rfsafe.errors import bad_value

__all__ = ["WireSolution", "solve", "solve_shared", "impedance_matrix"]

C0_M_S = 299_792_458.0
#: Gauss-Legendre nodes along a test segment for well-separated pairs.
N_FAR = 8
#: Nodes per half segment (sinh-mapped) for pairs closer than one test-segment length.
N_NEAR = 12
#: Gauss-Legendre nodes along a test segment for source nodes at least ``WIDE_SEGMENTS`` test-segment
#: lengths away (parallel pairs). There the integrand is smooth on the scale of the segment: measured
#: against ``N_FAR`` nodes, the pair blocks change by at most 1e-11 of themselves for segments up to
#: lambda/10 (6e-12 at lambda/10, 1e-13 at lambda/20 and finer; tests/test_wire_fill.py checks the
#: whole matrix against the direct fill).
N_WIDE = 5
WIDE_SEGMENTS = 10.0
#: Point-pair evaluations per vectorised chunk (memory bound).
_CHUNK = 250_000


def _pair_blocks(x, w, f1, f2, tdir, p1, sdir, d, a2, k):
    """2x2 reaction blocks -int f_e' s_p . E_e for test points x (..., Q, 3) and broadcast sources."""
    v = x - p1
    z = np.einsum("...i,...i->...", v, sdir)
    rv = v - z[..., None] * sdir
    rho2 = np.einsum("...i,...i->...", rv, rv) + a2
    ez1, ez2, er1, er2 = segment_e_terms(z, rho2, d, k)
    cos_ps = np.einsum("...i,...i->...", tdir, sdir)
    t_rho = np.einsum("...i,...i->...", rv, tdir)
    t1 = ez1 * cos_ps + er1 * t_rho
    t2 = ez2 * cos_ps + er2 * t_rho
    wf1, wf2 = w * f1, w * f2
    out = np.empty(t1.shape[:-1] + (2, 2), dtype=complex)
    out[..., 0, 0] = -np.sum(wf1 * t1, axis=-1)
    out[..., 0, 1] = -np.sum(wf1 * t2, axis=-1)
    out[..., 1, 0] = -np.sum(wf2 * t1, axis=-1)
    out[..., 1, 1] = -np.sum(wf2 * t2, axis=-1)
    return out


def _grouped_terms(g1, g2, e1, e2, c, alpha, beta, jg):
    """The two tangential-field terms grouped by kernel value (see :func:`_pair_blocks_grouped`):
    t1 = c g1 alpha - g2 beta - jg e1 and t2 = c g2 beta - g1 alpha + jg e2, jg = j sin(kd) tau."""
    t1 = g1 * (c * alpha)
    t1 -= g2 * beta
    t1 -= e1 * jg
    t2 = g2 * (c * beta)
    t2 -= g1 * alpha
    t2 += e2 * jg
    return t1, t2


def _pair_blocks_grouped(x, w, f1, f2, tdir, p1, sdir, d, a2, k):
    """:func:`_pair_blocks` (the same reaction blocks) with the field's terms grouped by kernel value.

    With tau = (rho_vec . t) / rho^2, alpha = t.s - tau z and beta = t.s + tau (d - z) (real), the
    tangential field of ``kernel.segment_e_terms`` is -t.E_1 = -A [c g_1 alpha - g_2 beta - j sin(kd) tau E_1]
    and -t.E_2 = -A [c g_2 beta - g_1 alpha + j sin(kd) tau E_2]; the constant A = j eta / (4 pi sin kd) of
    the pair multiplies the quadrature sums. Fewer complex operations per point; tested against
    :func:`_pair_blocks` (tests/test_wire_solver_translates.py).
    """
    v = x - p1
    z = np.einsum("...i,...i->...", v, sdir)
    rv = v - z[..., None] * sdir
    rho2 = np.einsum("...i,...i->...", rv, rv) + a2
    d2 = d - z
    r1 = np.sqrt(rho2 + z * z)
    r2 = np.sqrt(rho2 + d2 * d2)
    e1 = np.exp(-1j * k * r1)
    e2 = np.exp(-1j * k * r2)
    g1 = e1 / r1
    g2 = e2 / r2
    kd = k * d
    c, sn = np.cos(kd), np.sin(kd)
    cos_ps = np.einsum("...i,...i->...", tdir, sdir)
    tau = np.einsum("...i,...i->...", rv, tdir) / rho2
    alpha = cos_ps - tau * z
    beta = cos_ps + tau * d2
    t1, t2 = _grouped_terms(g1, g2, e1, e2, c, alpha, beta, 1j * (sn * tau))
    amp = -1j * ETA0_OHM / (4.0 * np.pi * sn[..., 0])
    wf1, wf2 = w * f1, w * f2
    out = np.empty(t1.shape[:-1] + (2, 2), dtype=complex)
    out[..., 0, 0] = np.sum(wf1 * t1, axis=-1) * amp
    out[..., 0, 1] = np.sum(wf1 * t2, axis=-1) * amp
    out[..., 1, 0] = np.sum(wf2 * t1, axis=-1) * amp
    out[..., 1, 1] = np.sum(wf2 * t2, axis=-1) * amp
    return out


def _test_shapes(s, d, k):
    sk = np.sin(k * d)
    return np.sin(k * (d - s)) / sk, np.sin(k * s) / sk


def _direction_ids(dirs: np.ndarray) -> np.ndarray:
    """An id per unit vector, equal for vectors parallel or antiparallel to 1e-12 (rounded canonical form)."""
    lead = np.argmax(np.abs(dirs) > 1e-9, axis=1)
    canon = dirs * np.sign(dirs[np.arange(len(dirs)), lead])[:, None]
    return np.unique(np.round(canon, 12), axis=0, return_inverse=True)[1].reshape(-1)


class _TestSide(NamedTuple):
    """Test segments and their Gauss-Legendre points (the rows of the reaction matrix). A named tuple: a
    private record, made faster at import than a frozen dataclass (0.07 against 0.5 ms, measured)."""

    t0: np.ndarray
    tl: np.ndarray
    tdir: np.ndarray
    a2: np.ndarray        # squared test-wire radius (reduced kernel)
    x: np.ndarray         # (Ns, Q, 3) test points
    w: np.ndarray
    f1: np.ndarray
    f2: np.ndarray
    wf: np.ndarray        # (Ns, 2, Q) complex: weight times test shape 1 and 2
    mid: np.ndarray       # (Ns, 3) segment midpoints
    xw: np.ndarray        # (Ns, N_WIDE, 3) test points of the wide rule
    wfw: np.ndarray       # (Ns, 2, N_WIDE) its weights times the test shapes
    ww: np.ndarray        # (Ns, N_WIDE) its weights and test shapes
    fw1: np.ndarray
    fw2: np.ndarray


def _test_side(st: Structure, k: float) -> _TestSide:
    t0 = st.start_m
    tl = np.linalg.norm(st.end_m - t0, axis=1)
    tdir = (st.end_m - t0) / tl[:, None]

    def rule(n):
        """Points, weights, the two test shapes and their weighted stack of an n-point rule on every segment."""
        xg, wg = gauss_legendre_01(n)
        s = tl[:, None] * xg[None, :]
        w = tl[:, None] * wg[None, :]
        f1, f2 = _test_shapes(s, tl[:, None], k)
        x = t0[:, None, :] + s[..., None] * tdir[:, None, :]
        return x, w, f1, f2, np.stack([w * f1, w * f2], axis=1).astype(complex)

    x, w, f1, f2, wf = rule(N_FAR)
    xw, ww, g1, g2, wfw = rule(N_WIDE)
    return _TestSide(t0, tl, tdir, st.radius_m ** 2, x, w, f1, f2, wf, 0.5 * (t0 + st.end_m), xw, wfw, ww, g1, g2)


def _node_sums(x, wf, nodes, a2, k):
    """H[p, e, u] = sum_i wf[p, e, i] e^{-jkR}/R, R = sqrt(|x[p, i] - nodes[u]|^2 + a2[p]) (reduced kernel)."""
    r = np.sqrt(sum((x[..., j, None] - nodes[:, j]) ** 2 for j in range(3)) + a2[:, None, None])
    g = np.exp(-1j * k * r)
    g /= r
    return np.matmul(wf, g)


def _source_side(ts: _TestSide, k: float, src, need, truns=None):
    """Per source set: its nodes, the pair classes (near, non-parallel), the PWS constants and (with
    the test side's runs ``truns``, see :func:`_segment_runs`) the kernel sums of translated pairs."""
    s0, s1, srad, sign, dist = src
    sd = s1 - s0
    sl = np.linalg.norm(sd, axis=1)
    sdir = sd / sl[:, None]
    nq = len(s0)
    nodes, inv = np.unique(np.concatenate([s0, s1]), axis=0, return_inverse=True)
    inv = inv.reshape(-1)
    ids = _direction_ids(np.concatenate([ts.tdir, sdir]))
    ns = len(ts.tl)
    near = dist < ts.tl[:, None]
    if np.all(ids == ids[0]):                          # all parallel: no pair takes the general path
        other = wide = np.zeros((0, 0), dtype=bool)
    else:
        other = (ids[:ns, None] != ids[None, ns:]) & ~near
        if need is not None:
            other &= need
        wide = dist >= WIDE_SEGMENTS * ts.tl[:, None]     # distance_m is exact or a lower bound (geometry)
        wide &= other
        other &= ~wide
    if need is not None:
        near &= need
    ksl = k * sl
    toe = _translate_sums(ts, k, truns, _segment_runs(s0, s1, srad), s0) if truns is not None and _TRANSLATES else None
    out = dict(s0=s0, sl=sl, sdir=sdir, sign=sign, nodes=nodes, n1=inv[:nq], n2=inv[nq:], tid=ids[:ns], sid=ids[ns:],
               near=np.nonzero(near), other=np.nonzero(other), wide=np.nonzero(wide), cos=np.cos(ksl),
               amp=1j * ETA0_OHM / (4.0 * np.pi * np.sin(ksl)), toe=toe)
    if toe is not None:
        # the 2x2 block of each offset (test segment i, source segment j: sums at i - j and i - j - 1), with the
        # PWS constants of the pair's representative source segment (equal along a run to rounding)
        p, q = toe["rep_test"], toe["rep_src"]
        h = toe["hv"]
        coef = np.einsum("vi,vi->v", ts.tdir[p], sdir[q]) * (-sign * out["amp"][q])
        cc = out["cos"][q]
        hm = np.roll(h, 1, axis=0)
        blk = np.empty((len(h), 2, 2), dtype=complex)
        blk[:, :, 0] = coef[:, None] * (cc[:, None] * h - hm)
        blk[:, :, 1] = coef[:, None] * (cc[:, None] * hm - h)
        toe["blocks"] = blk
    out["near_blocks"] = _near_blocks(ts, k, out)
    return out


def _near_blocks(ts: _TestSide, k: float, src: dict) -> np.ndarray:
    """Blocks (n, 2, 2) of the near pairs (closer than a test-segment length; sinh-mapped rule), all at once
    per source set. (Not shared between translated pairs: a segment's self term changes by some 1e-11
    with the rounding of its coordinates, which a conditioned system can raise to 1e-9 in the currents.)"""
    ip, iq = src["near"]
    return _pair_list(ts, k, ip, iq, "near", src)


#: Straight runs of at least ``_TRANSLATE_MIN`` equal segments share kernel values between translated
#: pairs (:func:`_translate_sums`, :func:`_power_table`); False takes every pair on its own (the
#: reference path, tests/test_wire_solver_translates.py).
_TRANSLATES = True
_TRANSLATE_MIN = 4
#: Entries of Z between regular basis functions of translated runs are written per offset from the run
#: tables (:func:`_run_bases`); False fills them by the row blocks (bit for bit the same matrix,
#: tests/test_wire_solver_translates.py).
_RUN_BASES = True
#: Translated geometry is used only where it moves no point by more than this many step lengths, or
#: (long wires) by more than the rounding of the coordinates (64 units in the last place of the largest).
_TRANSLATE_TOL = 1e-13


def _segment_runs(s0: np.ndarray, s1: np.ndarray, radius: np.ndarray) -> dict:
    """Straight runs of equal segments (connected, collinear, one length and radius; see :func:`_uniform_runs`).

    A run is kept if it has at least ``_TRANSLATE_MIN`` segments and its nodes lie on the progression
    P + j delta (delta the mean step) to ``tol``: ``_TRANSLATE_TOL`` |delta| or the rounding of the
    coordinates, whichever is larger. Returns the run of each segment (``run``, -1 outside runs) and
    its place in the run (``pos``), and per run its first segment, number of segments, step vector,
    radius and ``tol`` [m].
    """
    ns = len(s0)
    ulp = 64 * np.finfo(float).eps * float(max(np.abs(s0).max(), np.abs(s1).max())) if ns else 0.0
    run = np.full(ns, -1, dtype=np.intp)
    pos = np.zeros(ns, dtype=np.intp)
    first, size, step, tol = [], [], [], []
    for a, b in _uniform_runs(s0, s1):
        cuts = [a] + (a + 1 + np.flatnonzero(radius[a + 1:b] != radius[a:b - 1])).tolist() + [b]
        for u, v in zip(cuts, cuts[1:]):
            if v - u < _TRANSLATE_MIN:
                continue
            delta = (s1[v - 1] - s0[u]) / (v - u)
            nodes = np.concatenate([s0[u:v], s1[v - 1:v]])
            dev = np.abs(nodes - (s0[u] + np.arange(v - u + 1)[:, None] * delta)).max()
            t = max(_TRANSLATE_TOL * float(np.linalg.norm(delta)), ulp)
            if dev <= t:
                tol.append(t)
                run[u:v] = len(first)
                pos[u:v] = np.arange(v - u)
                first.append(u)
                size.append(v - u)
                step.append(delta)
    first = np.array(first, dtype=np.intp)
    return dict(run=run, pos=pos, first=first, size=np.array(size, dtype=np.intp),
                step=np.array(step).reshape(-1, 3), radius=radius[first], tol=np.array(tol))


def _translated_pairs(ta: dict, sb: dict, rel):
    """Run pairs (A of ``ta``, B of ``sb``) whose geometry is a translate, and which of them are alike.

    A and B are translates if their steps agree so closely that no node of either moves by more than
    their ``tol`` when B is laid along A's step (|delta_A - delta_B| (m_A + m_B) at most that): then
    segment i of A against segment j of B depends on i - j only. ``rel(ia, ib)`` gives the vector
    from B's first node to A's. Pairs with the same test radius and run lengths, and steps and
    vectors equal to the smallest ``tol``, are alike (the same values: an array of equal elements on a
    regular grid has few distinct pairs). Returns (ia, ib, rep, inv): the pairs,
    the index of each distinct pair's first member and each pair's distinct pair.
    """
    da, db = ta["step"], sb["step"]
    if not len(da) or not len(db):
        return None
    reach = ta["size"][:, None] + sb["size"][None, :]
    ok = (np.abs(da[:, None, :] - db[None, :, :]).max(axis=-1) * reach
          <= np.maximum(ta["tol"][:, None], sb["tol"][None, :]))
    ia, ib = np.nonzero(ok)
    if not len(ia):
        return None
    quantum = float(min(ta["tol"].min(), sb["tol"].min()))
    key = np.column_stack([np.round(rel(ia, ib) / quantum), np.round(da[ia] * (reach.max() / quantum)),
                           ta["size"][ia], sb["size"][ib], ta["radius"][ia]])
    _u, rep, inv = np.unique(key, axis=0, return_index=True, return_inverse=True)
    return ia, ib, rep, inv.reshape(-1)


def _pattern_classes(base: np.ndarray) -> np.ndarray:
    """Per test run (and the no-run row): an id shared by the runs translated to the same source runs."""
    return np.unique(base >= 0, axis=0, return_inverse=True)[1].reshape(-1)


def _translate_sums(ts: _TestSide, k: float, ta: dict, sb: dict, s0: np.ndarray):
    """The node sums of :func:`_parallel_blocks` for test runs against translated source runs.

    For test segment i of run A and node j of a source run B with the same step vector delta, the
    test points less the node are (P_A - N_B) + (i - j) delta + s t_A: the weighted kernel sums
    H_e(i, j) = sum_q w_q f_e(s_q) e^{-jkR}/R depend on i - j only (the same radius, length and weights
    along A). They are computed once per offset, m_A + m_B values per distinct run pair (see
    :func:`_translated_pairs`) instead of m_A (m_B + 1), with the rules of the direct path (``N_WIDE``
    points, ``N_FAR`` for nodes closer than ``WIDE_SEGMENTS`` + 1/2 test-segment lengths to the test
    midpoint), and looked up per pair; the values agree with the direct ones to rounding
    (tests/test_wire_solver_translates.py).
    """
    pairs = _translated_pairs(ta, sb, lambda i, j: ts.t0[ta["first"][i]] - s0[sb["first"][j]])
    if pairs is None:
        return None
    ia, ib, rep, inv = pairs
    ma, mb = ta["size"][ia[rep]], sb["size"][ib[rep]]
    cnt = ma + mb
    start = np.concatenate([[0], np.cumsum(cnt)[:-1]])
    base = np.full((len(ta["size"]) + 1, len(sb["size"]) + 1), -1, dtype=np.intp)   # last row/column: no run
    base[ia, ib] = start[inv]
    hv = np.empty((int(cnt.sum()), 2), dtype=complex)
    ra = ia[rep]
    for a in unique_ints(ra):                    # one test run at a time: one representative test segment
        sel = np.flatnonzero(ra == a)
        pa = ta["first"][a]
        rows = np.concatenate([np.arange(start[i], start[i] + cnt[i]) for i in sel])
        off = np.concatenate([np.arange(-mb[i], ma[i]) for i in sel])          # i - j, from -m_B to m_A - 1
        rel = np.repeat(ts.t0[pa] - s0[sb["first"][ib[rep[sel]]]], cnt[sel], axis=0) + off[:, None] * ta["step"][a]
        mid = rel + (ts.mid[pa] - ts.t0[pa])
        close = np.einsum("vi,vi->v", mid, mid) < ((WIDE_SEGMENTS + 0.5) * ts.tl[pa]) ** 2
        for part, x, wf in ((~close, ts.xw[pa], ts.wfw[pa]), (close, ts.x[pa], ts.wf[pa])):
            v = np.flatnonzero(part)
            step = max(1, _CHUNK // len(x))
            for i in range(0, len(v), step):
                xv = rel[v[i:i + step], None, :] + (x - ts.t0[pa])
                r = np.sqrt(np.einsum("vqi,vqi->vq", xv, xv) + ts.a2[pa])
                g = np.exp(-1j * k * r)
                g /= r
                hv[rows[v[i:i + step]]] = g @ wf.T
    trun = np.where(ta["run"] >= 0, ta["run"], len(ta["size"]))
    srun = np.where(sb["run"] >= 0, sb["run"], len(sb["size"]))
    slen = np.concatenate([sb["size"], [0]])
    cnt_all = np.repeat(np.arange(len(rep)), cnt)
    return dict(hv=hv, base=base, trun=trun, tpos=ta["pos"], srun=srun, spos=sb["pos"] - slen[srun],
                tcls=_pattern_classes(base),
                rep_test=ta["first"][ia[rep]][cnt_all], rep_src=sb["first"][ib[rep]][cnt_all])


def _rows_into(blk, ts: _TestSide, k: float, src: dict, r0: int, r1: int, c0: int, c1: int,
               fresh: bool = False, only=None) -> None:
    """Add one source set's blocks for test rows r0:r1 and source columns c0:c1 to ``blk[p, e', q, e]``
    (``fresh``: that part of ``blk`` holds zeros, and is written in place; ``only``, an (Ns, Ns) mask:
    only the columns some row of the block needs and the listed pairs it marks are computed).

    Three paths, each the same Galerkin quadrature on the test segment:

    - parallel pairs (|t x s| < 1e-12: along one straight wire, between parallel elements): the
      field is axial, -t . E = -(t . s) A (c g_1 - g_2) for shape 1 (``kernel.segment_e_terms``), with
      g_i = e^{-jkR_i}/R_i at the two source ends. R depends only on the test point and the source
      *node*, so the weighted sums H_e(p, node) = sum_i w_i f_e(s_i) g(x_i, node) are formed once
      per test segment and node (a node is shared by two segments), and each block combines four
      (``N_WIDE`` points for nodes at least ``WIDE_SEGMENTS`` test-segment lengths away);
    - other pairs: the full closed-form field (axial and radial parts) at each test point (with
      ``N_WIDE`` points for pairs at least ``WIDE_SEGMENTS`` test-segment lengths apart);
    - near pairs (closer than one test-segment length): the sinh-mapped end-clustered rule.

    The first is computed for the whole rectangle, the others overwrite their pairs.
    """
    # Only columns parallel to some test row of the block take the node path.
    par = np.isin(src["sid"][c0:c1], src["tid"][r0:r1])
    if only is not None:
        par &= only[r0:r1, c0:c1].any(axis=0)
    cols = c0 + np.flatnonzero(par)
    # the first source set writes into the (zero) block itself, the others are added
    part = blk[:, :, c0:c1, :] if fresh else np.zeros((r1 - r0, 2, c1 - c0, 2), dtype=complex)
    if len(cols):
        part[:, :, cols - c0, :] = _parallel_blocks(ts, k, src, r0, r1, cols)
    ip, iq = src["wide"]
    lo, hi = np.searchsorted(ip, [r0, r1])
    if hi > lo and only is not None:
        keep = only[ip[lo:hi], iq[lo:hi]]
        ip, iq, lo, hi = ip[lo:hi][keep], iq[lo:hi][keep], 0, int(keep.sum())
    if hi > lo:
        # rows of one direction at a time: they see the same non-parallel columns (the others' are not computed)
        ip, iq = ip[lo:hi], iq[lo:hi]
        tid = src["tid"][ip]
        for t in unique_ints(tid):
            sel = tid == t
            gi, gq = ip[sel], iq[sel]
            rows, rpos = unique_inverse(gi)
            wcols, pos = unique_inverse(gq)
            if len(gi) == len(rows) * len(wcols) and rows[-1] - rows[0] == len(rows) - 1:   # a full rectangle
                part[rows[0] - r0:rows[-1] + 1 - r0, :, wcols - c0, :] = _general_blocks(
                    ts, k, src, int(rows[0]), int(rows[-1]) + 1, wcols)
            else:
                gen = _general_blocks(ts, k, src, rows, None, wcols)
                part[gi - r0, :, gq - c0, :] = gen[rpos.reshape(-1), :, pos.reshape(-1), :]
    for rule in ("other", "near"):
        ip, iq = src[rule]
        lo, hi = np.searchsorted(ip, [r0, r1])
        if hi > lo:
            pi, qi = ip[lo:hi], iq[lo:hi]
            nb = src["near_blocks"][lo:hi] if rule == "near" else None
            if only is not None:
                keep = only[pi, qi]
                pi, qi = pi[keep], qi[keep]
                nb = nb[keep] if nb is not None else None
            if len(pi):
                blocks = nb if rule == "near" else _pair_list(ts, k, pi, qi, rule, src)
                part[pi - r0, :, qi - c0, :] = src["sign"] * blocks
    if not fresh:
        blk[:, :, c0:c1, :] += part


def _general_blocks(ts: _TestSide, k: float, src: dict, r0, r1, cols: np.ndarray) -> np.ndarray:
    """Blocks (rows, 2, cols, 2) of test rows r0:r1 (or the rows ``r0`` with ``r1`` None) and source
    columns ``cols``, wide rule, full field.

    The closed-form field of ``kernel.segment_e_terms`` with A = j eta / (4 pi sin kd), c = cos kd,
    g_i = E_i / R_i and tau = (rho_vec . t) / rho^2 (reduced kernel):
    -t . E = -A [(c g_1 - g_2)(t . s) + tau (c g_1 D_1 - g_2 D_2 - j sin(kd) E_1)] for shape 1 and the
    mirror image for shape 2. E_i and R_i depend only on the test point and the source node, so
    they are computed once per node (shared by two segments).
    """
    rows = slice(r0, r1) if r1 is not None else r0
    n1, n2, nodes = src["n1"][cols], src["n2"][cols], src["nodes"]
    used, loc = unique_inverse(np.concatenate([n1, n2]))
    loc = loc.reshape(-1)
    nc = len(cols)
    x = ts.xw[rows]                                                    # (c, Q, 3)
    nu = nodes[used]
    r = np.sqrt(sum((x[..., j, None] - nu[:, j]) ** 2 for j in range(3)) + ts.a2[rows, None, None])
    e = np.exp(-1j * k * r)
    g = e / r

    def ends(a):
        """a at the start and at the end node of every column (views where the nodes run in order)."""
        out = []
        for li in (loc[:nc], loc[nc:]):
            if nc and li[-1] - li[0] == nc - 1 and np.all(np.diff(li) == 1):
                out.append(a[:, :, li[0]:li[-1] + 1])
            else:
                out.append(a[:, :, li])
        return out

    e1, e2 = ends(e)
    g1, g2 = ends(g)
    s0, sdir, d = src["s0"][cols], src["sdir"][cols], src["sl"][cols]
    t = ts.tdir[rows]
    # the operations of the direct expressions, in their order, written in place
    v = [x[..., j, None] - s0[:, j] for j in range(3)]                  # (c, Q, nc) each
    z = v[0] * sdir[:, 0]
    z += v[1] * sdir[:, 1]
    z += v[2] * sdir[:, 2]                                             # v . s
    for j in range(3):
        v[j] -= z * sdir[:, j]                                         # rho_vec
    rho2 = v[0] * v[0]
    rho2 += v[1] * v[1]
    rho2 += v[2] * v[2]
    rho2 += ts.a2[rows, None, None]
    tau = v[0] * t[:, 0, None, None]
    tau += v[1] * t[:, 1, None, None]
    tau += v[2] * t[:, 2, None, None]
    tau /= rho2
    cos_ps = (t @ sdir.T)[:, None, :]
    c, sn = src["cos"][cols], np.sin(k * d)
    # grouped by kernel value (real factors first): alpha = t.s - tau z, beta = t.s + tau (d - z)
    alpha = tau * z
    np.subtract(cos_ps, alpha, out=alpha)
    beta = np.subtract(d, z, out=z)
    beta *= tau
    np.add(cos_ps, beta, out=beta)
    t1, t2 = _grouped_terms(g1, g2, e1, e2, c, alpha, beta, 1j * (sn * tau))
    wf = ts.wfw[rows]                                                  # (c, 2, Q)
    out = np.empty((len(x), 2, nc, 2), dtype=complex)
    scale = -src["sign"] * src["amp"][cols]
    out[..., 0] = np.matmul(wf, t1) * scale
    out[..., 1] = np.matmul(wf, t2) * scale
    return out


def _parallel_blocks(ts: _TestSide, k: float, src: dict, r0: int, r1: int, cols: np.ndarray) -> np.ndarray:
    """Blocks (rows, 2, cols, 2) of test rows r0:r1 and source columns ``cols`` by the node path.

    Pairs of translated runs take their node sums from the table of :func:`_translate_sums`; the other
    pairs are summed here, by rows of one run (their pairs are translated for the same columns)."""
    toe = src["toe"]
    if toe is None:
        return _node_blocks(ts, src, r0, r1, cols, *_node_sums_direct(ts, k, src, r0, r1, cols))
    part = np.empty((r1 - r0, 2, len(cols), 2), dtype=complex)
    trun = toe["trun"][r0:r1]
    base = toe["base"][trun[:, None], toe["srun"][cols][None, :]]
    ok = base >= 0
    if ok.any():
        ia = np.where(ok, base + toe["tpos"][r0:r1, None] - toe["spos"][cols][None, :], 1)
        part[...] = toe["blocks"][ia].transpose(0, 2, 1, 3)
    cls = toe["tcls"][trun]                     # rows of one class have the same directly computed columns
    cut = np.concatenate([[0], np.flatnonzero(cls[1:] != cls[:-1]) + 1, [r1 - r0]])
    for a, b in zip(cut[:-1], cut[1:]):
        direct = np.flatnonzero(~ok[a])
        if len(direct):
            c = cols[direct]
            if direct[-1] - direct[0] == len(direct) - 1:           # one range of columns (no scatter)
                direct = slice(direct[0], direct[-1] + 1)
            part[a:b, :, direct, :] = _node_blocks(ts, src, r0 + a, r0 + b, c,
                                                   *_node_sums_direct(ts, k, src, r0 + a, r0 + b, c))
    return part


def _node_blocks(ts: _TestSide, src: dict, r0: int, r1: int, cols: np.ndarray, ha, hb) -> np.ndarray:
    """Blocks (rows, 2, cols, 2) from the node sums at the start (``ha``) and end (``hb``) of the source columns."""
    coef = (ts.tdir[r0:r1] @ src["sdir"][cols].T)[:, None, :] * (-src["sign"] * src["amp"][cols])
    cc = src["cos"][cols]
    part = np.empty(ha.shape + (2,), dtype=complex)
    part[..., 0] = coef * (cc * ha - hb)
    part[..., 1] = coef * (cc * hb - ha)
    return part


def _node_sums_direct(ts: _TestSide, k: float, src: dict, r0: int, r1: int, cols: np.ndarray):
    """Node sums (rows, 2, cols) at the start and end nodes of source columns ``cols``, test rows r0:r1."""
    n1, n2, nodes = src["n1"][cols], src["n2"][cols], src["nodes"]
    used, loc = unique_inverse(np.concatenate([n1, n2]))
    loc = loc.reshape(-1)
    nu = nodes[used]
    h = _node_sums(ts.xw[r0:r1], ts.wfw[r0:r1], nu, ts.a2[r0:r1], k)   # (c, 2, nodes), wide rule
    # Nodes closer than WIDE_SEGMENTS test-segment lengths (bounded by the distance to the midpoint)
    # get the N_FAR rule, as a list of (row, node) pairs.
    lim = ((WIDE_SEGMENTS + 0.5) * ts.tl[r0:r1]) ** 2
    close = sum((ts.mid[r0:r1, None, j] - nu[None, :, j]) ** 2 for j in range(3)) < lim[:, None]
    ip, iu = np.nonzero(close)
    xs = ts.x[r0 + ip]                                                 # (n, N_FAR, 3)
    r = np.sqrt(sum((xs[..., j] - nu[iu, None, j]) ** 2 for j in range(3)) + ts.a2[r0 + ip, None])
    g = np.exp(-1j * k * r)
    g /= r
    h[ip, :, iu] = np.einsum("nei,ni->ne", ts.wf[r0 + ip], g)
    nc = len(cols)
    return h[:, :, loc[:nc]], h[:, :, loc[nc:]]                       # at the source start / end nodes


def _pair_list(ts: _TestSide, k, ip, iq, rule, src):
    """2x2 reaction blocks (n, 2, 2) of the pairs (ip, iq), full closed-form field at each test point."""
    s0, sl, sdir = src["s0"], src["sl"], src["sdir"]
    out = np.empty((len(ip), 2, 2), dtype=complex)
    if rule == "near":
        # the rule, test shapes and points depend on the test segment only: once per test segment
        up, inv = unique_inverse(ip)
        inv = inv.reshape(-1)
        b = np.sqrt(ts.a2[up])
        sa, wa = sinh_rule(0.5 * ts.tl[up], b, N_NEAR)
        sp = np.concatenate([sa, ts.tl[up, None] - sa], axis=1)
        wp = np.concatenate([wa, wa], axis=1)
        fp1, fp2 = _test_shapes(sp, ts.tl[up, None], k)
        xp = ts.t0[up, None, :] + sp[..., None] * ts.tdir[up, None, :]
        args = (xp[inv], wp[inv], fp1[inv], fp2[inv])
    elif rule == "wide":
        args = (ts.xw[ip], ts.ww[ip], ts.fw1[ip], ts.fw2[ip])
    else:
        args = (ts.x[ip], ts.w[ip], ts.f1[ip], ts.f2[ip])
    step = max(1, _CHUNK // (2 * N_NEAR))
    for j in range(0, len(ip), step):
        a, q = ip[j:j + step], iq[j:j + step]
        out[j:j + step] = _pair_blocks_grouped(*(v[j:j + step] for v in args), ts.tdir[a, None], s0[q, None],
                                       sdir[q, None], sl[q, None], ts.a2[a, None], k)
    return out


def _needed_pairs(st: Structure):
    """Segment pairs needed for the upper triangle of Z, and the basis pairs that may be mirrored.

    Z is symmetric between basis functions whose halves all have one and the same radius (the
    reduced kernel then uses that radius from either side: reciprocity, Harrington 1968 Sec. 4).
    Computed both ways the two entries differ only by the error of the test quadrature (measured
    |Z - Z^T| / max |Z| from 1e-13 to 1.4e-9, tests/test_wire_fill.py), so the mirrored entry is as
    accurate as the one it replaces. Z[m, n] for m <= n
    needs the blocks of the segments p of m and q of n, so block (p, q) is needed if the smallest
    basis index on p is at most the largest on q, or if the pair cannot be mirrored.
    """
    p = st.half_to_basis
    ns, nb = st.num_segments, p.shape[1]
    rows, cols = np.nonzero(p)
    seg = rows // 2
    rad = st.radius_m[seg]
    rmin = np.full(nb, np.inf)
    rmax = np.full(nb, -np.inf)
    np.minimum.at(rmin, cols, rad)
    np.maximum.at(rmax, cols, rad)
    cls = np.where(rmin == rmax, rmin, np.nan)                       # basis radius class (nan: mixed)
    bmin = np.full(ns, nb, dtype=np.intp)
    bmax = np.full(ns, -1, dtype=np.intp)
    np.minimum.at(bmin, seg, cols)
    np.maximum.at(bmax, seg, cols)
    smin = np.full(ns, np.inf)
    smax = np.full(ns, -np.inf)
    with np.errstate(invalid="ignore"):   # nan (mixed radii) propagates on purpose
        np.minimum.at(smin, seg, cls[cols])
        np.maximum.at(smax, seg, cls[cols])
    scls = np.where(smin == smax, smin, np.nan)                      # nan also for mixed or no basis
    need = bmin[:, None] <= bmax[None, :]
    need |= ~(scls[:, None] == scls[None, :])
    mirror = cls[:, None] == cls[None, :]
    return need, mirror


def impedance_matrix(st: Structure) -> np.ndarray:
    """Galerkin impedance matrix Z [ohm] of the structure's basis functions, shape (Nb, Nb).

    Notes
    -----
    The reduced kernel puts every source current on its wire's axis and tests the field on the
    surface of the *test* wire: for a test segment of radius a_p the distance is sqrt(rho^2 + a_p^2),
    whatever the source's radius. All halves of one basis function are then seen through the same
    kernel from any test point, so the point charges at their shared node (a junction, or a wire end
    on the ground and its image) cancel exactly and are left out; the field of each basis function
    is that of a charge-conserving filament (Pocklington's equation on the test wire's surface,
    Balanis Sec. 8.3). On wires of one radius Z is symmetric (reciprocity). At a radius step Z is
    not exactly symmetric and the terminal power can differ from the radiated power by per cents to tens
    of per cent on electrically small structures (reported as ``radiated_over_input_power``; results are
    scaled to the smaller of the terminal power and the power the currents carry, see
    :func:`power_basis_w`); a kernel that depends on both radii (a mean of
    a_p and a_q) would be symmetric but leaves the end charges of a junction uncancelled, and the
    feed reactance then drifts without bound as the segments are refined. Measured: a ground-plane
    vertical with a 2 mm radiator and 1.5 mm radials changes its feed impedance by 0.6 % from 32 to
    64 segments per wire, between the values for either uniform radius. Junctions of wires whose
    radii differ by more than a factor of 2 are refused (``geometry``).

    References
    ----------
    Richmond, NASA CR-2396 (1974), reaction between PWS dipoles; Harrington (1968), Sec. 4
    (Galerkin's method gives a symmetric matrix for a reciprocal medium).
    """
    k = 2.0 * math.pi * st.freq_hz / C0_M_S
    ns = st.num_segments
    # Over real soil the images carry -K (a constant): the same symmetry as over a perfect ground.
    need, sym = _needed_pairs(st)
    ts = _test_side(st, k)
    truns = _segment_runs(st.start_m, st.end_m, st.radius_m)
    srcs = [_source_side(ts, k, src, need, truns) for src in st.sources()]
    gmap = _gather_map(st.half_to_basis)
    z = np.zeros((st.num_unknowns, st.num_unknowns), dtype=complex)   # p.T @ S @ p, a few test rows at a time
    if st.soil_eps_c is not None:   # real ground: the Sommerfeld remainder first (symmetric; the images carry -K)
        _remainder_into(z, st, k, gmap)
    plan = _run_bases(st, srcs, need, gmap) if _TRANSLATES and _RUN_BASES else None
    need_seg = need if plan is None else plan["need_seg"]
    step = max(1, _CHUNK // (N_FAR * max(len(s["nodes"]) for s in srcs)))
    if plan is not None:   # each basis touches the segments from seg_lo to seg_hi (projection by column range)
        seg_lo, seg_hi = plan["seg_lo"], plan["seg_hi"]
    for r0 in range(0, ns, step):
        r1 = min(ns, r0 + step)
        cols = np.flatnonzero(need_seg[r0:r1].any(axis=0))
        c0, c1 = (int(cols[0]), int(cols[-1]) + 1) if len(cols) else (0, 0)
        if plan is not None and c1 <= c0:
            continue                               # rows whose every needed entry comes from the run tables
        blk = np.zeros((r1 - r0, 2, ns, 2), dtype=complex)
        if c1 > c0:
            for n, src in enumerate(srcs):
                _rows_into(blk, ts, k, src, r0, r1, c0, c1, fresh=n == 0,
                           only=None if plan is None else need_seg)
        if plan is None:
            _add_rows(z, _project_columns(blk.reshape(2 * (r1 - r0), 2 * ns), gmap), 2 * r0, gmap)
        else:
            bsel = np.flatnonzero((seg_hi >= c0) & (seg_lo < c1))
            b0, b1 = int(bsel[0]), int(bsel[-1]) + 1
            sub = (gmap[0][:, b0:b1], gmap[1][:, b0:b1])
            _add_rows(z, _project_columns(blk.reshape(2 * (r1 - r0), 2 * ns), sub), 2 * r0, gmap, cols=(b0, b1))
    if plan is not None:
        _run_basis_fill(z, plan, srcs[0], sym)
    # the remainder, symmetric, is the same both ways
    if sym.all():
        _mirror_upper(z)
    else:
        low = np.tril(sym, -1)
        z[low] = z.T[low]
    return z


def _mirror_upper(z: np.ndarray, tile: int = 128) -> None:
    """z[i, j] = z[j, i] for all i > j (the strict upper triangle copied into the lower), by tiles:
    the same copies as the boolean-mask assignment, some 2-4 times faster at N = 400-800."""
    n = len(z)
    for r in range(0, n, tile):
        for c in range(0, r, tile):
            z[r:r + tile, c:c + tile] = z[c:c + tile, r:r + tile].T
        m = np.tril(np.ones((min(tile, n - r),) * 2, dtype=bool), -1)
        d = z[r:r + tile, r:r + tile]
        d[m] = d.T[m]


def _run_bases(st: Structure, srcs: list, need: np.ndarray, gmap):
    """Which entries of Z come whole from the run tables of :func:`_translate_sums` (free space only).

    A basis function is *regular* if its two halves are the end of segment a and the start of segment
    a + 1 of one straight run (:func:`_segment_runs`), both with weight +1 (every interior node of a
    straight wire). For regular m on run A and n on run B, with A and B translates (the table's
    ``base`` >= 0), the four half-pair blocks of Z[m, n] are the table's blocks at offsets o - 1, o, o + 1
    (o that of the first halves): Z[m, n] depends on the runs and o only, and
    :func:`_run_basis_fill` writes it from one value per offset, combined as the projection combines
    the blocks (the same products and sums in the same order, so the same bits); pairs with a near
    half-pair are recombined from the near blocks. Every other needed entry (a basis across runs or
    at a junction, runs that are not translates, segments outside runs) keeps the row-block fill:
    ``need_seg`` marks the segment pairs it still needs. Returns None when nothing would be shared.
    """
    if len(srcs) != 1 or srcs[0]["toe"] is None:
        return None
    toe = srcs[0]["toe"]
    r_idx, wts = gmap
    nb, ns = r_idx.shape[1], st.num_segments
    nz = wts != 0
    two = nz.sum(axis=0) == 2
    h0 = r_idx[0]
    seg0 = h0 // 2
    ok = two & nz[0] & nz[1] & (wts[0] == 1.0) & (wts[1] == 1.0) & (h0 % 2 == 1) & (r_idx[1] == h0 + 1)
    seg1 = np.minimum(seg0 + 1, ns - 1)
    trun, tpos = toe["trun"], toe["tpos"]
    nrun = toe["base"].shape[0] - 1
    ok &= (trun[seg0] < nrun) & (trun[seg0] == trun[seg1]) & (tpos[seg1] == tpos[seg0] + 1)
    if not ok.any():
        return None
    # segments of irregular bases need the row-block fill for all their pairs
    irr = np.zeros(ns, dtype=bool)
    bad = ~ok
    for j in range(len(r_idx)):
        irr[r_idx[j, bad & nz[j]] // 2] = True
    table = toe["base"][trun[:, None], toe["srun"][None, :]] >= 0
    need_seg = need & ~(table & ~irr[:, None] & ~irr[None, :])
    segs = r_idx // 2
    seg_lo = np.where(nz, segs, ns).min(axis=0)
    seg_hi = np.where(nz, segs, -1).max(axis=0)
    return dict(regular=ok, seg0=seg0, need_seg=need_seg, seg_lo=seg_lo, seg_hi=seg_hi)


def _run_basis_fill(z: np.ndarray, plan: dict, src: dict, sym: np.ndarray) -> None:
    """Write the entries of Z that come whole from the run tables (see :func:`_run_bases`).

    With B the table's 2x2 blocks (test half e, source half e'), the projection forms
    Z = 1 (B[o][1, 1] 1 + B[o - 1][1, 0] 1) + 1 (B[o + 1][0, 1] 1 + B[o][0, 0] 1), each sum started from
    zero, as :func:`_project_columns` and :func:`_add_rows` do; the same operations here give the same
    value per offset o. Pairs with a near half-pair (the sinh-rule blocks, which are not shared) are
    formed again from those blocks. Only needed entries are written (upper triangle, and pairs that are
    not mirrored); the lower triangle is mirrored afterwards as before.
    """
    toe = src["toe"]
    blk = toe["blocks"]
    one = np.ones(1)

    def combine(b00, b01, b10, b11):
        h0 = np.zeros(b00.shape, dtype=complex)
        h0 += b00 * one
        h0 += b01 * one
        h1 = np.zeros(b00.shape, dtype=complex)
        h1 += b10 * one
        h1 += b11 * one
        out = np.zeros(b00.shape, dtype=complex)
        out += one * h0
        out += one * h1
        return out

    nv = len(blk)
    up, dn = np.minimum(np.arange(nv) + 1, nv - 1), np.maximum(np.arange(nv) - 1, 0)   # edges never used
    per_offset = combine(blk[:, 1, 1], blk[dn, 1, 0], blk[up, 0, 1], blk[:, 0, 0])
    reg = np.flatnonzero(plan["regular"])
    p0 = plan["seg0"][reg]
    trun, srun, tpos, spos = toe["trun"], toe["srun"], toe["tpos"], toe["spos"]
    # regular bases in runs of contiguous basis ranges: one rectangle per (test range, source range)
    cut = np.flatnonzero((np.diff(reg) != 1) | (trun[p0[1:]] != trun[p0[:-1]])) + 1
    lo_hi = list(zip(np.concatenate([[0], cut]).tolist(), np.concatenate([cut, [len(reg)]]).tolist()))
    for a0, a1 in lo_hi:
        m0, m1 = int(reg[a0]), int(reg[a1 - 1]) + 1
        pa = p0[a0:a1]
        for b0, b1 in lo_hi:
            n0, n1 = int(reg[b0]), int(reg[b1 - 1]) + 1
            if n1 <= m0 and not (~sym[m0:m1, n0:n1]).any():
                continue                                      # lower triangle, mirrored later
            qb = p0[b0:b1]
            base = toe["base"][trun[pa[0]], srun[qb[0]]]
            if base < 0:
                continue
            idx = base + tpos[pa][:, None] - spos[qb][None, :]
            want = np.arange(m0, m1)[:, None] <= np.arange(n0, n1)[None, :]
            want |= ~sym[m0:m1, n0:n1]
            vals = per_offset[idx]
            if want.all():
                z[m0:m1, n0:n1] = vals
            else:
                z[m0:m1, n0:n1][want] = vals[want]
    # near half-pairs: recombine the basis pairs they touch from the near blocks
    ip, iq = src["near"]
    if not len(ip):
        return
    ns = len(trun)
    key = ip * ns + iq
    order = np.argsort(key, kind="stable")
    key_s = key[order]
    near_val = src["sign"] * src["near_blocks"]
    owner = np.full((ns, 2), -1, dtype=np.intp)       # regular basis whose first / second half lies on a segment
    owner[p0, 0] = reg
    owner[p0 + 1, 1] = reg
    mm = np.concatenate([owner[ip, x] for x in (0, 0, 1, 1)])
    nn = np.concatenate([owner[iq, y] for y in (0, 1, 0, 1)])
    good = (mm >= 0) & (nn >= 0)
    mm, nn = mm[good], nn[good]
    if not len(mm):
        return
    pair = unique_ints(mm * z.shape[1] + nn)
    mm, nn = pair // z.shape[1], pair % z.shape[1]
    a, b = plan["seg0"][mm], plan["seg0"][nn]
    base = toe["base"][trun[a], srun[b]]
    want = (base >= 0) & ((mm <= nn) | ~sym[mm, nn])
    mm, nn, a, b = mm[want], nn[want], a[want], b[want]
    if not len(mm):
        return

    def val(p, q, e, f):
        v = blk[toe["base"][trun[p], srun[q]] + tpos[p] - spos[q], e, f]
        w = np.searchsorted(key_s, p * ns + q)
        w = np.minimum(w, len(key_s) - 1)
        hit = key_s[w] == p * ns + q
        v[hit] = near_val[order[w[hit]], e, f]
        return v

    z[mm, nn] = combine(val(a, b, 1, 1), val(a, b + 1, 1, 0), val(a + 1, b, 0, 1), val(a + 1, b + 1, 0, 0))


def _remainder_into(z: np.ndarray, st: Structure, k: float, gmap) -> None:
    """``z = p.T @ S @ p`` for the Sommerfeld remainder S (``ground.RemainderRows``), from one triangle.

    S is symmetric (reciprocity), so with H the blocks of source segments q > p plus half the blocks q = p,
    S = H + H^T and p.T S p = W + W^T with W = p.T H p: W is filled into ``z`` (which must hold zeros) a few
    rows at a time, then W + W^T is formed in place, tile by tile (memory beyond z bounded by the blocks).
    """
    from rfsafe.antenna.wire.ground import RemainderRows

    fill = RemainderRows(st, k)
    ns = st.num_segments
    r0 = 0
    while r0 < ns:
        r1 = min(ns, r0 + fill.block_rows(r0, r0))
        half = np.zeros((2 * (r1 - r0), 2 * ns), dtype=complex)
        half[:, 2 * r0:] = fill.rows(r0, r1, r0)
        sq = half[:, 2 * r0:2 * r1].reshape(r1 - r0, 2, r1 - r0, 2)   # the square block: keep q > p, halve q = p
        i = np.arange(r1 - r0)
        sq *= (0.5 * (i[:, None] == i[None, :]) + (i[None, :] > i[:, None]))[:, None, :, None]
        _add_rows(z, _project_columns(half, gmap), 2 * r0, gmap)
        r0 = r1
    tile = 256
    for a in range(0, len(z), tile):
        for b in range(a, len(z), tile):
            t = z[a:a + tile, b:b + tile] + z[b:b + tile, a:a + tile].T
            z[a:a + tile, b:b + tile] = t
            z[b:b + tile, a:a + tile] = t.T


def _gather_map(p: np.ndarray):
    """Columns of the sparse half-to-basis map as (row, weight) pairs, padded with weight 0: (width, Nb).

    Each basis function has a few halves (two, more at a junction), so the products below cost
    O(N^2) instead of the O(N^3) of dense products.
    """
    rows, cols = np.nonzero(p)
    nb = p.shape[1]
    order = np.argsort(cols, kind="stable")
    rows, cols = rows[order], cols[order]
    counts = np.bincount(cols, minlength=nb)
    slot = np.arange(len(cols)) - np.concatenate([[0], np.cumsum(counts)[:-1]])[cols]
    width = int(counts.max()) if nb else 0
    r_idx = np.zeros((width, nb), dtype=np.intp)
    wts = np.zeros((width, nb), dtype=p.dtype)
    r_idx[slot, cols] = rows
    wts[slot, cols] = p[rows, cols]
    return r_idx, wts


def _project_columns(s: np.ndarray, gmap) -> np.ndarray:
    """``s @ p`` by gathering columns (see :func:`_gather_map`)."""
    r_idx, wts = gmap
    half = np.zeros((s.shape[0], r_idx.shape[1]), dtype=np.result_type(s, wts))
    tmp = np.empty_like(half)   # the same products and sums as half += s[:, r_idx[j]] * wts[j], no temporaries
    for j in range(len(r_idx)):
        np.take(s, r_idx[j], axis=1, out=tmp)
        tmp *= wts[j]
        half += tmp
    return half


def _project_rows(half: np.ndarray, gmap) -> np.ndarray:
    """``p.T @ half`` by gathering rows (in place: the arrays are N^2)."""
    r_idx, wts = gmap
    if not len(r_idx):
        return np.zeros((r_idx.shape[1], half.shape[1]), dtype=half.dtype)
    z = half[r_idx[0]]
    z *= wts[0][:, None]
    step = max(1, _CHUNK // max(1, half.shape[1]))   # small temporaries (no fresh N^2 pages)
    for j in range(1, len(r_idx)):
        for i in range(0, len(z), step):
            z[i:i + step] += half[r_idx[j, i:i + step]] * wts[j, i:i + step, None]
    return z


def _add_rows(z: np.ndarray, rows: np.ndarray, h0: int, gmap, cols=None) -> None:
    """``z += p.T @ half`` where ``half`` holds ``rows`` from half index ``h0`` on and is zero elsewhere
    (with ``cols`` = (b0, b1), ``rows`` holds the basis columns b0:b1 only, and only they are added).

    The k-th half of each basis function is taken in one pass (each basis once, so fancy-index
    addition is safe); over all row blocks in order this sums exactly as :func:`_project_rows`.
    """
    r_idx, wts = gmap
    zc = z if cols is None else z[:, cols[0]:cols[1]]
    for j in range(len(r_idx)):
        sel = np.flatnonzero((r_idx[j] >= h0) & (r_idx[j] < h0 + len(rows)) & (wts[j] != 0))
        if len(sel) and sel[-1] - sel[0] == len(sel) - 1:       # one range of bases: add in place
            zc[sel[0]:sel[-1] + 1] += wts[j, sel, None] * rows[r_idx[j, sel] - h0]
        elif len(sel):
            zc[sel] += wts[j, sel, None] * rows[r_idx[j, sel] - h0]


def _project(s: np.ndarray, p: np.ndarray) -> np.ndarray:
    """``p.T @ s @ p`` for the sparse half-to-basis map ``p`` in O(N^2) (the Galerkin projection)."""
    pt = _gather_map(p)
    return _project_rows(_project_columns(s, pt), pt)


#: Gauss-Legendre nodes per segment for the radiated-power check (more for long segments, see below).
N_POWER = 4


def segment_currents(st: Structure, c: np.ndarray) -> np.ndarray:
    """Currents (Ns, 2) at the start and end of each segment from basis amplitudes ``c`` (Nb,) [A].

    The sparse map (``geometry.HalfMap``, a few entries per half-function) times the currents: no dense
    N^2 map and no complex copy of it (128 MB at 2,000 segments).
    """
    return (st.half_to_basis @ np.asarray(c)).reshape(-1, 2)


def _radiated_power(st: Structure, k: float, seg_i: np.ndarray) -> float:
    """Radiated power [W] of the solved currents from the real part of their mutual impedance.

    With the free-space Green's function e^{-jkR}/R, the real part of the reaction of a current
    distribution with itself is the radiated power (Harrington 1968, Sec. 4; the radiation
    resistance of the induced-EMF method, Balanis Sec. 8.5). Its kernel sin(kR)/R is smooth and
    bounded (k at R = 0), so the exact filament-to-filament form needs no reduced kernel and no
    singular quadrature::

        P = (eta / 8 pi) Re sum_a sum_b [k J_a* . J_b - rho_a* rho_b / k] sin(k R_ab) / R_ab

    over Gauss-Legendre points a of the real segments and b of all sources (the images too: over a
    perfect ground the antenna radiates half of what antenna and image radiate into full space,
    which is the real-real plus real-image sum), with J = w I(s) s_hat and rho = w dI/ds (the PWS
    current of each segment and its derivative; the basis is continuous, so no end charges). This
    costs (N_POWER Ns)^2 / 2 kernel values (the sum is symmetric in a and b: each pair once), O(N^2)
    like the matrix fill, and shares nothing with the
    fill (which uses the reduced e^{-jkR}/R kernel and is tested on the wire surface): the ratio to
    the input power checks the solution. Points are 4 per segment up to kd = 0.7 (segments of
    lambda/10 or less; relative error below 1e-7 measured against the sphere integral of the
    far-field intensity), more for the longer segments allowed only in method validation.

    References
    ----------
    Harrington, Field Computation by Moment Methods (1968), Sec. 4 (reaction, radiation resistance);
    Balanis, Antenna Theory, 3rd ed., Sec. 8.5 (induced-EMF method, sin(kR)/R for the resistance).
    """
    t0, t1 = st.start_m, st.end_m
    d = np.linalg.norm(t1 - t0, axis=1)
    kd_max = float(k * d.max()) if len(d) else 0.0
    q = N_POWER if kd_max <= 0.7 else N_POWER + int(math.ceil(6.0 * kd_max))
    xg, wg = gauss_legendre_01(q)
    s = d[:, None] * xg[None, :]
    w = d[:, None] * wg[None, :]
    sk = np.sin(k * d)[:, None]
    dd = d[:, None]
    i1, i2 = seg_i[:, :1], seg_i[:, 1:]
    cur = (i1 * np.sin(k * (dd - s)) + i2 * np.sin(k * s)) / sk * w            # (Ns, q) [A m]
    chg = k * (-i1 * np.cos(k * (dd - s)) + i2 * np.cos(k * s)) / sk * w        # (Ns, q) [A]
    total = 0.0
    tpts = None
    truns = _segment_runs(t0, t1, st.radius_m) if _TRANSLATES else None
    for s0, s1, srad, sign, _dist in st.sources():
        sdir = (s1 - s0) / d[:, None]
        pts = (s0[:, None, :] + s[..., None] * sdir[:, None, :]).reshape(-1, 3)
        if tpts is None:
            tpts = pts
            # conjugated test sources: k J* (3 columns) and -rho*/k, against [J, rho] of the sources
            tx = np.concatenate([k * (cur[..., None] * sdir[:, None, :]).reshape(-1, 3),
                                 -chg.reshape(-1, 1) / k], axis=1).conj()
        sx = np.concatenate([(sign * cur)[..., None] * sdir[:, None, :],
                             (sign * chg)[..., None]], axis=2).reshape(-1, 4)
        sxr = sx.view(float)                 # (m, 8) real: the real kernel multiplies it without a complex copy
        # The double sum is symmetric in the two points (real kernel and image sign, reciprocity),
        # so each pair of row chunks is taken once, off-diagonal pairs twice.
        # |a - b|^2 = |a|^2 + |b|^2 - 2 a.b as one matrix product of [a, |a|^2, 1] and [-2 b, 1, |b|^2]
        ta = np.column_stack([tpts, np.einsum("ai,ai->a", tpts, tpts), np.ones(len(tpts))])
        sb = np.column_stack([-2.0 * pts, np.ones(len(pts)), np.einsum("bi,bi->b", pts, pts)])
        m = len(pts)
        tab = _power_table(k, truns, _segment_runs(s0, s1, srad), tpts, pts, q) if truns is not None else None

        def direct(i0, i1, cols):
            r = ta[i0:i1] @ sb[cols].T
            np.maximum(r, 1e-300, out=r)
            np.sqrt(r, out=r)
            kern = np.multiply(r, k)
            np.sin(kern, out=kern)
            kern /= r                                                             # k at R = 0
            return kern

        step = max(1, 2_000_000 // m)
        for i in range(0, m, step):
            a = tpts[i:i + step]
            kern = direct(i, i + len(a), slice(i, None)) if tab is None else _power_kernel(tab, i, i + len(a), direct)
            v = np.sum(tx[i:i + step] * (kern @ sxr[i:]).view(complex), axis=0)
            w = np.sum(tx[i:i + step] * (kern[:, :len(a)] @ sxr[i:i + len(a)]).view(complex), axis=0)
            total += float(np.real(2.0 * np.sum(v) - np.sum(w)))
    return ETA0_OHM / (8.0 * math.pi) * total


def _power_table(k: float, ta: dict, sb: dict, tpts: np.ndarray, pts: np.ndarray, q: int):
    """sin(kR)/R between the points of translated run pairs, once per segment offset (see :func:`_radiated_power`).

    Point u of segment i of test run A and point v of segment j of a source run B with the same step
    vector delta are (P_A - P_B) + (i - j) delta + (s_u t_A - s_v t_B) apart: the kernel depends on
    i - j, u and v only, so m_A + m_B - 1 blocks of q x q values per distinct run pair
    (:func:`_translated_pairs`) replace m_A m_B of them. Returns None when no run pair is translated.
    """
    pairs = _translated_pairs(ta, sb, lambda i, j: tpts[ta["first"][i] * q] - pts[sb["first"][j] * q])
    if pairs is None:
        return None
    ia, ib, rep, inv = pairs
    ma, mb = ta["size"][ia[rep]], sb["size"][ib[rep]]
    cnt = (ma + mb - 1) * q * q
    start = np.concatenate([[0], np.cumsum(cnt)[:-1]])
    base = np.full((len(ta["size"]) + 1, len(sb["size"]) + 1), -1, dtype=np.intp)
    base[ia, ib] = start[inv]
    kern = np.empty(int(cnt.sum()))
    ra = ia[rep]
    for a in unique_ints(ra):                             # one test run at a time, all its source runs together
        sel = np.flatnonzero(ra == a)
        pa = ta["first"][a] * q
        off = np.concatenate([np.arange(-(mb[i] - 1), ma[i]) for i in sel])   # offsets i - j
        pb = np.repeat(sb["first"][ib[rep[sel]]] * q, ma[sel] + mb[sel] - 1)
        x = (tpts[pa:pa + q][None, :, None, :] + (off[:, None] * ta["step"][a])[:, None, None, :]
             - pts[pb[:, None] + np.arange(q)][:, None, :, :])
        r = np.sqrt(np.einsum("ouvi,ouvi->ouv", x, x))
        np.maximum(r, 1e-300, out=r)
        kr = np.sin(k * r)
        kr /= r
        kern[np.concatenate([np.arange(start[i], start[i] + cnt[i]) for i in sel])] = kr.reshape(-1)
    nrun_t, nrun_s = len(ta["size"]), len(sb["size"])
    trun = np.repeat(np.where(ta["run"] >= 0, ta["run"], nrun_t), q)
    srun = np.repeat(np.where(sb["run"] >= 0, sb["run"], nrun_s), q)
    qq = np.tile(np.arange(q), len(ta["run"]))
    rowterm = np.repeat(ta["pos"], q) * q * q + qq * q
    slen = np.concatenate([sb["size"], [1]])
    colterm = (slen[srun] - 1 - np.repeat(sb["pos"], q)) * q * q + qq
    return dict(kern=kern, base=base, trun=trun, srun=srun, rowterm=rowterm, colterm=colterm,
                tcls=_pattern_classes(base))


def _power_kernel(tab: dict, i0: int, i1: int, direct) -> np.ndarray:
    """Kernel rows i0:i1 against points i0: of :func:`_radiated_power`: looked up for translated run pairs
    (by rows of one run), ``direct(i0, i1, columns)`` for the others (by rows of one class of runs: they
    share those columns)."""
    trun = tab["trun"][i0:i1]
    kern = np.empty((i1 - i0, len(tab["srun"]) - i0))
    srun, colterm, rowterm = tab["srun"][i0:], tab["colterm"][i0:], tab["rowterm"][i0:i1]
    cut = np.concatenate([[0], np.flatnonzero(trun[1:] != trun[:-1]) + 1, [i1 - i0]])
    for a, b in zip(cut[:-1], cut[1:]):
        base = tab["base"][trun[a], srun]
        ok = base >= 0
        if ok.any():
            np.take(tab["kern"], rowterm[a:b, None] + np.where(ok, base + colterm, 0), out=kern[a:b], mode="clip")
    cls = tab["tcls"][trun]
    cut = np.concatenate([[0], np.flatnonzero(cls[1:] != cls[:-1]) + 1, [i1 - i0]])
    for a, b in zip(cut[:-1], cut[1:]):
        cols = np.flatnonzero(tab["base"][trun[a], srun] < 0)
        if len(cols) and cols[-1] - cols[0] == len(cols) - 1:     # one range of columns (no scatter)
            kern[a:b, cols[0]:cols[-1] + 1] = direct(i0 + a, i0 + b, slice(i0 + cols[0], i0 + cols[-1] + 1))
        elif len(cols):
            kern[a:b, cols] = direct(i0 + a, i0 + b, i0 + cols)
    return kern


def _directions(theta, phi):
    st = np.sin(theta)
    return np.stack([st * np.cos(phi), st * np.sin(phi), np.cos(theta)], axis=-1)


#: Below this |k^2 - alpha^2| / k^2 the radiation integrals switch to the sinc form (no cancellation).
_NEAR_AXIS = 1e-3


#: Straight runs of at least this many equal, connected, collinear segments take the factored
#: evaluation of :func:`_run_vector` (all runs at once, for any number of directions); the other
#: segments are summed one by one.
_RUN_MIN = 8


def _uniform_runs(s0: np.ndarray, s1: np.ndarray) -> list[tuple[int, int]]:
    """Index ranges [a, b) of consecutive segments that are connected, collinear and of one length."""
    if not len(s0):
        return []
    d = s1 - s0
    length = np.linalg.norm(d, axis=1)
    sdir = d / length[:, None]
    ok = np.all(s1[:-1] == s0[1:], axis=1)
    ok &= np.abs(length[1:] - length[:-1]) <= 1e-12 * length[:-1]
    ok &= np.all(np.abs(sdir[1:] - sdir[:-1]) <= 1e-12, axis=1)
    cut = np.flatnonzero(~ok) + 1
    return list(zip(np.concatenate([[0], cut]).tolist(), np.concatenate([cut, [len(s0)]]).tolist()))


def _segment_sum(r, k, s0, s1, sdir, d, cur1, cur2):
    """sum_q s_q int I_q e^{jk r . r'} dz' of the segments one by one, for directions r (n, 3)."""
    return _segment_apply(r, k, _segment_setup(k, s0, s1, sdir, d, cur1, cur2))


def _segment_setup(k, s0, s1, sdir, d, cur1, cur2) -> tuple:
    """The direction-free part of :func:`_segment_sum` (computed once per structure and currents)."""
    kc, ks = k * np.cos(k * d), np.sin(k * d)
    i1, i2 = cur1 / ks, cur2 / ks   # sin kd of the PWS shapes folded in
    # the end phase of a segment is the start phase of the next where they are joined (one exponential per node)
    apart = np.ones(len(s0), dtype=bool)
    apart[:-1] = np.any(s1[:-1] != s0[1:], axis=1)
    # i1 (k p1 - p0 (kc + j a ks)) + i2 (p1 (j a ks - kc) + k p0), grouped by phase
    c1, c0 = k * i1 - kc * i2, k * i2 - kc * i1
    return (s0, sdir, d, cur1, cur2, c1, c0, 1j * ks * i2, 1j * ks * i1, apart,
            s1[apart] if apart.any() else None)


def _segment_apply(r, k, setup: tuple):
    """:func:`_segment_sum` for directions r (n, 3) with its :func:`_segment_setup`."""
    return _segment_apply_parts(r, k, _stack_setups([setup]))[0]


def _segment_apply_parts(r, k, setup: tuple):
    """:func:`_segment_apply` of several parts at once (real segments and their images): ``setup`` is
    :func:`_segment_setup`'s for each part, stacked by :func:`_stack_setups` (the parts have the same
    segment count and joints); returns (parts, n, 3). Each part's numbers are those of
    :func:`_segment_apply` alone: the same elementwise operations, and matrix products per part of
    the same shapes and layouts (tests/test_wire_exact_replacements.py)."""
    s0, sdir, d, cur1, cur2, c1, c0, jks_i2, jks_i1, apart, s1_apart = setup
    alpha = k * np.matmul(r, sdir.transpose(0, 2, 1))                  # (parts, n, Ns)
    p0 = np.exp(1j * k * np.matmul(r, s0.transpose(0, 2, 1)))
    p1 = np.empty_like(p0)
    p1[..., :-1] = p0[..., 1:]
    if s1_apart is not None:
        p1[..., apart] = np.exp(1j * k * np.matmul(r, s1_apart.transpose(0, 2, 1)))
    den = k * k - alpha * alpha
    amp = p1 * (c1[:, None] + alpha * jks_i2[:, None])
    amp += p0 * (c0[:, None] - alpha * jks_i1[:, None])
    near = np.abs(den) < _NEAR_AXIS * k * k
    with np.errstate(divide="ignore", invalid="ignore"):
        amp /= den
    if near.any():
        pn, _dn, qn = np.nonzero(near)
        j1, j2 = radiation_integrals(alpha[near], d[pn, qn], k)
        amp[near] = p0[near] * (cur1[pn, qn] * j1 + cur2[pn, qn] * j2)
    return np.matmul(amp, sdir)


def _stack_setups(setups: list):
    """Setups of several parts (:func:`_segment_setup` tuples or :func:`_run_setup` dicts of the same
    structure: equal counts, joints and runs) stacked along a first axis, for :func:`_segment_apply_parts`
    and :func:`_run_vector_parts`."""
    if isinstance(setups[0], dict):
        out = dict(setups[0])
        for key in ("d", "sdir", "ks", "coef", "s0", "cur1", "cur2", "s0_first", "jks"):
            out[key] = np.stack([s[key] for s in setups])
        return out
    s1_apart = setups[0][-1]
    return (*(np.stack([s[i] for s in setups]) for i in range(9)), setups[0][9],
            None if s1_apart is None else np.stack([s[-1] for s in setups]))


def _stackable(a, b) -> bool:
    """Whether two parts' setups (:class:`_Radiator`) have the same structure (counts, joints, runs)."""
    (sa, ua), (sb, ub) = a, b
    if (sa is None) != (sb is None) or len(ua) != len(ub):
        return False
    if sa is not None and (sa[0].shape != sb[0].shape or not np.array_equal(sa[9], sb[9])):
        return False
    return all(x["runs"] == y["runs"] and x["nb"] == y["nb"] and x["na"] == y["na"] and x["s0"].shape == y["s0"].shape
               for x, y in zip(ua, ub))


def _powers(z: np.ndarray, n: int) -> np.ndarray:
    """(len(z), n) array of z^0 .. z^(n-1) by repeated products (|z| = 1: the rounding grows only
    linearly, n 1e-16 relative, against an exponential per power)."""
    out = np.empty((len(z), n), dtype=complex)
    out[:, 0] = 1.0
    for i in range(1, n):
        np.multiply(out[:, i - 1], z, out=out[:, i])
    return out


def _run_setup(k, s0, s1, cur1, cur2, runs) -> dict:
    """The direction-free part of :func:`_run_vector` for straight runs ``runs`` (index ranges [a, b))."""
    first = np.array([a for a, _b in runs])
    size = np.array([b - a for a, b in runs])
    m = int(size.max())
    nr = len(runs)
    step_v = (s1[first + size - 1] - s0[first]) / size[:, None]
    d = np.linalg.norm(step_v, axis=1)
    sdir = step_v / d[:, None]
    kc, ks = k * np.cos(k * d), np.sin(k * d)
    run = np.repeat(np.arange(nr), size)
    seg = np.concatenate([np.arange(a, b) for a, b in runs])
    pos = seg - first[run]
    i1, i2 = cur1[seg] / ks[run], cur2[seg] / ks[run]
    nb = math.isqrt(m) + 1
    na = -(-(m + 1) // nb)
    coef = np.zeros((nr, 2, na * nb), dtype=complex)
    np.add.at(coef, (run, 0, pos + 1), k * i1 - kc[run] * i2)      # P1 of segment n - 1
    np.add.at(coef, (run, 0, pos), k * i2 - kc[run] * i1)          # P0 of segment n
    np.add.at(coef, (run, 1, pos + 1), i2)
    np.add.at(coef, (run, 1, pos), -i1)
    coef = coef.reshape(nr, 2, na, nb).transpose(0, 3, 1, 2).reshape(nr, nb, 2 * na)   # [run, b, (poly, a)]
    return dict(runs=runs, first=first, d=d, sdir=sdir, ks=ks, nb=nb, na=na, coef=coef, s0=s0, cur1=cur1,
                cur2=cur2, width=4 * nb + 8, s0_first=s0[first], jks=1j * ks)


def _run_vector(r, k, setup: dict):
    """The same sum for straight runs of equal segments, in O(sqrt(m)) exponentials per direction and run.

    Along a run of m segments every segment has the same direction s, length d and alpha = k r.s, and
    its end phases are P_n = P_0 z^n at the nodes n = 0..m with z = e^{j alpha d}. The segment formula
    of :func:`_radiation_vector` then sums to s P_0 [C(z) + j alpha sin(kd) D(z)] / (k^2 - alpha^2),
    with polynomials C and D whose coefficients are the node sums of the end currents. They are
    evaluated exactly (no approximation) by splitting n = a B + b (B ~ sqrt(m + 1), m the longest
    run's length; shorter runs of the same B padded with zero coefficients): a matrix product of
    z^b (B powers) with the coefficients, then a sum over a weighted by z^{aB} (baby-step giant-step
    polynomial evaluation), all the setup's runs at once. Directions within ``_NEAR_AXIS`` of a run's
    axis use the sinc form segment by segment, as there. ``setup`` is :func:`_run_setup`'s.
    """
    return _run_vector_parts(r, k, _stack_setups([setup]))[0]


def _run_vector_parts(r, k, setup: dict):
    """:func:`_run_vector` of several parts at once (real runs and their images), ``setup`` their
    :func:`_run_setup` dicts stacked by :func:`_stack_setups`; returns (parts, n, 3), each part's numbers
    those of :func:`_run_vector` alone (the same elementwise operations; sums and matrix products per
    part of the same shapes and layouts)."""
    runs, d, sdir = setup["runs"], setup["d"], setup["sdir"]
    nb, na, nr, npart = setup["nb"], setup["na"], len(runs), len(d)
    s0, cur1, cur2 = setup["s0"], setup["cur1"], setup["cur2"]
    alpha = k * np.matmul(r, sdir.transpose(0, 2, 1))                 # (parts, n, runs)
    ad = (alpha * d[:, None]).transpose(0, 2, 1).reshape(-1)          # (parts * runs * n)
    zb = _powers(np.exp(1j * ad), nb).reshape(npart, nr, len(r), nb)  # z^b, b < nb
    za = _powers(np.exp(1j * nb * ad), na).reshape(npart, nr, len(r), na)   # z^(a nb), a < na
    mix = np.matmul(zb, setup["coef"]).reshape(npart, nr, len(r), 2, na)
    mix *= za[:, :, :, None, :]
    poly = mix.sum(axis=-1).transpose(0, 2, 3, 1)                     # (parts, n, poly, runs)
    den = k * k - alpha * alpha
    amp = (np.exp(1j * k * np.matmul(r, setup["s0_first"].transpose(0, 2, 1)))
           * (poly[:, :, 0] + setup["jks"][:, None] * alpha * poly[:, :, 1]))
    near = np.abs(den) < _NEAR_AXIS * k * k
    with np.errstate(divide="ignore", invalid="ignore"):
        amp /= den
    amp[near] = 0.0
    out = np.matmul(amp, sdir)
    for p, j in zip(*np.nonzero(near.any(axis=1))):
        a, b = runs[j]
        rn = np.flatnonzero(near[p, :, j])
        j1, j2 = radiation_integrals(k * (r[rn] @ sdir[p, j])[:, None] * np.ones(b - a), np.full(b - a, d[p, j]), k)
        p0 = np.exp(1j * k * (r[rn] @ s0[p, a:b].T))
        out[p, rn] += np.sum(p0 * (cur1[p, a:b] * j1 + cur2[p, a:b] * j2), axis=1)[:, None] * sdir[p, j]
    return out


#: Largest complex array (bytes) of a call of the real segments and their images evaluated together (see
#: :class:`_Radiator`): well below numpy's 256 kB for evaluating an expression in place into a temporary.
_STACK_MAX_BYTES = 64 * 1024


def _chunked(fn, flat, k, setup, step: int) -> np.ndarray:
    """``fn(flat, k, setup)`` (parts, n, 3) computed on row blocks of ``step`` directions."""
    if len(flat) <= step:
        return fn(flat, k, setup)
    return np.concatenate([fn(flat[i:i + step], k, setup) for i in range(0, len(flat), step)], axis=1)


class _Radiator:
    """:func:`_radiation_vector` of one structure and its currents, the direction-free work done once.

    The pattern grid, the peak search (dozens of calls of a few directions) and the back direction of
    one solve share it. Straight runs of at least ``_RUN_MIN`` segments go by :func:`_run_vector`, the
    other segments by :func:`_segment_sum`. The real segments and their images (the same structure
    mirrored) are evaluated together (:func:`_segment_apply_parts`, :func:`_run_vector_parts`: half the
    array operations of one part after the other, the same numbers), their sums added part after part.
    """

    def __init__(self, st: Structure, k: float, seg_i: np.ndarray):
        self.k = k
        parts = []
        for s0, s1, _r, sign, _d in st.sources():
            sd = s1 - s0
            d = np.linalg.norm(sd, axis=1)
            sdir = sd / d[:, None]
            cur1, cur2 = sign * seg_i[:, 0], sign * seg_i[:, 1]
            runs = [(a, b) for a, b in _uniform_runs(s0, s1) if b - a >= _RUN_MIN]
            single = np.ones(len(s0), dtype=bool)
            for a, b in runs:
                single[a:b] = False
            one = np.flatnonzero(single)
            # runs of one width sqrt(m) + 1 together (padding a short run to a long one would cost its length)
            width = [math.isqrt(b - a) + 1 for a, b in runs]
            setups = [_run_setup(k, s0, s1, cur1, cur2, [r for r, w in zip(runs, width) if w == u])
                      for u in sorted(set(width))]
            parts.append((_segment_setup(k, s0[one], s1[one], sdir[one], d[one], cur1[one], cur2[one])
                          if len(one) else None, setups))
        def stacked(group):
            return (None if group[0][0] is None else _stack_setups([p[0] for p in group]),
                    [_stack_setups([p[1][u] for p in group]) for u in range(len(group[0][1]))], len(group))

        # Parts evaluated together when they have the same structure (an image has), for calls of 2 directions or
        # more whose arrays stay small (_STACK_MAX_BYTES); else part by part, each with the arrays it has alone.
        # numpy rounds a complex product the same way whatever the array's length, except (measured, numpy 2.4)
        # a product of strided columns of one element (one direction and run: a different loop) and a product
        # whose right operand is a temporary of 256 kB or more (evaluated in place into it, operands swapped);
        # stacked arrays of these sizes would change the last bits.
        self.one_by_one = [stacked([p]) for p in parts]
        self.together = stacked(parts) if len(parts) > 1 and all(_stackable(parts[0], p) for p in parts[1:]) else None
        if self.together is not None:
            single, setups, npart = self.together
            per_dir = max([single[0].shape[1] if single is not None else 0]
                          + [len(u["runs"]) * max(u["nb"], 2 * u["na"]) for u in setups])
            self.stack_max_dirs = _STACK_MAX_BYTES // (16 * npart * max(per_dir, 1))

    def __call__(self, rhat: np.ndarray) -> np.ndarray:
        out = np.zeros(rhat.shape[:-1] + (3,), dtype=complex)
        flat = rhat.reshape(-1, 3)
        res = out.reshape(-1, 3)
        together = self.together is not None and 2 <= len(flat) <= self.stack_max_dirs
        for single, setups, npart in ([self.together] if together else self.one_by_one):
            pieces = []   # (parts, n, 3) per piece, chunked as one part alone would be (the same products)
            if single is not None:
                pieces.append(_chunked(_segment_apply_parts, flat, self.k, single, max(1, _CHUNK // single[0].shape[1])))
            for setup in setups:
                pieces.append(_chunked(_run_vector_parts, flat, self.k, setup,
                                       max(1, _CHUNK // (len(setup["runs"]) * setup["width"]))))
            for p in range(npart):   # the sums added part after part, piece after piece (as one by one)
                for piece in pieces:
                    res += piece[p]
        return out



def _radiation_vector(st: Structure, k: float, seg_i: np.ndarray, rhat: np.ndarray) -> np.ndarray:
    """N(r_hat) = sum_q s_q int I_q e^{jk r_hat . r'} dz' over segments and images, (ndir, 3) [A m].

    With the phases at both segment ends, P0 = e^{jk r.s0} and P1 = e^{jk r.s1}, and alpha = k r.s_hat,
    the half-function integrals times P0 are (integrating e^{j alpha z} sin kz by parts)

        int_0^d e^{j alpha z} sin k(d - z) dz * P0 = (k P1 - P0 (k cos kd + j alpha sin kd)) / (k^2 - alpha^2)
        int_0^d e^{j alpha z} sin kz dz * P0       = (P1 (j alpha sin kd - k cos kd) + k P0) / (k^2 - alpha^2)

    which costs one complex exponential per node and direction (fewer along straight runs of equal
    segments, see :func:`_run_vector`; :class:`_Radiator` keeps the direction-free work); within
    ``_NEAR_AXIS`` of alpha = +-k (directions along a segment) the sinc form of
    :func:`radiation_integrals` is used.
    """
    return _Radiator(st, k, seg_i)(rhat)


def _intensity(st, k, seg_i, rhat, rad: _Radiator | None = None):
    """Radiation intensity U(r_hat) [W/sr] for the solved currents (peak phasors); ``rad``, a prepared
    :class:`_Radiator` of the same structure and currents (free space or perfect ground)."""
    if st.soil_eps_c is not None:   # real ground: space wave with Fresnel coefficients
        from rfsafe.antenna.wire.ground import space_wave_intensity

        return space_wave_intensity(st, k, seg_i, rhat, _radiation_vector)
    n = (rad or _Radiator(st, k, seg_i))(rhat)
    n_perp = n - rhat * np.einsum("...i,...i->...", rhat, n)[..., None]
    return ETA0_OHM * k * k / (32.0 * math.pi ** 2) * np.einsum("...i,...i->...", n_perp, n_perp.conj()).real


@dataclass(frozen=True)
class WireSolution:
    """Solved currents of a wire antenna and the quantities derived from them.

    Per-unit-excitation quantities refer to the feeds driven with their ``amplitude`` [V peak] and
    ``phase_deg``; field methods rescale to a stated power delivered to the antenna.
    """

    freq_hz: float
    ground: str
    num_segments: int
    num_unknowns: int
    feed_impedance_ohm: tuple[complex, ...]   # per feed, V/I at the gap (active impedance)
    feed_voltage_v: tuple[complex, ...]       # per feed, excitation [V peak]
    feed_current_a: tuple[complex, ...]       # per feed, for that excitation [A peak]
    input_power_w: float                      # 0.5 Re sum V I* for that excitation [W] (terminal power)
    radiated_power_w: float                   # integral of the far-field intensity [W]
    radiated_over_input_power: float
    gain_dbi: float                           # peak gain [dBi] (over a perfect ground: full-space isotropic)
    peak_azimuth_deg: float                   # compass bearing of the peak, clockwise from north
    peak_elevation_deg: float                 # elevation of the peak above horizontal
    front_to_back_db: float                   # peak gain minus the gain at azimuth + 180 deg, same elevation
    limits_enforced: bool                     # False only for method validation (see solve)
    basis_current_a: np.ndarray = field(repr=False)    # (Nb,) complex
    segment_current_a: np.ndarray = field(repr=False)  # (Ns, 2) current at segment start/end [A peak]
    structure: Structure = field(repr=False)
    impedance_matrix_ohm: np.ndarray = field(repr=False)   # with the lumped loads
    load_labels: tuple[str, ...] = ()
    load_impedance_ohm: tuple[complex, ...] = ()          # per load at freq_hz
    load_current_a: tuple[complex, ...] = ()              # per load, for the unit excitation [A peak]
    load_power_w: float = 0.0                             # dissipated in the loads, unit excitation [W]
    geometry_spec: object = field(repr=False, default=None)   # the solved geometry (shield as wires)
    shield: object = field(repr=False, default=None)          # shield.ExpandedShield or None
    ground_method: str = ""                                   # how the ground was modelled (method text)
    #: Power the solved currents carry, 0.5 c^H Re(Z) c [W] (radiated plus dissipated; see
    #: :func:`power_basis_w`); 0.0 only in solutions built by hand.
    carried_power_w: float = 0.0
    #: Power the fields, currents and gain are scaled to [W]: the smaller of the terminal and carried powers
    #: (see :func:`power_basis_w`); None in solutions built by hand (then the terminal power).
    basis_power_w: float | None = None
    #: Real ground only: peak gain [dBi] of the same currents with a perfect-ground image, an upper bound of
    #: the ground-level (Norton surface-wave) far field, which the space-wave gain leaves out (see solve).
    ground_wave_bound_gain_dbi: float | None = None
    #: Unit-excitation near fields already computed, by point set (see fields_phasor); not part of the result.
    _unit_fields: dict = field(default_factory=dict, repr=False, compare=False)

    @property
    def wavelength_m(self) -> float:
        return C0_M_S / self.freq_hz

    @property
    def k(self) -> float:
        return 2.0 * math.pi * self.freq_hz / C0_M_S

    def power_scale(self, input_power_w: float, *, field: str = "input_power_w") -> float:
        """Amplitude factor taking the unit excitation to ``input_power_w`` delivered [W]."""
        if not (isinstance(input_power_w, (int, float)) and math.isfinite(input_power_w) and input_power_w > 0):
            raise bad_value(field, input_power_w, "must be a finite power > 0 W")
        return math.sqrt(input_power_w / self.power_w)

    @property
    def power_w(self) -> float:
        """Power [W] of the unit excitation that results are scaled by (see :func:`power_basis_w`)."""
        return self.input_power_w if self.basis_power_w is None else self.basis_power_w

    def port_impedance_matrix_ohm(self) -> np.ndarray:
        """Impedance matrix between the feed gaps [ohm], shape (Nf, Nf).

        Z_port = (G Z^-1 G^T)^-1 with G the gap-to-basis coupling: the open-circuit network seen at
        the feeds (self impedances on the diagonal, mutual impedances off it).
        """
        g = self.structure.feed_coupling
        return np.linalg.inv(g @ np.linalg.solve(self.impedance_matrix_ohm, g.T))

    def gain_dbi_toward(self, azimuth_deg, elevation_deg) -> np.ndarray:
        """Gain [dBi] toward compass bearing(s) ``azimuth_deg`` and elevation(s) ``elevation_deg``.

        Over a perfect ground the gain below the horizon is -inf (no field there).
        """
        az = np.radians(np.asarray(azimuth_deg, dtype=float))
        el = np.radians(np.asarray(elevation_deg, dtype=float))
        az, el = np.broadcast_arrays(az, el)
        theta, phi = 0.5 * math.pi - el, 0.5 * math.pi - az
        u = _intensity(self.structure, self.k, self.segment_current_a, _directions(theta, phi))
        with np.errstate(divide="ignore"):
            g = 10.0 * np.log10(4.0 * math.pi * u / self.power_w)
        if self.ground in ("perfect", "real"):
            g = np.where(el < 0, -np.inf, g)
        return g

    def fields_phasor(self, points_m, input_power_w: float, *, field: str = "points_m"):
        """Complex near-field phasors at points for ``input_power_w`` delivered to the antenna.

        Parameters
        ----------
        points_m : array_like (N, 3)
            Observation points in the station frame [m].
        input_power_w : float
            Power delivered to the antenna terminals [W].
        field : str
            Field path used in error messages.

        Returns
        -------
        e_v_m, h_a_m : ndarray (N, 3) complex
            E [V/m] and H [A/m] as peak-amplitude phasors (x, y, z components).

        Raises
        ------
        InputError
            Points closer than 3 wire radii to a wire, below a perfect ground, or near segments
            longer than lambda/20 (see ``fields.check_points``).
        """
        from rfsafe.antenna.wire.fields import check_points, near_fields

        key = _field_key(points_m)
        if key is not None and key in self._unit_fields:   # these points passed check_points before
            e, h = self._unit_fields[key]
        else:
            pts = check_points(self, points_m, field=field)
            e, h = near_fields(self.structure, self.k, self.segment_current_a, pts)
            self._keep_unit_fields(key, e, h)
        scale = self.power_scale(input_power_w)
        return e * scale, h * scale

    def _keep_unit_fields(self, key, e: np.ndarray, h: np.ndarray) -> None:
        """Keep unit-excitation fields under ``key`` (see :func:`_field_key`), oldest dropped beyond the bound."""
        if key is None:
            return
        kept = self._unit_fields
        kept["points"] = kept.get("points", 0) + len(e)
        while kept["points"] > _FIELD_CACHE_POINTS and len(kept) > 1:   # oldest first
            old = next(k for k in kept if k != "points")
            kept["points"] -= len(kept.pop(old)[0])
        for a in (e, h):
            a.setflags(write=False)
        self._unit_fields[key] = (e, h)

    def fields_rms(self, points_m, input_power_w: float, *, field: str = "points_m"):
        """RMS field strengths at points for ``input_power_w`` delivered to the antenna.

        Returns
        -------
        e_field_v_m, h_field_a_m : ndarray (N,)
            sqrt(sum |E_i|^2 / 2) [V/m rms] and the same for H [A/m rms].
        """
        e, h = self.fields_phasor(points_m, input_power_w, field=field)
        # np.add.reduce is what np.sum calls (the same sums; its Python wrapper costs more than they do here)
        return (np.sqrt(0.5 * np.add.reduce(np.abs(e) ** 2, axis=-1)),
                np.sqrt(0.5 * np.add.reduce(np.abs(h) ** 2, axis=-1)))

    def point_cautions(self, points_m, labels=None) -> tuple[str, ...]:
        """Method-limit cautions for points (closer to a wire than one segment length)."""
        from rfsafe.antenna.wire.fields import point_cautions

        return point_cautions(self, points_m, labels)


def _field_key(points_m):
    """Key of a point set in :attr:`WireSolution._unit_fields` (None: not kept, too large or not an array)."""
    try:
        raw = np.asarray(points_m, dtype=float)
        return (raw.shape, raw.tobytes()) if raw.size <= 3 * _FIELD_CACHE_POINTS else None
    except (TypeError, ValueError):
        return None


def unit_fields_together(sols, points_m, *, field: str = "points_m") -> None:
    """Compute and keep the unit-excitation near fields of several solutions at the same points at once.

    For solutions of one frequency and geometry (an antenna and its ground bound): their common straight
    runs are evaluated once (``fields.near_fields_together``); each solution's later
    :meth:`WireSolution.fields_phasor` at these points then returns the same numbers it would have
    computed. The points are checked for every solution first, in order (the same refusal as there).
    Solutions that already hold these points, or point sets too large to keep, are left to fields_phasor.
    """
    from rfsafe.antenna.wire.fields import check_points, near_fields_together

    key = _field_key(points_m)
    todo = [s for s in sols if key is not None and key not in s._unit_fields]
    if len(todo) < 2 or any(s.k != todo[0].k for s in todo):
        return
    pts = check_points(todo[0], points_m, field=field)
    for s in todo[1:]:   # a check is implied by the first one's on the same segments (and its ground, if any)
        if not _same_check(todo[0], s):
            check_points(s, points_m, field=field)
    for s, (e, h) in zip(todo, near_fields_together([(s.structure, s.segment_current_a) for s in todo], todo[0].k,
                                                    pts)):
        s._keep_unit_fields(key, e, h)


def _same_check(a: WireSolution, b: WireSolution) -> bool:
    """Whether ``fields.check_points`` accepting points for solution ``a`` implies it accepts them for ``b``:
    the same segments and radii, wavelength and limits, and no ground check on ``b`` that ``a`` did not make."""
    sa, sb = a.structure, b.structure
    return (a.wavelength_m == b.wavelength_m and a.limits_enforced == b.limits_enforced
            and (sa.ground or not sb.ground) and (sa.soil_eps_c is None) == (sb.soil_eps_c is None)
            and all(x.shape == y.shape and x.tobytes() == y.tobytes() for x, y in
                    ((sa.start_m, sb.start_m), (sa.end_m, sb.end_m), (sa.radius_m, sb.radius_m), (sa.wire, sb.wire))))


def _diameter(pts: np.ndarray) -> float:
    """Largest distance between two of the points [m] (exact).

    With c the centre of the bounding box, r_i = |p_i - c|, R = max r_i and L a distance already
    found, a pair farther apart than L has r_i + r_j > L, so both its points have r > L - R: only
    those are compared pairwise (a few near the extremities for most structures).
    """
    r = np.linalg.norm(pts - 0.5 * (pts.max(0) + pts.min(0)), axis=1)
    far = pts[int(np.argmax(r))]
    best = float(np.max(np.linalg.norm(pts - far, axis=1)))
    cand = pts[r > best - float(r.max())]
    step = max(1, _CHUNK // max(1, len(cand)))
    for i in range(0, len(cand), step):
        best = max(best, float(np.max(np.linalg.norm(cand[i:i + step, None, :] - cand[None, :, :], axis=-1))))
    return best


#: Above this many segments solve() checks the radiated power by the sphere integral of the far-field
#: intensity on its pattern grid (no extra cost: the peak search needs the grid) instead of the double sum
#: of :func:`_radiated_power` (8 Ns^2 kernel values, some 8 times the fill's N^2 at large N; about the
#: cost of the grid itself near 100 segments, measured: 1.9-2.4 ms against 1.7-2.2 ms); the two agree
#: to about 1e-12 of the power (tests/test_wire_power_check.py). Up to it the double sum is kept (the
#: reference, and the figures of small models stay as they were to the last bit).
_POWER_SUM_MAX_SEGMENTS = 100


def _pattern_grid(st, k, seg_i, size, rad=None):
    """The direction grid of :func:`solve`: (theta, phi, U, U of the perfect-ground image or None, n_t, n_p,
    the sphere integral of U [W]) for a structure of diameter ``size`` [m] (with its images).

    Gauss-Legendre in cos(theta) (n_t points over [-1, 1], or [0, 1] over a ground), trapezoid in phi
    (n_p points, periodic). The intensity is a sum of terms e^{jk r.(p_a - p_b)} with |p_a - p_b| <= D
    (D = ``size``): as a function on the sphere it is band-limited to degree about kD, its phi harmonics
    |m| < kD + 1 and, after the phi sum removes m != 0, a polynomial in cos(theta) of degree about kD.
    Here 2 n_t - 1 >= kD + 45 and n_p >= kD + 34 (for kD > 24: 2 n_t - 1 >= kD + 69, n_p >= kD + 58),
    so the rule integrates it exactly up to the spherical-Bessel tail beyond degree kD, which falls off
    as exp(-(2/3) (2 m)^{3/2} / sqrt(kD)) at a margin m (Debye's asymptotic form, from memory): below
    1e-15 of the power for kD up to 500. Over a ground, the upper half-space (Gauss-Legendre on [0, 1]).
    Measured against the double sum of :func:`_radiated_power`: agreement to 2e-12 of the power or better
    for kD up to 400 (tests/test_wire_power_check.py).

    Peak search: the intensity of a structure of size D varies no faster than its narrowest lobe, about
    2 pi / (k D) rad between nulls. Up to k D = 24 the grid is the quadrature grid (about 4 points across
    that lobe); beyond, it grows half as fast (at least 2 points across it), and the best local maxima
    are refined as well as the best points. Over real soil the grid is the quadrature grid of the space
    wave at every size.
    """
    if st.soil_eps_c is None:
        extra = min(int(k * size), 12 + int(0.5 * k * size))
        n_t = extra + 24
        n_p = 2 * extra + 36
    else:
        n_t = int(k * size) + 24
        n_p = 2 * int(k * size) + 36
    xg, wg = gauss_legendre_01(n_t)
    mu, wmu = (xg, wg) if st.ground else (2 * xg - 1, 2 * wg)   # cos(theta) in [0, 1] or [-1, 1]
    theta = np.arccos(mu)
    phi = 2 * math.pi * np.arange(n_p) / n_p
    th, ph = np.meshgrid(theta, phi, indexing="ij")
    u_img = None
    if st.soil_eps_c is None:
        u = _intensity(st, k, seg_i, _directions(th, ph), rad)
    else:   # the space wave and, from the same radiation vectors, the perfect-ground pattern (see solve)
        from rfsafe.antenna.wire.ground import space_and_image_intensity

        u, u_img = space_and_image_intensity(st, k, seg_i, _directions(th, ph), _radiation_vector)
    return th, ph, u, u_img, n_t, n_p, float(np.sum(u * wmu[:, None]) * 2 * math.pi / n_p)


def _power_check(st, k, seg_i) -> float:
    """The radiated power solve() reports for these currents [W], computed as it does (the double sum up to
    ``_POWER_SUM_MAX_SEGMENTS`` segments, the pattern grid's sphere integral above: the grid included, which
    solve() needs anyway for the peak). For benchmarks and tests."""
    if st.soil_eps_c is None and st.num_segments <= _POWER_SUM_MAX_SEGMENTS:
        return _radiated_power(st, k, seg_i)
    pts = np.concatenate([st.start_m, st.end_m])
    if st.ground:
        pts = np.concatenate([pts, pts * np.array([1.0, 1.0, -1.0])])
    size = _diameter(pts) if len(pts) < 3000 else float(np.linalg.norm(pts.max(0) - pts.min(0)))
    rad = _Radiator(st, k, seg_i) if st.soil_eps_c is None else None
    return _pattern_grid(st, k, seg_i, size, rad)[-1]


def _peak_search(st, k, seg_i, starts, dth, dph, tmax, rad=None):
    """Shrinking pattern searches for the largest intensity from each start (theta, phi) [rad].

    The searches run in lockstep (one intensity evaluation per step for all of them); each one moves
    to its best of 8 neighbours when that is larger, else halves its steps, until the theta step is
    below 1e-5 rad (or 40 steps). Returns (u, theta, phi) of each search.
    """
    m = len(starts)
    th = np.array([s[0] for s in starts], dtype=float)
    ph = np.array([s[1] for s in starts], dtype=float)
    best = np.array([float(_intensity(st, k, seg_i, _directions(np.array(t), np.array(p)), rad)) for t, p in starts])
    dt = np.full(m, float(dth))
    dp = np.full(m, float(dph))
    active = np.ones(m, dtype=bool)
    ot = np.array([-1, -1, -1, 0, 0, 1, 1, 1])
    op = np.array([-1, 0, 1, -1, 1, -1, 0, 1])
    for _ in range(40):
        idx = np.flatnonzero(active)
        if not len(idx):
            break
        tt = np.clip(th[idx, None] + dt[idx, None] * ot, 0.0, tmax)
        pp = ph[idx, None] + dp[idx, None] * op
        u = _intensity(st, k, seg_i, _directions(tt, pp), rad).reshape(len(idx), 8)
        for row, i in enumerate(idx):
            j = int(np.argmax(u[row]))
            if u[row, j] > best[i] * (1 + 1e-12):
                best[i], th[i], ph[i] = u[row, j], tt[row, j], pp[row, j]
            else:
                dt[i], dp[i] = 0.5 * dt[i], 0.5 * dp[i]
                if dt[i] < 1e-5:
                    active[i] = False
    return [(float(best[i]), float(th[i]), float(ph[i])) for i in range(m)]

#: Local maxima of the direction grid from which the peak search starts.
PEAK_STARTS = 4


def _grid_maxima(u: np.ndarray, n: int):
    """Indices (theta, phi) of the ``n`` largest local maxima of a (theta, phi) grid (phi periodic)."""
    pad = np.pad(u, ((1, 1), (0, 0)), constant_values=-np.inf)
    core = pad[1:-1]
    peak = ((core >= pad[:-2]) & (core >= pad[2:]) & (core >= np.roll(core, 1, axis=1))
            & (core >= np.roll(core, -1, axis=1)))
    flat = np.flatnonzero(peak.ravel())
    flat = flat[np.argsort(u.ravel()[flat], kind="stable")[::-1]][:n]
    return [np.unravel_index(int(f), u.shape) for f in flat]


#: Relative amount by which the carried power must fall below the terminal power before results are
#: scaled to it (below this the two agree to rounding and the terminal power is kept, so results on wires
#: of one radius stay as they were to the last digit).
POWER_BASIS_TOL = 1e-6


def carried_power_w(z: np.ndarray, c: np.ndarray) -> float:
    """Power carried by basis currents ``c`` [W]: 0.5 c^H Re(Z) c (radiated plus dissipated in loads and soil).

    With Z = R + jX, the terminal power 0.5 Re(c^H Z c) = 0.5 c^H R c + 0.5 Re(j c^H X c), and the last term
    vanishes when X is symmetric (reciprocity). At a radius step the reduced kernel leaves X slightly
    unsymmetric (see :func:`impedance_matrix`), and because X is large on an electrically small structure,
    its antisymmetric part adds a spurious term to the terminal power (measured -70 % to +150 % on shielded
    dipoles at 0.3 to 50 MHz, shield radii 1 um to 50 mm on a 1 mm wire). 0.5 c^H R c drops it: it matches
    the radiated power (an independent computation, see :func:`_radiated_power`) plus the load power to
    1e-5 (tests/test_wire_power_basis.py).
    Computed on the real and imaginary parts separately (x^T R x + y^T R y), so the large reactances never
    enter the sum.

    References
    ----------
    Harrington, Field Computation by Moment Methods (1968), Sec. 4 (the real part of the reaction is the
    power; a reciprocal medium gives a symmetric matrix).
    """
    r = np.ascontiguousarray(z.real)
    x, y = c.real, c.imag
    return 0.5 * float(x @ (r @ x) + y @ (r @ y))


def power_basis_w(p_terminal: float, p_carried: float, *, field: str, freq_hz: float) -> float:
    """The power [W] that fields, currents and gain are scaled to: the smaller of the two estimates.

    The terminal power (0.5 Re sum V I*) and the carried power (:func:`carried_power_w`) agree on wires of
    one radius; where they differ the model is unsure which power the currents stand for, and the
    smaller one gives the larger fields per watt delivered (conservative). A non-positive estimate is no
    estimate (a passive antenna takes power); the carried power is used when it is lower by more than
    ``POWER_BASIS_TOL``.

    Raises
    ------
    InputError
        Neither estimate is positive: the structure is so small for the wavelength that the model
        resolves no power delivered to it.
    """
    p = float(power_basis_array(np.float64(p_terminal), np.float64(p_carried)))
    if not p > 0:
        raise bad_value(field, f"{freq_hz / 1e6:g} MHz",
                        "is far too small for the wavelength: the moment method resolves no power delivered to "
                        f"it (terminal {p_terminal:.3g} W, carried {p_carried:.3g} W per unit excitation); "
                        "accepted: an antenna the solver can resolve at this frequency")
    return p


def power_basis_array(p_terminal, p_carried) -> np.ndarray:
    """The rule of :func:`power_basis_w` elementwise (arrays of terminal and carried powers [W]); NaN where
    neither is a positive finite number (the caller decides: an error, or infinite fields)."""
    with np.errstate(invalid="ignore", over="ignore"):
        ok_t = np.isfinite(p_terminal) & (p_terminal > 0)
        ok_c = np.isfinite(p_carried) & (p_carried > 0)
        use_c = ok_c & (~ok_t | (p_carried < p_terminal * (1.0 - POWER_BASIS_TOL)))
        return np.where(use_c, p_carried, np.where(ok_t, p_terminal, np.nan))


#: Relative difference between the terminal power and the power the solved currents carry above which a
#: configuration's result says so (the results are scaled to the smaller either way; see solver.power_basis_w).
POWER_BASIS_FLAG = 0.01


def power_basis_flag(sols) -> str | None:
    """A flag naming the largest terminal/carried power difference of the solutions, if above POWER_BASIS_FLAG."""
    worst = None
    for s in sols:
        if s is None or not s.carried_power_w:
            continue
        d = s.carried_power_w / s.input_power_w - 1.0 if s.input_power_w > 0 else -math.inf
        if abs(d) > POWER_BASIS_FLAG and (worst is None or abs(d) > abs(worst[0])):
            worst = (d, s)
    if worst is None:
        return None
    d, s = worst
    how = ("the terminals take no power in the model" if not math.isfinite(d) else
           f"the solved currents carry {abs(d) * 100:.3g} % {'less' if d < 0 else 'more'} power than the model's "
           "terminals take")
    return (f"moment-method power balance ({s.ground} ground): {how} (unequal wire radii at a junction, such as a "
            "feedline shield's radius steps); fields, currents and gain are scaled to the smaller power "
            "(conservative)")


def solve(spec, freq_hz: float, *, field_prefix: str = "", enforce_limits: bool = True) -> WireSolution:
    """Solve a wire antenna at one frequency.

    Parameters
    ----------
    spec : WireAntennaSpec
        Wire geometry (a ``WireFile`` works too; its frequency is not used here).
    freq_hz : float
        Frequency [Hz].
    field_prefix : str
        Field-path prefix for error messages (e.g. ``"antennas[2].wire."``).
    enforce_limits : bool
        Refuse segmentations outside the method's limits (default True). Turn off only for method
        validation (a single basis function per dipole).

    Returns
    -------
    WireSolution

    Raises
    ------
    InputError
        Bad geometry or segmentation, each naming the field, the value and what is accepted.

    References
    ----------
    Richmond, NASA CR-2396 (1974); Harrington (1968); Balanis, Antenna Theory, 3rd ed., Ch. 8.
    """
    from rfsafe.antenna.wire.model import check_wire_antenna

    if not (isinstance(freq_hz, (int, float)) and math.isfinite(freq_hz) and freq_hz > 0):
        raise bad_value(f"{field_prefix}freq_hz", freq_hz, "must be a finite frequency > 0 Hz")
    feed_wires = check_wire_antenna(spec, prefix=field_prefix)
    geo = loaded_geometry(spec, feed_wires, prefix=field_prefix)
    st = build_structure(geo.spec, float(freq_hz), geo.feed_wires, prefix=field_prefix,
                         enforce_limits=enforce_limits, load_places=geo.load_places, wire_fields=geo.wire_fields)
    if spec.ground == "real":
        from rfsafe.antenna.wire.ground import with_soil

        st = with_soil(st, spec, prefix=field_prefix)
    k = 2.0 * math.pi * st.freq_hz / C0_M_S
    z = _kept_impedance_matrix(st)
    # Lumped loads (Harrington 1968, Sec. 4.5): Z_L in series with the gap at a node adds Z_L g^T g.
    z_load = load_impedances_ohm(geo, st.freq_hz)
    if len(z_load):
        z += st.load_coupling.T @ (z_load[:, None] * st.load_coupling)
    g = st.feed_coupling
    v = g.T @ st.feed_voltage_v
    c = np.linalg.solve(z, v)
    i_feed = g @ c
    zin = st.feed_voltage_v / i_feed
    p_in = 0.5 * float(np.real(np.sum(st.feed_voltage_v * np.conj(i_feed))))
    p_carried = carried_power_w(z, c)
    p_basis = power_basis_w(p_in, p_carried, field=f"{field_prefix}wires", freq_hz=st.freq_hz)
    seg_i = segment_currents(st, c)
    i_load = st.load_coupling @ c
    p_load = 0.5 * float(np.sum(np.abs(i_load) ** 2 * z_load.real))

    # Radiated power, a check of the solution: from the real part of the mutual impedance, O(N^2)
    # (see _radiated_power), or above _POWER_SUM_MAX_SEGMENTS segments the sphere integral of the far-field
    # intensity on the pattern grid (see _pattern_grid); over real soil that of the space wave (below).
    pts = np.concatenate([st.start_m, st.end_m])
    if st.ground:
        pts = np.concatenate([pts, pts * np.array([1.0, 1.0, -1.0])])
    size = _diameter(pts) if len(pts) < 3000 else float(np.linalg.norm(pts.max(0) - pts.min(0)))
    tmax = 0.5 * math.pi if st.ground else math.pi
    rad = _Radiator(st, k, seg_i) if st.soil_eps_c is None else None   # shared by the grid, peak and back
    th, ph, u, u_img, n_t, n_p, p_grid = _pattern_grid(st, k, seg_i, size, rad)
    if st.soil_eps_c is not None or st.num_segments > _POWER_SUM_MAX_SEGMENTS:
        p_rad = p_grid
    else:
        p_rad = _radiated_power(st, k, seg_i)

    # Peak: the best local maxima of the grid refined by a shrinking pattern search.
    dth, dph = math.pi / n_t, 2 * math.pi / n_p
    best = (-1.0, 0.0, 0.0)
    top = [np.unravel_index(int(f), u.shape) for f in np.argsort(u, axis=None)[::-1][:3]]
    more = [m for m in _grid_maxima(u, PEAK_STARTS) if m not in top] if k * size > 24 else []   # coarser grid
    found = _peak_search(st, k, seg_i, [(th[it, ip], ph[it, ip]) for it, ip in top + more], dth, dph, tmax, rad)
    for n, cand in enumerate(found):
        if cand[0] > best[0] * (1.0 if n < 3 else 1.0 + 1e-9):   # a tie keeps the earlier lobe
            best = cand
    u_max, t_best, p_best = best
    gain = 10 * math.log10(4 * math.pi * u_max / p_basis)
    el = 90.0 - math.degrees(t_best)
    az = round(90.0 - math.degrees(p_best), 6) % 360.0 if abs(el) < 89.999 else 0.0  # undefined at zenith
    u_back = _intensity(st, k, seg_i, _directions(np.array(t_best), np.array(p_best + math.pi)), rad)
    fb = 10 * math.log10(u_max / float(u_back)) if u_back > 0 else math.inf
    gw_gain = None
    if st.soil_eps_c is not None:
        # Over real soil the far field along the ground is Norton's ground wave, E ~ E_direct (1 + R_v +
        # (1 - R_v) F(w)) with |F| <= 1 (Norton 1937): at most the perfect-ground value (R_v -> 1) of the
        # same currents. That image gain, over the grid and the horizon, bounds it (conservative).
        from dataclasses import replace as _replace

        st_pec = _replace(st, soil_eps_c=None)
        ring = _directions(np.full(n_p, 0.5 * math.pi), ph[0])
        u_gw = max(float(u_img.max()), float(_intensity(st_pec, k, seg_i, ring).max()))
        gw_gain = 10 * math.log10(4 * math.pi * u_gw / p_basis)

    return WireSolution(
        freq_hz=st.freq_hz, ground=spec.ground, num_segments=st.num_segments, num_unknowns=st.num_unknowns,
        feed_impedance_ohm=tuple(complex(x) for x in zin),
        feed_voltage_v=tuple(complex(x) for x in st.feed_voltage_v),
        feed_current_a=tuple(complex(x) for x in i_feed),
        input_power_w=p_in, radiated_power_w=p_rad, radiated_over_input_power=p_rad / p_in,
        carried_power_w=p_carried, basis_power_w=p_basis,
        gain_dbi=gain, peak_azimuth_deg=az, peak_elevation_deg=el, front_to_back_db=fb,
        limits_enforced=bool(enforce_limits),
        basis_current_a=c, segment_current_a=seg_i, structure=st, impedance_matrix_ohm=z,
        load_labels=geo.load_labels, load_impedance_ohm=tuple(complex(x) for x in z_load),
        load_current_a=tuple(complex(x) for x in i_load), load_power_w=p_load, geometry_spec=geo.spec,
        shield=geo.shield, ground_method=_ground_method(spec, st), ground_wave_bound_gain_dbi=gw_gain)


#: Impedance matrices kept by solve (see _kept_impedance_matrix): the last few, up to this many unknowns.
_KEPT_MATRICES = 4
_KEPT_MATRIX_MAX_UNKNOWNS = 600
_kept_matrices: dict = {}


#: Structure fields the fill does not read: feeds and loads (solve applies them to the filled matrix) and the
#: names used in messages (they carry the antenna's place in the station file).
_NOT_FILLED = frozenset({"feed_coupling", "feed_voltage_v", "feed_position_m", "load_coupling", "load_position_m",
                         "wire_labels", "wire_fields"})


def _structure_key(st: Structure) -> tuple:
    """Every field of a structure the matrix fill reads, as bytes and values (the sparse basis map by its
    entries)."""
    import dataclasses

    out = []
    for f in dataclasses.fields(st):
        if f.name in _NOT_FILLED:
            continue
        v = getattr(st, f.name)
        if isinstance(v, HalfMap):
            v = (v.shape, v.rows.tobytes(), v.cols.tobytes(), v.vals.tobytes())
        elif isinstance(v, np.ndarray):
            v = (v.dtype.str, v.shape, v.tobytes())
        elif isinstance(v, frozenset):
            v = tuple(sorted(v))
        out.append((f.name, v))
    return tuple(out)


def _kept_impedance_matrix(st: Structure) -> np.ndarray:
    """``impedance_matrix(st)`` (a new array), the matrix of an equal structure reused.

    Two antennas with the same wires at the same frequency (one with a load or a choke, which solve adds
    after the fill, and their ground bounds) have equal structures: the fill is the same function of the
    same numbers, so it is made once. The key holds every field of the structure the fill reads
    (:func:`_structure_key`), the fill function and the module settings it reads; only small structures
    are kept.
    """
    settings = (impedance_matrix, _TRANSLATES, _TRANSLATE_MIN, _RUN_BASES, _TRANSLATE_TOL, N_FAR, N_NEAR, N_WIDE,
                _CHUNK)
    if st.num_unknowns > _KEPT_MATRIX_MAX_UNKNOWNS:
        return impedance_matrix(st)
    key = (settings, _structure_key(st))
    hit = _kept_matrices.get(key)
    if hit is None:
        hit = impedance_matrix(st)
        hit.setflags(write=False)
        _kept_matrices[key] = hit
        while len(_kept_matrices) > _KEPT_MATRICES:
            _kept_matrices.pop(next(iter(_kept_matrices)))
    return hit.copy()


#: Unit-excitation near fields kept per solution: at most this many points in all (about 100 bytes each).
_FIELD_CACHE_POINTS = 200_000
#: Solutions kept by solve_shared (least recently used dropped), only up to this many unknowns.
_SHARED_ENTRIES = 8
_SHARED_MAX_UNKNOWNS = 600
_shared: dict = {}


def solve_shared(spec, freq_hz: float, *, field_prefix: str = "", enforce_limits: bool = True) -> WireSolution:
    """:func:`solve`, with the solution reused for the same geometry, frequency and field prefix.

    Configurations sharing an antenna and a frequency (several modes or powers on one band) then
    share one solve and, through :meth:`WireSolution.fields_phasor`, one set of unit-excitation near
    fields, each scaled to its own power. The solution is the same object for every caller; its
    arrays are read-only. Small solutions only (up to ``_SHARED_MAX_UNKNOWNS`` unknowns, the last
    ``_SHARED_ENTRIES``), so memory stays bounded.
    """
    try:
        key = (type(spec).__name__, spec.model_dump_json(), float(freq_hz), field_prefix, bool(enforce_limits))
    except (AttributeError, TypeError, ValueError):
        key = None
    if key is not None and key in _shared:
        sol = _shared.pop(key)
        _shared[key] = sol   # most recently used last
        return sol
    sol = solve(spec, freq_hz, field_prefix=field_prefix, enforce_limits=enforce_limits)
    if key is not None and sol.num_unknowns <= _SHARED_MAX_UNKNOWNS:
        for a in (sol.basis_current_a, sol.segment_current_a, sol.impedance_matrix_ohm):
            a.setflags(write=False)
        _shared[key] = sol
        while len(_shared) > _SHARED_ENTRIES:
            _shared.pop(next(iter(_shared)))
    return sol


def _ground_method(spec, st) -> str:
    if spec.ground == "free-space":
        return "free space (no ground)"
    if spec.ground == "perfect":
        return "perfectly conducting ground z = 0 (image theory, Balanis Sec. 4.7)"
    from rfsafe.antenna.wire.ground import method_text

    return method_text(spec, st)
