"""The outer surface of a coax feedline's shield as a conductor of the wire model (common-mode current).

Inside a coaxial line the currents on the inner conductor and on the inside of the shield are equal
and opposite (skin effect keeps them apart from the outside surface). At the feed point the inner
conductor drives one part of the antenna and the shield the other; the outside of the shield is a
third conductor joined at the shield's side, so the source sits between the inner conductor's part
of the antenna and the junction of the shield's part with the shield's outer surface. The current
that flows on that outer surface is the common-mode (antenna) current of the feedline; it radiates
along the route of the cable. A choke on the line is a lumped series impedance on that conductor.

The fed wire is therefore cut at the feed into two wires; the source moves to the end of the
inner conductor's part, at the junction; the shield's route is added as a wire from the feed point.
Where the shield is more than twice as thick (or thin) as the antenna wire, short intermediate pieces
step the radius by at most a factor of 2 (the solver's junction rule).

References
----------
C. A. Balanis, Antenna Theory: Analysis and Design, 3rd ed., Wiley, 2005, Sec. 9.7 (baluns: the
unbalanced current on the outside of a coaxial line feeding a balanced antenna), from memory.
W. Maxwell, Reflections: Transmission Lines and Antennas, ARRL, 1990, Ch. 21 (current on the outside
of the coax shield, choke baluns), from memory.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from rfsafe.errors import InputError, bad_value

__all__ = ["ExpandedShield", "check_shield", "expand_shield", "TAPER_PIECE_RADII", "CommonModeCurrent",
           "common_mode_current", "ChokeSweep", "required_choke_ohm", "CHOKE_SCAN_OHM", "route_polyline_m"]

#: Length of each radius-step piece between the antenna wire and the shield [its own radii].
TAPER_PIECE_RADII = 10.0
_TOL_M = 1e-6


@dataclass(frozen=True)
class ExpandedShield:
    """A wire spec with the shield added as wires, and where the shield's parts are."""

    spec: object                       # WireAntennaSpec without ``shield``
    feed_wires: tuple[int, ...]
    wire_fields: tuple[str, ...]       # field path of each wire of ``spec`` for messages
    load_fields: tuple[str, ...]       # field path of each load of ``spec``
    route_wires: tuple[int, ...]       # wires of the shield, from the feed point outward
    route_length_m: float
    choke_load: int | None             # index of the choke in ``spec.loads``
    feed_point_m: tuple[float, float, float]
    far_end: str                       # "open" or "ground"
    choke_declared: bool = True        # False: ``choke_load`` is a 0-ohm slot at the feed (for choke sweeps)


def _arcs(points) -> np.ndarray:
    p = np.asarray(points, dtype=float)
    return np.concatenate([[0.0], np.cumsum(np.linalg.norm(np.diff(p, axis=0), axis=1))])


def _point_at(points, s: float) -> np.ndarray:
    p = np.asarray(points, dtype=float)
    cum = _arcs(p)
    j = min(int(np.searchsorted(cum, s, side="right")) - 1, len(p) - 2)
    t = (s - cum[j]) / (cum[j + 1] - cum[j])
    return p[j] + t * (p[j + 1] - p[j])


def _route_points(spec, feed_wires) -> tuple[np.ndarray, np.ndarray]:
    sh = spec.shield
    w = spec.wires[feed_wires[sh.feed]]
    p = _point_at(w.points_m, spec.feeds[sh.feed].position * _arcs(w.points_m)[-1])
    return p, np.concatenate([p[None, :], np.asarray(sh.route_m, dtype=float)])


def check_shield(spec, feed_wires: tuple[int, ...], *, prefix: str = "") -> None:
    """Checks of ``spec.shield`` that need the rest of the model.

    Raises
    ------
    InputError
        Unknown feed, a feed at a wire end, a route that starts at the feed point, a far end that does
        not match the ground, a choke at an open far end or with no circuit element.
    """
    from rfsafe.antenna.wire.model import along_fraction, check_circuit

    sh = spec.shield
    path = f"{prefix}shield"
    if sh.feed >= len(spec.feeds):
        raise bad_value(f"{path}.feed", sh.feed, f"is not a feed index (accepted: 0 to {len(spec.feeds) - 1})")
    if sh.segments is not None and sh.max_segment_m is not None:
        raise InputError(f"{path}.max_segment_m: give either segments or max_segment_m, not both")
    pos = spec.feeds[sh.feed].position
    if not 1e-9 < pos < 1 - 1e-9:
        raise bad_value(f"{prefix}feeds[{sh.feed}].position", pos,
                        "is a wire end: a feedline shield needs a feed inside a wire (0 < position < 1), "
                        "where the wire is cut into the inner conductor's side and the shield's side")
    _, route = _route_points(spec, feed_wires)
    seg = np.linalg.norm(np.diff(route, axis=0), axis=1)
    if np.any(seg <= _TOL_M):
        j = int(np.argmax(seg <= _TOL_M))
        raise bad_value(f"{path}.route_m[{j}]", sh.route_m[j],
                        "repeats the previous point of the route (the route starts at the feed point; "
                        "pieces must be longer than 1e-6 m)")
    z = route[1:, 2]
    if spec.ground == "perfect":
        if np.any(z < 0):
            j = int(np.argmax(z < 0))
            raise bad_value(f"{path}.route_m[{j}]", sh.route_m[j], "is below the perfect ground (accepted: z >= 0 m)")
        if np.any(z[:-1] <= _TOL_M):
            j = int(np.argmax(z[:-1] <= _TOL_M))
            raise bad_value(f"{path}.route_m[{j}]", sh.route_m[j],
                            "touches the ground at an interior point of the route (only its far end may)")
    if spec.ground == "real" and np.any(z <= 0):
        j = int(np.argmax(z <= 0))
        raise bad_value(f"{path}.route_m[{j}]", sh.route_m[j],
                        "is on or below the real ground (accepted: z > 0 m; a connection into the soil is not "
                        "modelled: end the route above it with far_end = \"open\", or use ground = \"perfect\")")
    on_ground = spec.ground == "perfect" and z[-1] <= _TOL_M
    if sh.far_end == "ground" and not on_ground:
        raise bad_value(f"{path}.far_end", sh.far_end,
                        f"needs the last route point on a perfect ground (ground = \"perfect\" and z = 0; "
                        f"the route ends at {sh.route_m[-1]}): accepted: \"open\", or end the route at z = 0")
    if sh.far_end == "open" and on_ground:
        raise bad_value(f"{path}.far_end", sh.far_end,
                        "ends on the ground (last route point at z = 0): accepted: \"ground\" there, or end "
                        "the route above ground")
    if sh.choke is not None:
        cp = f"{path}.choke"
        check_circuit(sh.choke, cp)
        frac = along_fraction(sh.choke, float(seg.sum()), cp, "the shield route", default=0.0)
        if sh.far_end == "open" and frac >= 1 - 1e-9:
            raise bad_value(f"{cp}.position", frac, "is the open far end of the shield, where no current "
                            "flows (accepted: a place before the far end)")


def expand_shield(spec, feed_wires: tuple[int, ...], *, prefix: str = "") -> ExpandedShield:
    """Cut the fed wire at the feed and add the shield's outer surface (and its choke) as wires and a load.

    Parameters
    ----------
    spec : WireAntennaSpec
        Checked model with ``shield`` set.
    feed_wires : tuple of int
        Wire index of each feed (from ``check_wire_antenna``).
    prefix : str
        Field-path prefix for messages.
    """
    from rfsafe.antenna.wire.model import LoadSpec, WireSpec, along_fraction, load_places, wire_label

    sh = spec.shield
    iw = feed_wires[sh.feed]
    w = spec.wires[iw]
    cum = _arcs(w.points_m)
    total = cum[-1]
    s_feed = spec.feeds[sh.feed].position * total
    p_feed, route = _route_points(spec, feed_wires)
    name = wire_label(spec, iw)

    pts_a = [list(map(float, q)) for q, c in zip(w.points_m, cum) if c < s_feed - _TOL_M] + [p_feed.tolist()]
    pts_b = [p_feed.tolist()] + [list(map(float, q)) for q, c in zip(w.points_m, cum) if c > s_feed + _TOL_M]
    frac = s_feed / total
    seg_a = seg_b = None
    if w.segments is not None:
        seg_a = max(1, round(w.segments * frac))
        seg_b = max(1, w.segments - seg_a)
    wire_a = WireSpec(label=f"{name} (start side)", points_m=pts_a, radius_m=w.radius_m, segments=seg_a,
                      max_segment_m=w.max_segment_m)
    wire_b = WireSpec(label=f"{name} (end side)", points_m=pts_b, radius_m=w.radius_m, segments=seg_b,
                      max_segment_m=w.max_segment_m)
    wires = list(spec.wires)
    wires[iw] = wire_a
    ib = len(wires)
    wires.append(wire_b)
    wire_fields = [f"{prefix}wires[{i}]" for i in range(len(spec.wires))] + [f"{prefix}wires[{iw}]"]

    def remap(wire_index: int, q: float, at_feed: str) -> tuple[int, float]:
        """Wire and fraction on the cut wires of a place at fraction q of wire ``wire_index``."""
        if wire_index != iw:
            return wire_index, q
        s = q * total
        if s < s_feed - _TOL_M:
            return iw, s / s_feed
        if s > s_feed + _TOL_M:
            return ib, (s - s_feed) / (total - s_feed)
        return (ib, 0.0) if at_feed == "b" else (iw, 1.0)

    hot = "b" if sh.joins == "start-side" else "a"   # the inner conductor drives the other part
    feeds = []
    for f, (feed, fw) in enumerate(zip(spec.feeds, feed_wires)):
        nw, q = remap(fw, feed.position, hot)
        feeds.append(feed.model_copy(update={"wire": nw, "position": q}))
    new_feed_wires = tuple(int(f.wire) for f in feeds)
    loads = []
    for load, (lw, q) in zip(spec.loads, load_places(spec, prefix=prefix)):
        nw, nq = remap(lw, q, hot)
        loads.append(load.model_copy(update={"wire": nw, "position": nq, "distance_m": None}))
    load_fields = [f"{prefix}loads[{n}]" for n in range(len(spec.loads))]

    # Radius steps of at most 2:1 from the antenna wire to the shield along the first route piece.
    ratio = sh.radius_m / w.radius_m
    n_steps = math.ceil(abs(math.log2(ratio)) - 1e-9) if abs(math.log2(ratio)) > 1 + 1e-9 else 1
    radii = [w.radius_m * ratio ** (k / n_steps) for k in range(1, n_steps)]
    u = (route[1] - route[0]) / np.linalg.norm(route[1] - route[0])
    taper = float(sum(TAPER_PIECE_RADII * r for r in radii))
    if taper >= 0.5 * float(np.linalg.norm(route[1] - route[0])):
        raise bad_value(f"{prefix}shield.route_m[0]", sh.route_m[0],
                        f"is too close to the feed point for the step from the wire radius {w.radius_m:g} m to "
                        f"the shield radius {sh.radius_m:g} m (steps of at most 2:1, {taper:.3g} m long): "
                        f"accepted: a first route piece longer than {2 * taper:.3g} m")
    route_wires, c0 = [], 0.0
    for k, r in enumerate(radii):
        c1 = c0 + TAPER_PIECE_RADII * r
        route_wires.append(len(wires))
        wires.append(WireSpec(label=f"feedline shield (radius step {k + 1})",
                              points_m=[(p_feed + c0 * u).tolist(), (p_feed + c1 * u).tolist()],
                              radius_m=r, segments=1))
        wire_fields.append(f"{prefix}shield.radius_m")
        c0 = c1
    main_pts = [(p_feed + c0 * u).tolist()] + [list(map(float, q)) for q in sh.route_m]
    route_wires.append(len(wires))
    wires.append(WireSpec(label="feedline shield", points_m=main_pts, radius_m=sh.radius_m,
                          segments=sh.segments, max_segment_m=sh.max_segment_m))
    wire_fields.append(f"{prefix}shield.route_m")
    route_len = float(np.linalg.norm(np.diff(route, axis=0), axis=1).sum())

    # Without a declared choke a 0-ohm slot at the feed end of the route keeps a place for choke sweeps.
    choke_load = len(loads)
    if sh.choke is None:
        loads.append(LoadSpec(label="feedline choke", wire=route_wires[0], position=0.0, resistance_ohm=0.0))
        load_fields.append(f"{prefix}shield")
    else:
        d = along_fraction(sh.choke, route_len, f"{prefix}shield.choke", "the shield route", default=0.0) * route_len
        if d <= _TOL_M:
            cw, cq = route_wires[0], 0.0
        else:
            main_len = route_len - c0
            cw, cq = route_wires[-1], float(max(0.0, d - c0) / main_len)
        circuit = {k: getattr(sh.choke, k) for k in
                   ("circuit", "resistance_ohm", "reactance_ohm", "inductance_uh", "capacitance_pf", "coil_q")}
        loads.append(LoadSpec(label="feedline choke", wire=cw, position=cq, **circuit))
        load_fields.append(f"{prefix}shield.choke")

    new = spec.model_copy(update={"wires": wires, "feeds": feeds, "loads": loads, "shield": None})
    return ExpandedShield(spec=new, feed_wires=new_feed_wires, wire_fields=tuple(wire_fields),
                          load_fields=tuple(load_fields), route_wires=tuple(route_wires), route_length_m=route_len,
                          choke_load=choke_load, feed_point_m=tuple(float(x) for x in p_feed), far_end=sh.far_end,
                          choke_declared=sh.choke is not None)


@dataclass(frozen=True)
class CommonModeCurrent:
    """Current on the outside of the feedline shield along its route, at a stated power."""

    distance_m: tuple[float, ...]        # along the route from the feed point, at each node
    position_m: tuple[tuple[float, float, float], ...]
    current_a_rms: tuple[float, ...]
    max_current_a_rms: float
    max_at_distance_m: float
    feed_current_a_rms: float            # the (differential) current into the antenna at that feed
    route_length_m: float
    choke_impedance_ohm: complex | None
    choke_distance_m: float | None
    far_end: str


def common_mode_current(sol, input_power_w: float, *, feed: int = 0) -> CommonModeCurrent | None:
    """The common-mode current along the shield route of a solution (None without a shield).

    Parameters
    ----------
    sol : WireSolution
        Solution of a wire antenna with a ``shield``.
    input_power_w : float
        Power delivered to the antenna [W] (the current scales with its square root).
    feed : int
        Feed whose current is reported beside it.
    """
    ex = sol.shield
    if ex is None:
        return None
    st = sol.structure
    scale = sol.power_scale(input_power_w)
    dist, pos, cur = [], [], []
    s0 = 0.0
    for iw in ex.route_wires:
        for q in np.nonzero(st.wire == iw)[0]:
            if not dist:
                dist.append(0.0)
                pos.append(tuple(float(x) for x in st.start_m[q]))
                cur.append(abs(sol.segment_current_a[q, 0]) * scale / math.sqrt(2))
            s0 += float(st.length_m[q])
            dist.append(s0)
            pos.append(tuple(float(x) for x in st.end_m[q]))
            cur.append(abs(sol.segment_current_a[q, 1]) * scale / math.sqrt(2))
    j = int(np.argmax(cur))
    choke_z = choke_d = None
    if ex.choke_declared:
        choke_z = complex(sol.load_impedance_ohm[ex.choke_load])
        p = st.load_position_m[ex.choke_load]
        choke_d = dist[int(np.argmin([math.dist(p, x) for x in pos]))]
    return CommonModeCurrent(
        distance_m=tuple(dist), position_m=tuple(pos), current_a_rms=tuple(float(c) for c in cur),
        max_current_a_rms=float(cur[j]), max_at_distance_m=float(dist[j]),
        feed_current_a_rms=abs(sol.feed_current_a[feed]) * scale / math.sqrt(2), route_length_m=ex.route_length_m,
        choke_impedance_ohm=choke_z, choke_distance_m=choke_d,
        far_end=ex.far_end)


class ChokeSweep:
    """Fields and currents of a solution with the choke replaced by any impedance, without re-solving.

    Changing the choke's impedance from z0 to z changes the loaded matrix by (z - z0) g g^T (rank one),
    so the currents are c(z) = a - t b with a the solved currents, b = Z^-1 g and
    t = (z - z0) (g . a) / (1 + (z - z0) (g . b)) (Sherman-Morrison). Fields are linear in the currents,
    so two field evaluations serve every z. The power delivered to the antenna is recomputed for each z,
    as the solver does it (``solver.power_basis_w``): the smaller of the terminal power 0.5 Re V I* and the
    power the currents carry, 0.5 c^H Re(Z(z)) c = P_aa + |t|^2 P_bb - 2 Re(t P_ab) + 0.5 Re(z - z0) |g . c|^2
    with P_xy = 0.5 x^H Re(Z) y (the quadratic forms once, so each z costs O(1)). A choke value for which
    neither is positive gets infinite fields (never judged to comply).

    References
    ----------
    J. Sherman and W. J. Morrison, "Adjustment of an inverse matrix corresponding to a change in one
    element of a given matrix," Ann. Math. Statist. 21 (1950) 124-127 (from memory).
    """

    def __init__(self, sol, points_m, *, field: str = "points_m"):
        from rfsafe.antenna.wire.fields import check_points, near_fields_together
        from rfsafe.antenna.wire.solver import segment_currents

        st = sol.structure
        n = sol.shield.choke_load
        self._sol = sol
        self._g = st.load_coupling[n]
        self._z0 = complex(sol.load_impedance_ohm[n])
        self._a = sol.basis_current_a
        self._b = np.linalg.solve(sol.impedance_matrix_ohm, self._g.astype(complex))
        self._ga, self._gb = complex(self._g @ self._a), complex(self._g @ self._b)
        pts = check_points(sol, points_m, field=field)
        self._route = np.isin(st.wire, sol.shield.route_wires)
        # a few rows at a time (no complex copy of the map); the two current sets on one structure share the
        # distances and phase factors (near_fields_together: the numbers near_fields gives each)
        segs = [(st, segment_currents(st, c)) for c in (self._a, self._b)]
        fields = (near_fields_together(segs, sol.k, pts) if len(pts) else
                  [(np.zeros((0, 3)), np.zeros((0, 3))) for _ in range(2)])
        (self._ea, self._ha), (self._eb, self._hb) = fields
        g = st.feed_coupling
        self._ia, self._ib = g @ self._a, g @ self._b
        r = np.ascontiguousarray(sol.impedance_matrix_ohm.real)
        r = 0.5 * (r + r.T)                  # only the symmetric part enters a quadratic form
        ra, rb = r @ self._a, r @ self._b
        self._paa = 0.5 * float(np.real(np.vdot(self._a, ra)))
        self._pbb = 0.5 * float(np.real(np.vdot(self._b, rb)))
        self._pab = 0.5 * complex(np.vdot(self._a, rb))

    def _t(self, z_choke_ohm) -> np.ndarray:
        dz = np.asarray(z_choke_ohm, dtype=complex) - self._z0
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):   # a pole: t infinite, handled in _scale
            return dz * self._ga / (1.0 + dz * self._gb)

    def _scale(self, t: np.ndarray, input_power_w: float, z_choke_ohm) -> np.ndarray:
        """Amplitude factor to ``input_power_w`` delivered, per choke value (inf where no power is resolved)."""
        from rfsafe.antenna.wire.solver import power_basis_array

        v = self._sol.structure.feed_voltage_v
        dz = np.asarray(z_choke_ohm, dtype=complex) - self._z0
        with np.errstate(invalid="ignore", over="ignore", divide="ignore"):
            i = self._ia - t[..., None] * self._ib
            p_t = 0.5 * np.real(np.sum(v * np.conj(i), axis=-1))
            p_c = (self._paa + np.abs(t) ** 2 * self._pbb - 2.0 * np.real(t * self._pab)
                   + 0.5 * dz.real * np.abs(self._ga - t * self._gb) ** 2)
            p = power_basis_array(p_t, p_c)
            ok = p > 0                                     # False for NaN: no power resolved
            return np.where(ok, np.sqrt(input_power_w / np.where(ok, p, 1.0)), np.inf)

    def fields_rms(self, z_choke_ohm, input_power_w: float):
        """E [V/m rms] and H [A/m rms] at the points for ``input_power_w`` [W] delivered.

        ``z_choke_ohm`` [ohm] may be an array: the results then have its shape followed by (Npoints,).
        A choke value for which the model resolves no delivered power gives infinite fields.
        """
        t = self._t(z_choke_ohm)
        s = self._scale(t, input_power_w, z_choke_ohm)
        bad = ~np.isfinite(s)                  # no power resolved (or a pole): finite stand-ins, inf below
        tt = np.where(bad, 0.0, t)[..., None, None]
        s1 = np.where(bad, 1.0, s)[..., None, None]
        e = (self._ea - tt * self._eb) * s1
        h = (self._ha - tt * self._hb) * s1
        e_rms = np.sqrt(0.5 * np.sum(np.abs(e) ** 2, axis=-1))
        h_rms = np.sqrt(0.5 * np.sum(np.abs(h) ** 2, axis=-1))
        return np.where(bad[..., None], np.inf, e_rms), np.where(bad[..., None], np.inf, h_rms)

    def max_common_mode_a_rms(self, z_choke_ohm: complex, input_power_w: float) -> float:
        """Largest current on the shield route [A rms] for ``input_power_w`` [W] delivered (one choke value)."""
        t = self._t(z_choke_ohm)
        s = float(self._scale(t, input_power_w, z_choke_ohm))
        if not math.isfinite(s):
            return math.inf
        c = self._a - complex(t) * self._b
        from rfsafe.antenna.wire.solver import segment_currents

        seg = segment_currents(self._sol.structure, c)[self._route]
        return float(np.abs(seg).max()) * s / math.sqrt(2)


#: Choke impedance magnitudes scanned by ``required_choke_ohm`` [ohm] (10 per decade, 1 ohm to 1 Mohm).
CHOKE_SCAN_OHM = np.logspace(0.0, 6.0, 61)


def required_choke_ohm(ratio_at, angle_rad: float = 0.0) -> tuple[float | None, str]:
    """Smallest choke impedance magnitude [ohm] that brings an exposure ratio to 1 or below.

    ``ratio_at(z)`` is the largest exposure ratio at the places of interest with a choke of impedance
    z [ohm], evaluated for an array of z (complex ndarray, same-shaped result). The ratio is not monotonic in |z| (a choke and the shield can resonate), so the whole scan
    ``CHOKE_SCAN_OHM`` at the phase ``angle_rad`` is evaluated and the answer is the smallest |z| above
    which every scanned value is at or below 1, refined by Brent's bracketing root finder between the
    last scanned value above 1 and the next one.

    Returns
    -------
    magnitude_ohm : float or None
        The impedance magnitude, 0.0 when no choke is needed, None when no choke up to 1 Mohm suffices.
    note : str
        How the answer was reached, in words.

    References
    ----------
    R. P. Brent, Algorithms for Minimization without Derivatives, Prentice-Hall, 1973, Ch. 4 (the
    bracketing root finder, scipy.optimize.brentq).
    """
    kind = "resistive" if abs(math.degrees(angle_rad)) < 0.5 else f"phase {math.degrees(angle_rad):+.0f} deg"
    phase = complex(math.cos(angle_rad), math.sin(angle_rad))
    r0 = float(np.asarray(ratio_at(np.array([0j])))[0])
    r = np.asarray(ratio_at(CHOKE_SCAN_OHM * phase), dtype=float)
    if r[-1] > 1:
        return None, (f"no {kind} choke up to {CHOKE_SCAN_OHM[-1]:.0e} ohm brings the ratio to 1 (ratio "
                      f"{r[-1]:.3g} with the largest): the antenna's own field or current induced on the "
                      "feedline sets it; move the place or the route")
    over = np.nonzero(r > 1)[0]
    if not len(over):
        if r0 <= 1:
            return 0.0, f"no choke needed: ratio {r0:.3g} without one, and no {kind} choke raises it above 1"
        return float(CHOKE_SCAN_OHM[0]), f"a {kind} choke of {CHOKE_SCAN_OHM[0]:g} ohm or more (ratio {r0:.3g} without one)"
    from scipy.optimize import brentq   # imported only when a root is needed (slow import)

    i = int(over[-1])
    lo, hi = math.log(CHOKE_SCAN_OHM[i]), math.log(CHOKE_SCAN_OHM[i + 1])
    u = brentq(lambda x: float(np.asarray(ratio_at(np.array([math.exp(x) * phase])))[0]) - 1.0, lo, hi, xtol=1e-4)
    return float(math.exp(u)), (f"{kind} choke magnitude from a scan of 1 ohm to 1 Mohm (10 per decade) and "
                                "Brent's root finder; smaller values leave some place above the limit")


def route_polyline_m(spec) -> np.ndarray | None:
    """The shield route of a wire spec as points from the feed point [m], shape (N, 3); None without a shield."""
    if getattr(spec, "shield", None) is None:
        return None
    from rfsafe.antenna.wire.model import check_wire_antenna

    return _route_points(spec, check_wire_antenna(spec))[1]
