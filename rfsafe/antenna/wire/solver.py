"""Thin-wire moment-method solver: Pocklington's equation, Galerkin with piecewise-sinusoidal functions.

The current on the wires is expanded in piecewise-sinusoidal (PWS) basis functions and tested with
the same functions (Galerkin; Richmond's reaction method). The matrix element between test function
m and source function n is the reaction

    Z_mn = - int_m I_m(s) s_m . E_n(r_m(s)) ds ,

where E_n is the *closed-form* field of the sinusoidal filament currents of basis n (see
``kernel``), evaluated with the reduced thin-wire kernel (source on the axis, test point on the
surface, distances sqrt(rho^2 + a^2)). Only a one-dimensional Gauss-Legendre quadrature along the
test segment remains, vectorised over all segment pairs; pairs closer than one test-segment length
use a sinh-mapped rule clustered at the segment ends, where the reduced kernel peaks. A perfectly
conducting ground at z = 0 is represented by images. Delta-gap sources at nodes give the voltage
vector V_m = sum_f g_fm V_f, and Z I = V is solved densely.

Pattern and gain come from the radiation integrals of the PWS currents (closed form); the radiated
power, from the real part of the currents' mutual impedance with the exact kernel sin(kR)/R (O(N^2),
independent of the fill; over real soil the sphere integral of the space wave), is reported against
the input power 0.5 Re(sum V I*) as a check of the solution.

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

import numpy as np

from rfsafe.antenna.wire.geometry import Structure, build_structure
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


def _test_shapes(s, d, k):
    sk = np.sin(k * d)
    return np.sin(k * (d - s)) / sk, np.sin(k * s) / sk


def _reaction(st: Structure, k: float, src) -> np.ndarray:
    """Half-function reaction matrix S[2p+e', 2q+e] for one set of source segments."""
    s0, s1, srad, sign, dist = src
    t0, t1 = st.start_m, st.end_m
    td = t1 - t0
    tl = np.linalg.norm(td, axis=1)
    tdir = td / tl[:, None]
    sd = s1 - s0
    sl = np.linalg.norm(sd, axis=1)
    sdir = sd / sl[:, None]
    ns, nq = len(t0), len(s0)
    # Reduced kernel: the field of the source filament on the surface of the test wire (see impedance_matrix).
    a2 = np.broadcast_to(st.radius_m[:, None] ** 2, (len(t0), len(s0)))
    blocks = np.empty((ns, nq, 2, 2), dtype=complex)

    # All pairs with plain Gauss-Legendre, chunked over test segments.
    xg, wg = gauss_legendre_01(N_FAR)
    s = tl[:, None] * xg[None, :]
    w = tl[:, None] * wg[None, :]
    f1, f2 = _test_shapes(s, tl[:, None], k)
    x = t0[:, None, :] + s[..., None] * tdir[:, None, :]
    step = max(1, _CHUNK // (nq * N_FAR))
    for i in range(0, ns, step):
        sl_ = slice(i, i + step)
        blocks[sl_] = _pair_blocks(
            x[sl_, None], w[sl_, None], f1[sl_, None], f2[sl_, None], tdir[sl_, None, None],
            s0[None, :, None], sdir[None, :, None], sl[None, :, None], a2[sl_, :, None], k)

    # Near pairs again with the end-clustered rule.
    ip, iq = np.nonzero(dist < tl[:, None])
    if len(ip):
        b = np.sqrt(a2[ip, iq])
        half = 0.5 * tl[ip]
        sa, wa = sinh_rule(half, b, N_NEAR)
        s = np.concatenate([sa, tl[ip, None] - sa], axis=1)
        w = np.concatenate([wa, wa], axis=1)
        d_t = tl[ip, None]
        f1, f2 = _test_shapes(s, d_t, k)
        x = t0[ip, None, :] + s[..., None] * tdir[ip, None, :]
        step = max(1, _CHUNK // (2 * N_NEAR))
        for j in range(0, len(ip), step):
            sl_ = slice(j, j + step)
            blocks[ip[sl_], iq[sl_]] = _pair_blocks(
                x[sl_], w[sl_], f1[sl_], f2[sl_], tdir[ip[sl_], None], s0[iq[sl_], None],
                sdir[iq[sl_], None], sl[iq[sl_], None], a2[ip[sl_], iq[sl_], None], k)
    blocks *= sign
    return blocks.transpose(0, 2, 1, 3).reshape(2 * ns, 2 * nq)


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
    not exactly symmetric and the input power can differ from the radiated power by a few per cent
    (reported as ``radiated_over_input_power``); a kernel that depends on both radii (a mean of
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
    s = sum(_reaction(st, k, src) for src in st.sources())
    if st.soil_eps_c is not None:   # real ground: the images carry -K; add the Sommerfeld remainder
        from rfsafe.antenna.wire.ground import remainder_reaction

        s = s + remainder_reaction(st, k)
    return _project(s, st.half_to_basis)


def _project(s: np.ndarray, p: np.ndarray) -> np.ndarray:
    """``p.T @ s @ p`` for the sparse half-to-basis map ``p`` in O(N^2) instead of O(N^3).

    Each basis function has a few halves (two, more at a junction): its column of ``p`` is gathered
    as (row, weight) pairs, padded to the longest column with weight 0.
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
    half = np.zeros((s.shape[0], nb), dtype=np.result_type(s, p))
    for j in range(width):
        half += s[:, r_idx[j]] * wts[j]
    z = np.zeros((nb, nb), dtype=half.dtype)
    for j in range(width):
        z += wts[j][:, None] * half[r_idx[j], :]
    return z


#: Gauss-Legendre nodes per segment for the radiated-power check (more for long segments, see below).
N_POWER = 4


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
    costs (N_POWER Ns)^2 kernel values, O(N^2) like the matrix fill, and shares nothing with the
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
    for s0, s1, _r, sign, _dist in st.sources():
        sdir = (s1 - s0) / d[:, None]
        pts = (s0[:, None, :] + s[..., None] * sdir[:, None, :]).reshape(-1, 3)
        if tpts is None:
            tpts, tdir = pts, sdir
            tcur, tchg = cur.reshape(-1), chg.reshape(-1)
        jv = (sign * cur)[..., None] * sdir[:, None, :]                          # (Ns, q, 3)
        jv = jv.reshape(-1, 3)
        rho = (sign * chg).reshape(-1)
        m = len(pts)
        step = max(1, 2_000_000 // m)
        for i in range(0, len(tpts), step):
            a = tpts[i:i + step]
            r2 = (np.einsum("ai,ai->a", a, a)[:, None] + np.einsum("bi,bi->b", pts, pts)[None, :]
                  - 2.0 * (a @ pts.T))
            r = np.sqrt(np.maximum(r2, 0.0) + 1e-300)
            kern = np.sin(k * r) / r                                               # k at R = 0
            ta = (tcur[i:i + step, None] * np.repeat(tdir, q, axis=0)[i:i + step]).conj()
            kj = kern @ jv                                                          # (chunk, 3)
            total += float(np.real(k * np.sum(ta * kj) - np.sum(tchg[i:i + step].conj() * (kern @ rho)) / k))
    return ETA0_OHM / (8.0 * math.pi) * total


def _directions(theta, phi):
    st = np.sin(theta)
    return np.stack([st * np.cos(phi), st * np.sin(phi), np.cos(theta)], axis=-1)


#: Below this |k^2 - alpha^2| / k^2 the radiation integrals switch to the sinc form (no cancellation).
_NEAR_AXIS = 1e-3


def _radiation_vector(st: Structure, k: float, seg_i: np.ndarray, rhat: np.ndarray) -> np.ndarray:
    """N(r_hat) = sum_q s_q int I_q e^{jk r_hat . r'} dz' over segments and images, (ndir, 3) [A m].

    With the phases at both segment ends, P0 = e^{jk r.s0} and P1 = e^{jk r.s1}, and alpha = k r.s_hat,
    the half-function integrals times P0 are (integrating e^{j alpha z} sin kz by parts)

        int_0^d e^{j alpha z} sin k(d - z) dz * P0 = (k P1 - P0 (k cos kd + j alpha sin kd)) / (k^2 - alpha^2)
        int_0^d e^{j alpha z} sin kz dz * P0       = (P1 (j alpha sin kd - k cos kd) + k P0) / (k^2 - alpha^2)

    which costs two complex exponentials per segment and direction; within ``_NEAR_AXIS`` of
    alpha = +-k (directions along a segment) the sinc form of :func:`radiation_integrals` is used.
    """
    out = np.zeros(rhat.shape[:-1] + (3,), dtype=complex)
    flat = rhat.reshape(-1, 3)
    res = out.reshape(-1, 3)
    for s0, s1, _r, sign, _d in st.sources():
        sd = s1 - s0
        d = np.linalg.norm(sd, axis=1)
        sdir = sd / d[:, None]
        kc, ks = k * np.cos(k * d), np.sin(k * d)
        i1, i2 = sign * seg_i[:, 0] / ks, sign * seg_i[:, 1] / ks   # sin kd of the PWS shapes folded in
        step = max(1, _CHUNK // len(s0))
        for i in range(0, len(flat), step):
            r = flat[i:i + step]
            alpha = k * (r @ sdir.T)
            p0 = np.exp(1j * k * (r @ s0.T))
            p1 = np.exp(1j * k * (r @ s1.T))
            den = k * k - alpha * alpha
            jas = 1j * alpha * ks
            amp = (i1 * (k * p1 - p0 * (kc + jas)) + i2 * (p1 * (jas - kc) + k * p0))
            near = np.abs(den) < _NEAR_AXIS * k * k
            with np.errstate(divide="ignore", invalid="ignore"):
                amp /= den
            if near.any():
                a_n = alpha[near]
                qn = np.nonzero(near)[1]
                j1, j2 = radiation_integrals(a_n, d[qn], k)
                amp[near] = sign * p0[near] * (seg_i[qn, 0] * j1 + seg_i[qn, 1] * j2)
            res[i:i + step] += amp @ sdir
    return out


def _intensity(st, k, seg_i, rhat):
    """Radiation intensity U(r_hat) [W/sr] for the solved currents (peak phasors)."""
    if st.soil_eps_c is not None:   # real ground: space wave with Fresnel coefficients
        from rfsafe.antenna.wire.ground import space_wave_intensity

        return space_wave_intensity(st, k, seg_i, rhat, _radiation_vector)
    n = _radiation_vector(st, k, seg_i, rhat)
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
    input_power_w: float                      # 0.5 Re sum V I* for that excitation [W]
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
        return math.sqrt(input_power_w / self.input_power_w)

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
            g = 10.0 * np.log10(4.0 * math.pi * u / self.input_power_w)
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

        try:
            raw = np.asarray(points_m, dtype=float)
            key = (raw.shape, raw.tobytes()) if raw.size <= 3 * _FIELD_CACHE_POINTS else None
        except (TypeError, ValueError):
            key = None
        if key is not None and key in self._unit_fields:   # these points passed check_points before
            e, h = self._unit_fields[key]
        else:
            pts = check_points(self, points_m, field=field)
            e, h = near_fields(self.structure, self.k, self.segment_current_a, pts)
            if key is not None:
                kept = self._unit_fields
                kept["points"] = kept.get("points", 0) + len(pts)
                while kept["points"] > _FIELD_CACHE_POINTS and len(kept) > 1:   # oldest first
                    old = next(k for k in kept if k != "points")
                    kept["points"] -= len(kept.pop(old)[0])
                for a in (e, h):
                    a.setflags(write=False)
                self._unit_fields[key] = (e, h)
        scale = self.power_scale(input_power_w)
        return e * scale, h * scale

    def fields_rms(self, points_m, input_power_w: float, *, field: str = "points_m"):
        """RMS field strengths at points for ``input_power_w`` delivered to the antenna.

        Returns
        -------
        e_field_v_m, h_field_a_m : ndarray (N,)
            sqrt(sum |E_i|^2 / 2) [V/m rms] and the same for H [A/m rms].
        """
        e, h = self.fields_phasor(points_m, input_power_w, field=field)
        return (np.sqrt(0.5 * np.sum(np.abs(e) ** 2, axis=-1)),
                np.sqrt(0.5 * np.sum(np.abs(h) ** 2, axis=-1)))

    def point_cautions(self, points_m, labels=None) -> tuple[str, ...]:
        """Method-limit cautions for points (closer to a wire than one segment length)."""
        from rfsafe.antenna.wire.fields import point_cautions

        return point_cautions(self, points_m, labels)


def _peak_search(st, k, seg_i, starts, dth, dph, tmax):
    """Shrinking pattern searches for the largest intensity from each start (theta, phi) [rad].

    The searches run in lockstep (one intensity evaluation per step for all of them); each one moves
    to its best of 8 neighbours when that is larger, else halves its steps, until the theta step is
    below 1e-5 rad (or 40 steps). Returns (u, theta, phi) of each search.
    """
    m = len(starts)
    th = np.array([s[0] for s in starts], dtype=float)
    ph = np.array([s[1] for s in starts], dtype=float)
    best = np.array([float(_intensity(st, k, seg_i, _directions(np.array(t), np.array(p)))) for t, p in starts])
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
        u = _intensity(st, k, seg_i, _directions(tt, pp)).reshape(len(idx), 8)
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
    z = impedance_matrix(st)
    # Lumped loads (Harrington 1968, Sec. 4.5): Z_L in series with the gap at a node adds Z_L g^T g.
    z_load = load_impedances_ohm(geo, st.freq_hz)
    z = z + st.load_coupling.T @ (z_load[:, None] * st.load_coupling)
    g = st.feed_coupling
    v = g.T @ st.feed_voltage_v
    c = np.linalg.solve(z, v)
    i_feed = g @ c
    zin = st.feed_voltage_v / i_feed
    p_in = 0.5 * float(np.real(np.sum(st.feed_voltage_v * np.conj(i_feed))))
    halves = st.half_to_basis @ c
    seg_i = halves.reshape(-1, 2)
    i_load = st.load_coupling @ c
    p_load = 0.5 * float(np.sum(np.abs(i_load) ** 2 * z_load.real))

    # Radiated power, a check of the solution: from the real part of the mutual impedance, O(N^2)
    # (see _radiated_power); over real soil the sphere integral of the space wave (below).
    pts = np.concatenate([st.start_m, st.end_m])
    if st.ground:
        pts = np.concatenate([pts, pts * np.array([1.0, 1.0, -1.0])])
    size = float(np.max(np.linalg.norm(pts[:, None, :] - pts[None, :, :], axis=-1))) if len(pts) < 3000 else \
        float(np.linalg.norm(pts.max(0) - pts.min(0)))
    tmax = 0.5 * math.pi if st.ground else math.pi
    if st.soil_eps_c is None:
        p_rad = _radiated_power(st, k, seg_i)
        # Peak search grid: the intensity of a structure of size D varies no faster than its
        # narrowest lobe, about 2 pi / (k D) rad between nulls. Up to k D = 24 the grid is the
        # quadrature grid (about 4 points across that lobe); beyond, it grows half as fast (at least
        # 2 points across it), and the best local maxima are refined as well as the best points.
        extra = min(int(k * size), 12 + int(0.5 * k * size))
        n_t = extra + 24
        n_p = 2 * extra + 36
    else:
        # Real soil: Gauss-Legendre in cos(theta), trapezoid in phi (periodic), exact for the
        # band-limited space-wave intensity; the same grid starts the peak search.
        n_t = int(k * size) + 24
        n_p = 2 * int(k * size) + 36
    xg, wg = gauss_legendre_01(n_t)
    mu, wmu = (xg, wg) if st.ground else (2 * xg - 1, 2 * wg)   # cos(theta) in [0, 1] or [-1, 1]
    theta = np.arccos(mu)
    phi = 2 * math.pi * np.arange(n_p) / n_p
    th, ph = np.meshgrid(theta, phi, indexing="ij")
    u = _intensity(st, k, seg_i, _directions(th, ph))
    if st.soil_eps_c is not None:
        p_rad = float(np.sum(u * wmu[:, None]) * 2 * math.pi / n_p)

    # Peak: the best local maxima of the grid refined by a shrinking pattern search.
    dth, dph = math.pi / n_t, 2 * math.pi / n_p
    best = (-1.0, 0.0, 0.0)
    top = [np.unravel_index(int(f), u.shape) for f in np.argsort(u, axis=None)[::-1][:3]]
    more = [m for m in _grid_maxima(u, PEAK_STARTS) if m not in top] if k * size > 24 else []   # coarser grid
    found = _peak_search(st, k, seg_i, [(th[it, ip], ph[it, ip]) for it, ip in top + more], dth, dph, tmax)
    for n, cand in enumerate(found):
        if cand[0] > best[0] * (1.0 if n < 3 else 1.0 + 1e-9):   # a tie keeps the earlier lobe
            best = cand
    u_max, t_best, p_best = best
    gain = 10 * math.log10(4 * math.pi * u_max / p_in)
    el = 90.0 - math.degrees(t_best)
    az = round(90.0 - math.degrees(p_best), 6) % 360.0 if abs(el) < 89.999 else 0.0  # undefined at zenith
    u_back = _intensity(st, k, seg_i, _directions(np.array(t_best), np.array(p_best + math.pi)))
    fb = 10 * math.log10(u_max / float(u_back)) if u_back > 0 else math.inf
    gw_gain = None
    if st.soil_eps_c is not None:
        # Over real soil the far field along the ground is Norton's ground wave, E ~ E_direct (1 + R_v +
        # (1 - R_v) F(w)) with |F| <= 1 (Norton 1937): at most the perfect-ground value (R_v -> 1) of the
        # same currents. That image gain, over the grid and the horizon, bounds it (conservative).
        from dataclasses import replace as _replace

        st_pec = _replace(st, soil_eps_c=None)
        ring = _directions(np.full(n_p, 0.5 * math.pi), phi)
        u_gw = max(float(_intensity(st_pec, k, seg_i, _directions(th, ph)).max()),
                   float(_intensity(st_pec, k, seg_i, ring).max()))
        gw_gain = 10 * math.log10(4 * math.pi * u_gw / p_in)

    return WireSolution(
        freq_hz=st.freq_hz, ground=spec.ground, num_segments=st.num_segments, num_unknowns=st.num_unknowns,
        feed_impedance_ohm=tuple(complex(x) for x in zin),
        feed_voltage_v=tuple(complex(x) for x in st.feed_voltage_v),
        feed_current_a=tuple(complex(x) for x in i_feed),
        input_power_w=p_in, radiated_power_w=p_rad, radiated_over_input_power=p_rad / p_in,
        gain_dbi=gain, peak_azimuth_deg=az, peak_elevation_deg=el, front_to_back_db=fb,
        limits_enforced=bool(enforce_limits),
        basis_current_a=c, segment_current_a=seg_i, structure=st, impedance_matrix_ohm=z,
        load_labels=geo.load_labels, load_impedance_ohm=tuple(complex(x) for x in z_load),
        load_current_a=tuple(complex(x) for x in i_load), load_power_w=p_load, geometry_spec=geo.spec,
        shield=geo.shield, ground_method=_ground_method(spec, st), ground_wave_bound_gain_dbi=gw_gain)


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
