"""Near-field E and H of the solved wire currents, in closed form (no quadrature).

Every segment carries I(z') = [I1 sin k(d - z') + I2 sin kz'] / sin kd; its E and H at any point
follow from the end currents alone (``kernel.segment_e_terms`` / ``segment_h_terms``, the fields of
a sinusoidal filament). The sum runs over all segments and, above a perfect ground, their images.
The exact filament (no reduced kernel) is used: the points must be several radii from the wires.

References
----------
J. H. Richmond, NASA CR-2396 (1974), fields of sinusoidal filaments; C. A. Balanis, Antenna Theory,
3rd ed., Wiley, 2005, Sec. 8.5 (near fields of the sinusoidal-current dipole) and Sec. 4.7 (images).
"""

from __future__ import annotations

import math

import numpy as np

from rfsafe.antenna.wire.geometry import point_segment_distances
from rfsafe.antenna.wire.kernel import ETA0_OHM
from rfsafe.errors import bad_value

__all__ = ["near_fields", "near_fields_direct", "near_fields_together", "check_points", "point_cautions",
           "nearest_run_distance_m", "MIN_POINT_RADII", "NEAR_SEGMENT_WAVELENGTHS"]

#: Points must be at least this many wire radii from the wire axis (thin-wire fields).
MIN_POINT_RADII = 3.0
#: Segments within lambda/(2 pi) of a point of interest must be at most lambda/20 (common practice).
NEAR_SEGMENT_WAVELENGTHS = 0.05
_CHUNK = 200_000


def near_fields(st, k: float, seg_i: np.ndarray, points_m: np.ndarray):
    """E [V/m] and H [A/m] peak phasors (N, 3) of segment currents ``seg_i`` (Ns, 2) [A peak].

    The same sums as ``near_fields_direct`` (see there for the formulas), arranged by straight runs of
    segments (``_runs``): along a run the radial vector, rho and the axial coordinate of a point are shared by
    all its segments, each node's e^{-jkR} and e^{-jkR}/R serve the two segments meeting there, and the sums
    over a run's nodes take node coefficients summed once per call. Few points: all runs at once (few array
    operations per call); many points: run by run, the sums one matrix product per run and block of points.
    Equal to the direct sum to rounding (tests/test_wire_fields.py); structures without long runs (bent or
    curved wires) take the direct sum.
    """
    pts = np.asarray(points_m, dtype=float).reshape(-1, 3)
    geo = _runs(st)
    if geo["real_runs"] * 4 > st.num_segments + 4:     # mostly short runs: the per-run overhead would not pay
        return near_fields_direct(st, k, seg_i, points_m)
    e_out = np.zeros(pts.shape, dtype=complex)
    h_out = np.zeros(pts.shape, dtype=complex)
    if len(pts):
        node_coef = _node_coefficients(st, k, seg_i, geo)
        if len(pts) * len(geo["t"]) <= _SMALL:
            _all_runs_fields(pts, k, geo, node_coef, e_out, h_out)
        else:
            for r0, r1, origin, u, tiny in geo["runs"]:
                _run_fields(pts, k, origin, u, geo["t"][r0:r1], tiny, _run_matrix(node_coef, r0, r1), e_out, h_out)
    if st.soil_eps_c is not None and len(pts):   # real ground: images above carry -K; add the remainder
        from rfsafe.antenna.wire.ground import remainder_near_fields

        e_r, h_r = remainder_near_fields(st, k, seg_i, pts)
        e_out += e_r
        h_out += h_r
    return e_out, h_out


def _node_coefficients(st, k: float, seg_i: np.ndarray, geo: dict) -> np.ndarray:
    """(A, B, U, V) coefficients of every run node (4, nodes) for currents ``seg_i`` (see near_fields).

    They depend on the currents and the geometry only: the last few are kept on the (frozen) structure,
    keyed by k and the current values (not the array's identity), for the many calls of one solution.
    """
    kept = st.__dict__.get("_field_node_coef")
    if kept is None:
        kept = {}
        object.__setattr__(st, "_field_node_coef", kept)
    key = (float(k), seg_i.dtype.str, seg_i.shape, np.ascontiguousarray(seg_i).tobytes())
    hit = kept.get(key)
    if hit is not None:
        return hit
    d = st.length_m
    i1, i2 = seg_i[:, 0], seg_i[:, 1]
    c, s = np.cos(k * d), np.sin(k * d)
    a = 1j * ETA0_OHM / (4.0 * math.pi * s)
    # Per segment: coefficients at its start (row 0) and end (row 1) node of g (and g D) for E_z and
    # E_rho rho^2 (A), of e for E_rho rho^2 (B), of g D for H_phi rho^2 (U) and of e for H_phi rho^2 (V).
    seg_coef = np.empty((4, 2, len(d)), dtype=complex)
    seg_coef[0, 0], seg_coef[0, 1] = a * (c * i1 - i2), a * (c * i2 - i1)
    seg_coef[1, 0], seg_coef[1, 1] = -1j * s * a * i1, 1j * s * a * i2
    seg_coef[2, 0], seg_coef[2, 1] = -i1 / (4.0 * math.pi), i2 / (4.0 * math.pi)
    seg_coef[3, 0] = 1j * (i2 - c * i1) / (4.0 * math.pi * s)
    seg_coef[3, 1] = 1j * (i1 - c * i2) / (4.0 * math.pi * s)
    node_coef = np.zeros((4, len(geo["t"])), dtype=complex)     # (A, B, U, V) per node of every run
    node_coef[:, geo["start_node"]] = seg_coef[:, 0, geo["seg"]]
    node_coef[:, geo["end_node"]] += seg_coef[:, 1, geo["seg"]]   # each node ends at most one segment
    node_coef *= geo["node_sign"]
    node_coef.setflags(write=False)
    while len(kept) >= _KEPT_COEFFICIENTS:
        kept.pop(next(iter(kept)))
    kept[key] = node_coef
    return node_coef


#: Coefficient sets kept per structure (a solution's currents, and a few more for the shield's callers).
_KEPT_COEFFICIENTS = 4
#: Point-node pairs up to which all runs are summed at once (small calls: few array operations).
_SMALL = 40_000


def _all_runs_fields(pts, k, geo, node_coef, e_out, h_out) -> None:
    """Add the E and H of every run at pts (N, 3) into e_out, h_out, all runs at once (see near_fields)."""
    rv, rho2, dz = _all_runs_geometry(pts, geo)
    _all_runs_sums(geo, node_coef, *_all_runs_phases(k, rho2, dz, geo["node_run"]), rv, rho2, e_out, h_out)


def _all_runs_geometry(pts, geo):
    """Radial vectors (N, runs, 3), rho^2 (N, runs) and D of each node (N, nodes) of the points (_all_runs_fields)."""
    origin, u, node_run = geo["origin"], geo["unit"], geo["node_run"]
    w = pts[:, None, :] - origin[None]                     # (N, runs, 3)
    zg = np.einsum("prk,rk->pr", w, u)
    rv = w - zg[..., None] * u
    rho2 = np.einsum("prk,prk->pr", rv, rv)
    dz = geo["t"] - zg[:, node_run]                        # D of each node (D1 = -z, D2 = d - z of its segments)
    return rv, rho2, dz


def _all_runs_phases(k, rho2, dz, node_run):
    """e^{-jkR}, e^{-jkR}/R and e^{-jkR} D/R of every node (N, nodes) (_all_runs_fields)."""
    r = np.sqrt(rho2[:, node_run] + dz * dz)
    ph = np.exp(r * (-1j * k))
    g = ph / r
    gd = g * dz
    return ph, g, gd


def _all_runs_sums(geo, node_coef, ph, g, gd, rv, rho2, e_out, h_out) -> None:
    """The run sums of :func:`_all_runs_fields` from its node phases, added into e_out, h_out."""
    u = geo["unit"]
    starts = geo["run_start"]
    ez = np.add.reduceat(g * node_coef[0], starts, axis=1)
    er = np.add.reduceat(gd * node_coef[0] + ph * node_coef[1], starts, axis=1)
    hh = np.add.reduceat(gd * node_coef[2] + ph * node_coef[3], starts, axis=1)
    with np.errstate(divide="ignore"):
        inv = np.where(rho2 <= geo["tiny"], 0.0, 1.0 / rho2)
    cu = np.empty_like(rv)                                  # u x (radial vector)
    cu[..., 0] = u[:, 1] * rv[..., 2] - u[:, 2] * rv[..., 1]
    cu[..., 1] = u[:, 2] * rv[..., 0] - u[:, 0] * rv[..., 2]
    cu[..., 2] = u[:, 0] * rv[..., 1] - u[:, 1] * rv[..., 0]
    e_out += ez @ u + np.einsum("pr,prk->pk", er * inv, rv)
    h_out += np.einsum("pr,prk->pk", hh * inv, cu)


def _all_runs_fields_together(pts, k, geos, coefs, outs) -> None:
    """:func:`_all_runs_fields` of several structures whose runs are the first runs of the one with the most
    (a free-space antenna and the same antenna over a perfect ground: its real runs, then the images).

    The node phases of the largest are computed once; a structure whose radial geometry at the points is,
    bit for bit, the first columns of the largest's takes the first columns of its phases (the same
    elementwise operations on the same numbers), any other computes its own. Each structure's sums are its
    own, as :func:`_all_runs_fields` forms them.
    """
    big = max(range(len(geos)), key=lambda j: len(geos[j]["t"]))
    rv_b, rho2_b, dz_b = _all_runs_geometry(pts, geos[big])
    phases_b = _all_runs_phases(k, rho2_b, dz_b, geos[big]["node_run"])
    for j, (geo, coef, (e_out, h_out)) in enumerate(zip(geos, coefs, outs)):
        if j == big:
            _all_runs_sums(geo, coef, *phases_b, rv_b, rho2_b, e_out, h_out)
            continue
        rv, rho2, dz = _all_runs_geometry(pts, geo)
        n, nr = len(geo["t"]), len(geo["run_start"])
        if rho2.tobytes() == rho2_b[:, :nr].tobytes() and dz.tobytes() == np.ascontiguousarray(dz_b[:, :n]).tobytes():
            phases = tuple(x[:, :n] for x in phases_b)
        else:
            phases = _all_runs_phases(k, rho2, dz, geo["node_run"])
        _all_runs_sums(geo, coef, *phases, rv, rho2, e_out, h_out)


def _run_fields(pts, k, origin, u, t, tiny, cm, e_out, h_out) -> None:
    """Add one straight run's E and H at pts (N, 3) into e_out, h_out; cm (3 (m + 1), 3): node coefficients."""
    _run_fields_multi(pts, k, origin, u, t, tiny, [(cm, e_out, h_out)])


def _run_fields_multi(pts, k, origin, u, t, tiny, items) -> None:
    """:func:`_run_fields` for several sets of node coefficients on the same run (``items``: (cm, e_out, h_out)):
    the point geometry, distances and phase factors are computed once, each set's sums and additions as
    :func:`_run_fields` makes them alone (the same numbers)."""
    nn = len(t)
    step = max(1, _CHUNK // nn)
    for lo in range(0, len(pts), step):
        w = pts[lo:lo + step] - origin
        zg = w @ u
        rv = w - zg[:, None] * u
        rho2 = np.einsum("ij,ij->i", rv, rv)
        dz = t[None, :] - zg[:, None]                     # D of each node (D1 = -z, D2 = d - z of its segments)
        r = np.sqrt(rho2[:, None] + dz * dz)
        buf = np.empty((len(w), 3, nn), dtype=complex)
        ph = buf[:, 2]
        np.multiply(r, -1j * k, out=ph)
        np.exp(ph, out=ph)
        np.divide(ph, r, out=buf[:, 0])
        np.multiply(buf[:, 0], dz, out=buf[:, 1])
        flat = buf.reshape(len(w), 3 * nn)
        with np.errstate(divide="ignore"):
            inv = np.where(rho2 <= tiny, 0.0, 1.0 / rho2)
        cross = np.cross(u, rv)
        for cm, e_out, h_out in items:
            out = flat @ cm                                # (E_z, E_rho rho^2, H_phi rho^2) summed over the run
            er = out[:, 1] * inv
            hh = out[:, 2] * inv
            e_out[lo:lo + step] += out[:, 0, None] * u + er[:, None] * rv
            h_out[lo:lo + step] += hh[:, None] * cross


def _run_matrix(node_coef: np.ndarray, r0: int, r1: int) -> np.ndarray:
    """Node coefficients of one run as the (3 (m + 1), 3) matrix of :func:`_run_fields`."""
    cm = np.zeros((3, r1 - r0, 3), dtype=complex)      # (g | g D | e) x node x column
    cm[0, :, 0] = cm[1, :, 1] = node_coef[0, r0:r1]
    cm[2, :, 1] = node_coef[1, r0:r1]
    cm[1, :, 2] = node_coef[2, r0:r1]
    cm[2, :, 2] = node_coef[3, r0:r1]
    return cm.reshape(-1, 3)


def near_fields_together(items, k: float, points_m):
    """``[near_fields(st, k, seg_i, points_m) for st, seg_i in items]``, the same numbers, sharing the work of
    straight runs the structures have in common.

    Solutions of one geometry at one frequency (the same antenna over free space and over a perfect ground,
    or with and without a load) have the same real runs: the distances and phase factors of a point set to
    a run are computed once for all of them; each structure's sums are formed and added in its own order
    of runs (real, then its images), as :func:`near_fields` does. Structures over real soil, with mostly
    short runs, or a call small enough for the all-runs path are evaluated one by one.
    """
    pts = np.asarray(points_m, dtype=float).reshape(-1, 3)
    geos = [_runs(st) for st, _ in items]

    def real(geo):
        return [(r1 - r0, o.tobytes(), u.tobytes(), geo["t"][r0:r1].tobytes(), tiny)
                for r0, r1, o, u, tiny in geo["runs"][:geo["real_runs"]]]

    alone = (len(items) < 2 or not len(pts)
             or any(st.soil_eps_c is not None or geo["real_runs"] * 4 > st.num_segments + 4
                    for (st, _), geo in zip(items, geos))
             or any(real(geo) != real(geos[0]) for geo in geos[1:]))
    small = [len(pts) * len(geo["t"]) <= _SMALL for geo in geos]
    if not alone and all(small) and _run_prefixes(geos):   # all-runs path of each, the node phases shared
        outs = [(np.zeros(pts.shape, dtype=complex), np.zeros(pts.shape, dtype=complex)) for _ in items]
        coefs = [_node_coefficients(st, k, seg_i, geo) for (st, seg_i), geo in zip(items, geos)]
        _all_runs_fields_together(pts, k, geos, coefs, outs)
        return outs
    if alone or any(small):
        return [near_fields(st, k, seg_i, pts) for st, seg_i in items]
    outs = [(np.zeros(pts.shape, dtype=complex), np.zeros(pts.shape, dtype=complex)) for _ in items]
    coefs = [_node_coefficients(st, k, seg_i, geo) for (st, seg_i), geo in zip(items, geos)]
    nr = geos[0]["real_runs"]
    for j, (r0, r1, origin, u, tiny) in enumerate(geos[0]["runs"][:nr]):
        _run_fields_multi(pts, k, origin, u, geos[0]["t"][r0:r1], tiny,
                          [(_run_matrix(c, *g["runs"][j][:2]), e, h) for c, g, (e, h) in zip(coefs, geos, outs)])
    for c, geo, (e, h) in zip(coefs, geos, outs):
        for r0, r1, origin, u, tiny in geo["runs"][nr:]:
            _run_fields(pts, k, origin, u, geo["t"][r0:r1], tiny, _run_matrix(c, r0, r1), e, h)
    return outs


def _run_prefixes(geos) -> bool:
    """Whether every structure's runs (``_runs``) are, to the bit, the first runs of the one with the most nodes."""
    big = max(geos, key=lambda geo: len(geo["t"]))
    keys = ("t", "node_run", "run_start", "origin", "unit", "tiny")
    return all(all(np.asarray(geo[q]).tobytes() == np.asarray(big[q])[:len(geo[q])].tobytes() for q in keys)
               for geo in geos)


def _runs(st) -> dict:
    """Straight runs of consecutive segments, real and (above a ground) image, as flat arrays.

    A run is a maximal sequence of segments each starting at the previous one's end node, with the same
    direction (to 1e-12) and nodes on the run's line (to 1e-12 of its length). The images (mirrored geometry)
    follow the real runs with the image current sign. Keys: ``runs`` [(first node, end node, origin, unit,
    tiny)], ``origin``, ``unit`` (runs, 3), ``tiny`` (runs,), ``t`` (nodes,) position along the run,
    ``node_run``, ``node_sign`` (nodes,), ``run_start`` (runs,) first node, ``seg``, ``start_node``,
    ``end_node`` (entries,) each run segment and its nodes, ``real_runs``.
    """
    hit = st.__dict__.get("_field_runs")     # geometry only: kept on the (frozen) structure once found
    if hit is not None:
        return hit
    sdir = st.direction
    length = st.length_m
    ns = st.num_segments
    bounds = [0]
    for i in range(1, ns):
        o = st.start_m[bounds[-1]]
        same = (st.node1[i] == st.node2[i - 1] and np.max(np.abs(sdir[i] - sdir[bounds[-1]])) <= 1e-12)
        if same:
            off = st.end_m[i] - o
            off = off - (off @ sdir[bounds[-1]]) * sdir[bounds[-1]]
            same = float(np.linalg.norm(off)) <= 1e-12 * float(np.linalg.norm(st.end_m[i] - o))
        if not same:
            bounds.append(i)
    bounds.append(ns)
    mirrors = [(np.array([1.0, 1.0, 1.0]), 1.0)]
    if st.ground:
        mirrors.append((np.array([1.0, 1.0, -1.0]), st.image_sign))
    runs, origin, unit, tiny, t, node_run, node_sign, run_start, seg, start_node = ([] for _ in range(10))
    n0 = 0
    for mir, sign in mirrors:
        for b0, b1 in zip(bounds[:-1], bounds[1:]):
            idx = np.arange(b0, b1)
            o = st.start_m[b0] * mir
            u = sdir[b0] * mir
            nodes = np.concatenate([st.start_m[idx], st.end_m[idx[-1:]]]) * mir
            m = len(idx) + 1
            tn = (nodes - o) @ u
            tn_tiny = (1e-9 * float(length[idx].min())) ** 2
            runs.append((n0, n0 + m, o, u, tn_tiny))
            origin.append(o)
            unit.append(u)
            tiny.append(tn_tiny)
            t.append(tn)
            node_run.append(np.full(m, len(run_start)))
            node_sign.append(np.full(m, sign, dtype=complex))
            run_start.append(n0)
            seg.append(idx)
            start_node.append(n0 + np.arange(m - 1))
            n0 += m
    start_node = np.concatenate(start_node)
    out = {"runs": runs, "origin": np.array(origin), "unit": np.array(unit), "tiny": np.array(tiny),
           "t": np.concatenate(t), "node_run": np.concatenate(node_run), "node_sign": np.concatenate(node_sign),
           "run_start": np.array(run_start), "seg": np.concatenate(seg), "start_node": start_node,
           "end_node": start_node + 1, "real_runs": len(bounds) - 1}
    object.__setattr__(st, "_field_runs", out)
    return out


def near_fields_direct(st, k: float, seg_i: np.ndarray, points_m: np.ndarray):
    """Segment by segment (the reference for ``near_fields``): E [V/m] and H [A/m] peak phasors (N, 3) of segment currents ``seg_i`` (Ns, 2) [A peak].

    Parameters
    ----------
    st : Structure
        Segmented structure.
    k : float
        Wavenumber [rad/m].
    seg_i : ndarray (Ns, 2) complex
        Current at the start and end of each segment, in the segment direction [A peak].
    points_m : ndarray (N, 3)
        Observation points [m].

    Notes
    -----
    The two half functions of a segment are summed before the point loop: with currents i1, i2 at
    its ends, A = j eta / (4 pi sin kd), c = cos kd, s = sin kd, g_i = E_i / R_i, D1 = -z, D2 = d - z
    (``kernel.segment_e_terms`` and ``segment_h_terms`` weighted by i1 and i2)::

        E_z     = a1 g1 + a2 g2                                  a1 = A (c i1 - i2), a2 = A (c i2 - i1)
        E_rho   = [a1 g1 D1 + a2 g2 D2 + b1 E1 + b2 E2] / rho^2   b1 = -j s A i1,    b2 = j s A i2
        H_phi   = [u1 g1 D1 + u2 g2 D2 + v1 E1 + v2 E2] / rho^2   u1 = -i1 / 4 pi,   u2 = i2 / 4 pi,
                                                                  v1 = j (i2 - c i1) / (4 pi s),
                                                                  v2 = j (i1 - c i2) / (4 pi s)

    as coefficients of the radial vector and of s x (radial vector). On a segment's axis (beyond
    its ends: ``check_points`` keeps points off the wire) E_z takes the true rho = 0 and the radial
    E and H vanish by symmetry.
    """
    pts = np.asarray(points_m, dtype=float).reshape(-1, 3)
    e_out = np.zeros(pts.shape, dtype=complex)
    h_out = np.zeros(pts.shape, dtype=complex)
    # Distances and phase factors are computed once per node (each is shared by two segments).
    nodes, inv = np.unique(np.concatenate([st.node1, st.node2]), return_inverse=True)
    n1, n2 = inv[:st.num_segments], inv[st.num_segments:]
    for s0, s1, _r, sign, _d in st.sources():
        node_m = np.empty((len(nodes), 3))
        node_m[n1], node_m[n2] = s0, s1
        sd = s1 - s0
        d = np.linalg.norm(sd, axis=1)
        sdir = sd / d[:, None]
        sdir_c = sdir.astype(complex)
        i1, i2 = sign * seg_i[:, 0], sign * seg_i[:, 1]
        c, s = np.cos(k * d), np.sin(k * d)
        a = 1j * ETA0_OHM / (4.0 * math.pi * s)
        a1, a2 = a * (c * i1 - i2), a * (c * i2 - i1)
        b1, b2 = -1j * s * a * i1, 1j * s * a * i2
        u1, u2 = -i1 / (4.0 * math.pi), i2 / (4.0 * math.pi)
        v1, v2 = 1j * (i2 - c * i1) / (4.0 * math.pi * s), 1j * (i1 - c * i2) / (4.0 * math.pi * s)
        tiny = (1e-9 * d) ** 2
        step = max(1, _CHUNK // len(s0))
        for lo in range(0, len(pts), step):
            p = pts[lo:lo + step]
            dist = np.sqrt(sum((p[:, j, None] - node_m[None, :, j]) ** 2 for j in range(3)))
            ph = np.exp(-1j * k * dist)
            gn = ph / dist
            e1, e2, g1, g2 = ph[:, n1], ph[:, n2], gn[:, n1], gn[:, n2]
            vx, vy, vz = (p[:, j, None] - s0[None, :, j] for j in range(3))
            z = vx * sdir[:, 0] + vy * sdir[:, 1] + vz * sdir[:, 2]
            rx, ry, rz = vx - z * sdir[:, 0], vy - z * sdir[:, 1], vz - z * sdir[:, 2]
            rho2 = rx * rx + ry * ry + rz * rz
            g1d, g2d = g1 * -z, g2 * (d - z)
            with np.errstate(divide="ignore"):
                w = np.where(rho2 <= tiny, 0.0, 1.0 / rho2)
            ez = a1 * g1 + a2 * g2
            er = (a1 * g1d + a2 * g2d + b1 * e1 + b2 * e2) * w
            hh = (u1 * g1d + u2 * g2d + v1 * e1 + v2 * e2) * w
            e_out[lo:lo + step] += ez @ sdir_c
            e_out[lo:lo + step, 0] += np.sum(er * rx, axis=1)
            e_out[lo:lo + step, 1] += np.sum(er * ry, axis=1)
            e_out[lo:lo + step, 2] += np.sum(er * rz, axis=1)
            # H = hh (s x rho_vec), component by component
            h_out[lo:lo + step, 0] += np.sum(hh * (sdir[:, 1] * rz - sdir[:, 2] * ry), axis=1)
            h_out[lo:lo + step, 1] += np.sum(hh * (sdir[:, 2] * rx - sdir[:, 0] * rz), axis=1)
            h_out[lo:lo + step, 2] += np.sum(hh * (sdir[:, 0] * ry - sdir[:, 1] * rx), axis=1)
    if st.soil_eps_c is not None and len(pts):   # real ground: images above carry -K; add the remainder
        from rfsafe.antenna.wire.ground import remainder_near_fields

        e_r, h_r = remainder_near_fields(st, k, seg_i, pts)
        e_out += e_r
        h_out += h_r
    return e_out, h_out


def _as_points(points_m, field):
    try:
        pts = np.asarray(points_m, dtype=float)
    except (TypeError, ValueError):
        raise bad_value(field, points_m, "must be an array of [x, y, z] points in metres") from None
    if pts.ndim == 1 and pts.shape == (3,):
        pts = pts[None, :]
    if pts.ndim != 2 or pts.shape[1] != 3:
        raise bad_value(field, np.shape(points_m), "must have shape (N, 3) (points [x, y, z] in metres)")
    bad = ~np.all(np.isfinite(pts), axis=1)
    if np.any(bad):
        i = int(np.argmax(bad))
        raise bad_value(f"{field}[{i}]", pts[i].tolist(), "must be finite coordinates in metres")
    return pts


def _nearest(st, pts):
    """Distance from each point to the nearest wire [m], that segment, and all distances."""
    dist = point_segment_distances(pts[:, None, :], st.start_m[None], st.end_m[None])
    q = np.argmin(dist, axis=1)
    return dist[np.arange(len(pts)), q], q, dist


def _clear_of_wires(st, pts: np.ndarray, lam: float, d_near: float, enforced: bool) -> bool:
    """True when no point can fail :func:`check_points`, judged by straight runs instead of segments.

    A straight run (``_runs``: collinear, connected segments) is the union of its segments, so the
    distance from a point to the run's line piece is the smallest distance to its segments. Every
    point at least ``MIN_POINT_RADII`` of the largest radius (and, when limits are enforced, lambda/2pi
    from every run holding a segment longer than lambda/20) from every run, with a margin of 1e-6
    relative and 1e-9 of the run's length for the rounding, passes the segment-by-segment test; any
    other set of points takes that test (the screen only skips work, it never decides a refusal).
    Costs points x runs instead of points x segments.
    """
    key = (float(lam), float(d_near), bool(enforced))
    kept = st.__dict__.get("_screen_runs")
    if kept is None or kept[0] != key:
        geo = _runs(st)
        nr = geo["real_runs"]
        first = geo["run_start"][:nr]
        last = np.append(geo["run_start"][1:], len(geo["t"]))[:nr] - 1
        t0, t1 = geo["t"][first], geo["t"][last]
        need = np.full(nr, MIN_POINT_RADII * float(st.radius_m.max()))
        long_seg = st.length_m > NEAR_SEGMENT_WAVELENGTHS * lam * (1 + 1e-9)
        if enforced and np.any(long_seg):
            run_of_seg = np.empty(st.num_segments, dtype=int)
            run_of_seg[geo["seg"][:st.num_segments]] = np.repeat(np.arange(nr), last - first)
            has_long = np.zeros(nr, dtype=bool)
            has_long[run_of_seg[long_seg]] = True
            need = np.where(has_long, np.maximum(need, d_near), need)
        need = need * (1 + 1e-6) + 1e-9 * np.abs(t1 - t0)
        kept = (key, geo["origin"][:nr], geo["unit"][:nr], np.minimum(t0, t1), np.maximum(t0, t1), need * need)
        object.__setattr__(st, "_screen_runs", kept)
    _key, origin, unit, lo, hi, need2 = kept
    step = max(1, _CHUNK // len(origin))
    for a in range(0, len(pts), step):
        w = pts[a:a + step, None, :] - origin[None]                     # (N, runs, 3)
        z = np.clip(np.einsum("prk,rk->pr", w, unit), lo, hi)
        w -= z[..., None] * unit
        if not np.all(np.einsum("prk,prk->pr", w, w) >= need2):
            return False
    return True


def nearest_run_distance_m(st, points_m) -> tuple[np.ndarray, float]:
    """Distance [m] from each point (N, 3) to the nearest straight run of the real wires, and its tolerance [m].

    A straight run (``_runs``) is the union of its collinear, connected segments, so this is the distance to
    the nearest segment up to rounding: within the returned tolerance (1e-9 of the longest run plus 1e-9
    relative) of ``geometry.point_segment_distances`` minimised over the segments. For deciding a threshold
    cheaply (points x runs instead of points x segments): a point within the tolerance of the threshold
    must be decided by the segment distances.
    """
    geo = _runs(st)
    nr = geo["real_runs"]
    first = geo["run_start"][:nr]
    last = np.append(geo["run_start"][1:], len(geo["t"]))[:nr] - 1
    t0, t1 = geo["t"][first], geo["t"][last]
    lo, hi = np.minimum(t0, t1), np.maximum(t0, t1)
    origin, unit = geo["origin"][:nr], geo["unit"][:nr]
    pts = np.asarray(points_m, dtype=float).reshape(-1, 3)
    out = np.empty(len(pts))
    step = max(1, _CHUNK // nr)
    for a in range(0, len(pts), step):
        w = pts[a:a + step, None, :] - origin[None]
        z = np.clip(np.einsum("prk,rk->pr", w, unit), lo, hi)
        w -= z[..., None] * unit
        out[a:a + step] = np.sqrt(np.einsum("prk,prk->pr", w, w).min(axis=1))
    return out, 1e-9 * float(np.max(hi - lo)) if nr else 0.0


def check_points(sol, points_m, *, field: str = "points_m") -> np.ndarray:
    """Validate observation points against the method's limits; returns them as (N, 3).

    Raises
    ------
    InputError
        A point below a perfect ground, closer than 3 wire radii to a wire, or (unless the solution
        was computed with ``enforce_limits=False``) within lambda/(2 pi) of a segment longer than
        lambda/20.
    """
    st = sol.structure
    pts = _as_points(points_m, field)
    if st.ground and np.any(pts[:, 2] < 0):
        i = int(np.argmax(pts[:, 2] < 0))
        raise bad_value(f"{field}[{i}]", pts[i].tolist(),
                        f"is below the {'real' if st.soil_eps_c is not None else 'perfect'} ground (accepted: z >= 0 m)")
    if len(pts) == 0:
        return pts
    lam = sol.wavelength_m
    d_near = lam / (2 * math.pi)
    if _clear_of_wires(st, pts, lam, d_near, sol.limits_enforced):
        return pts
    step = max(1, _CHUNK // st.num_segments)
    for a in range(0, len(pts), step):
        p = pts[a:a + step]
        dmin, q, dist = _nearest(st, p)
        ratio = dmin / st.radius_m[q]
        if np.any(ratio < MIN_POINT_RADII):
            i = int(np.argmax(ratio < MIN_POINT_RADII))
            w = int(st.wire[q[i]])
            raise bad_value(f"{field}[{a + i}]", p[i].tolist(),
                            f"is {dmin[i]:.3g} m from wire {st.wire_labels[w]!r} (radius {st.radius_m[q[i]]:g} m): "
                            f"accepted: at least {MIN_POINT_RADII:g} wire radii from every wire "
                            "(thin-wire fields do not hold on or inside a conductor)")
        long_seg = st.length_m > NEAR_SEGMENT_WAVELENGTHS * lam * (1 + 1e-9)
        if sol.limits_enforced and np.any(long_seg):
            hit = (dist < d_near) & long_seg[None, :]
            if np.any(hit):
                i, qq = map(int, np.argwhere(hit)[0])
                w = int(st.wire[qq])
                length = float(st.length_m[qq])
                need = math.ceil(float(st.length_m[st.wire == w].sum()) / (NEAR_SEGMENT_WAVELENGTHS * lam))
                raise bad_value(f"{field}[{a + i}]", p[i].tolist(),
                                f"is within lambda/2pi ({d_near:.3g} m) of wire {st.wire_labels[w]!r}, whose "
                                f"segments are {length:.3g} m = lambda/{lam / length:.3g} long: accepted: "
                                f"segments at most lambda/20 ({NEAR_SEGMENT_WAVELENGTHS * lam:.3g} m) near a point "
                                f"of interest (set {st.wire_fields[w]}.segments >= {need})")
    return pts


def point_cautions(sol, points_m, labels=None) -> tuple[str, ...]:
    """Cautions for points within one segment length of a wire (the result depends on segmentation)."""
    st = sol.structure
    pts = _as_points(points_m, "points_m")
    if len(pts) == 0:
        return ()
    dmin, q, _ = _nearest(st, pts)
    out = []
    for i in np.nonzero(dmin < st.length_m[q])[0]:
        name = labels[i] if labels is not None else f"points_m[{i}]"
        w = int(st.wire[q[i]])
        out.append(f"point {name!s} is {dmin[i]:.3g} m from wire {st.wire_labels[w]!r}, closer than one "
                   f"segment ({st.length_m[q[i]]:.3g} m): the near field there depends on the segmentation; "
                   "refine the segments and compare")
    return tuple(out)
