"""Lossy (real) ground below a wire antenna: soil classes and the Sommerfeld reflected field.

The ground is the homogeneous half-space z < 0 with complex relative permittivity
``eps_c = eps_r - j sigma / (omega eps0)`` (time convention e^{j omega t}, fields e^{-jkR}). The field
that the ground sends back to the air from a Hertzian dipole of moment p [A m] at height z' is the
Sommerfeld integral over the plane-wave spectrum of the dipole (Weyl's identity)::

    e^{-jkR}/R = (-j / 2 pi) int int e^{-j (kx x + ky y)} e^{-j kz |z - z'|} / kz dkx dky,
    kz = sqrt(k0^2 - krho^2), Im kz <= 0,

each down-going plane wave being reflected with the Fresnel coefficients of the TE wave (E parallel
to the ground) and of the TM wave (H parallel to the ground)::

    Gamma_TE = (kz - kz1) / (kz + kz1),     Gamma_TM = (eps_c kz - kz1) / (eps_c kz + kz1),
    kz1 = sqrt(k1^2 - krho^2),  k1 = k0 sqrt(eps_c).

The spectral fields of the dipole are E = -j omega [A - k (k.A) / k0^2], H = -j k x A / mu0. Written in
polar spectral coordinates (krho, alpha) each Cartesian component of the reflected spectral field is a
trigonometric polynomial of degree 2 in alpha; it is sampled at five alpha and the alpha integral done
exactly: (1/2 pi) int e^{j n alpha} e^{-j krho rho cos(alpha - phi)} d alpha = e^{j n phi} (-j)^|n|
J_|n|(krho rho). The remaining krho integral runs on a path above the real axis from 0 to beyond k0 and
k1 (around the branch points and the surface-wave pole), then along the real axis.

The quasi-static part is taken out: ``K = (eps_c - 1) / (eps_c + 1)`` times the perfect-ground image
(Gamma_TM -> K, Gamma_TE -> -K) is subtracted in the spectrum and added back in closed form, so the
integrand decays as e^{-krho (z + z')} and the remainder is smooth where the image field is singular.
At sigma -> infinity (K -> 1, remainder -> 0) the perfect-ground image is recovered, and at
eps_c -> 1 the reflected field vanishes.

The remainder is tabulated over (horizontal distance, height sum) once per frequency and soil
(``ReflectionTable``, bilinear, within 0.3 % of the direct integral) for the matrix and the near fields.
Near fields of places far from the antenna in the sense of Norton's numerical distance (|w| >= 200 for
every part of the antenna, ``RCA_MIN_NUMERICAL_DISTANCE``) take the reflection-coefficient approximation
instead (``rca_quantities``: the image weighted by the plane-wave Fresnel coefficients; error below
1.1/|w| of the image field, measured), which needs no table; the results say where it was used.

References
----------
A. Sommerfeld, "Ueber die Ausbreitung der Wellen in der drahtlosen Telegraphie," Ann. Phys. 28, 1909
(the half-space problem); A. Banos, Dipole Radiation in the Presence of a Conducting Half-Space,
Pergamon, 1966; W. C. Chew, Waves and Fields in Inhomogeneous Media, Van Nostrand, 1990, Ch. 2
(Weyl identity, Sec. 2.2; reflection of the TE and TM spectra, Sommerfeld integrals of the vertical
and horizontal dipoles, Sec. 2.3-2.4). K. A. Michalski, "Extrapolation methods for Sommerfeld integral
tails," IEEE Trans. AP-46, 1998 (the path above the real axis for the e^{j omega t} convention; from
memory). ITU-R Recommendation P.527-3 (1992), Fig. 1 (ground classes; values from memory, see
``soil_classes.csv``).
"""

from __future__ import annotations

import csv
import math
from dataclasses import dataclass
from functools import lru_cache
from importlib import resources

import numpy as np

from rfsafe.antenna.wire.geometry import unique_ints
from rfsafe.antenna.wire.kernel import ETA0_OHM, gauss_legendre_01

__all__ = ["MIN_HEIGHT_WAVELENGTHS", "RCA_MIN_NUMERICAL_DISTANCE", "ReflectionApproximation", "ReflectionTable",
           "RemainderRows", "Soil", "approximation_cautions", "complex_permittivity", "fresnel_coefficients",
           "hertz_dipole_fields", "image_factor", "numerical_distance", "rca_mask", "rca_quantities",
           "rca_radius_m", "reflected_dipole_fields", "reflection_table", "remainder_fields",
           "remainder_fields_reference", "soil_classes",
           "soil_from_class", "space_and_image_intensity"]

C0_M_S = 299_792_458.0
#: Vacuum permittivity [F/m] (CODATA 2018).
EPS0_F_M = 8.8541878128e-12
#: Lowest wire height accepted over real ground [wavelengths]: closer wires (ground rods, radials lying on or
#: in the soil) need the field inside the soil, which is not modelled.
MIN_HEIGHT_WAVELENGTHS = 1e-3


@dataclass(frozen=True)
class Soil:
    """A homogeneous ground: relative permittivity, conductivity and where the values come from."""

    relative_permittivity: float
    conductivity_s_m: float
    name: str = "declared soil"
    source: str = "declared in the input file"
    verification: str = "user value"

    def complex_permittivity(self, freq_hz: float) -> complex:
        """eps_c = eps_r - j sigma / (omega eps0) at ``freq_hz`` [Hz] (e^{j omega t})."""
        return complex_permittivity(self.relative_permittivity, self.conductivity_s_m, freq_hz)

    def text(self) -> str:
        """One line for results: the class or values and their source."""
        return (f"{self.name}: relative permittivity {self.relative_permittivity:g}, conductivity "
                f"{self.conductivity_s_m:g} S/m ({self.source}; {self.verification})")


def complex_permittivity(relative_permittivity: float, conductivity_s_m: float, freq_hz: float) -> complex:
    """Complex relative permittivity eps_r - j sigma / (omega eps0) [1] (e^{j omega t} convention)."""
    return complex(relative_permittivity, -conductivity_s_m / (2.0 * math.pi * freq_hz * EPS0_F_M))


def image_factor(eps_c: complex) -> complex:
    """Quasi-static image coefficient K = (eps_c - 1) / (eps_c + 1) [1] (1 for a perfect conductor)."""
    return (eps_c - 1.0) / (eps_c + 1.0)


@lru_cache(maxsize=1)
def soil_classes() -> dict[str, Soil]:
    """The named ground classes of ``soil_classes.csv`` (ITU-R P.527-3 Fig. 1, values from memory)."""
    text = resources.files("rfsafe.antenna.wire").joinpath("soil_classes.csv").read_text(encoding="utf-8")
    rows = csv.DictReader(line for line in text.splitlines() if not line.startswith("#"))
    return {r["name"]: Soil(float(r["relative_permittivity"]), float(r["conductivity_s_m"]), r["name"],
                            r["source"], r["verification"]) for r in rows}


def soil_from_class(name: str) -> Soil:
    """The named ground class; KeyError if unknown."""
    return soil_classes()[name]


def fresnel_coefficients(cos_incidence, eps_c: complex):
    """Plane-wave reflection coefficients of the ground for incidence angle theta from the vertical.

    Returns
    -------
    gamma_v, gamma_h : ndarray complex
        Gamma_TM (ratio of reflected to incident H parallel to the ground; +1 over a perfect conductor)
        and Gamma_TE (ratio of E parallel to the ground; -1 over a perfect conductor).

    References
    ----------
    C. A. Balanis, Advanced Engineering Electromagnetics, Wiley, 1989, Sec. 5.3 (oblique incidence
    on a lossy interface); Chew (1990), Sec. 2.1.
    """
    c = np.asarray(cos_incidence, dtype=complex)
    root = np.sqrt(eps_c - (1.0 - c * c))
    return (eps_c * c - root) / (eps_c * c + root), (c - root) / (c + root)


def hertz_dipole_fields(moment_am, src_m, obs_m, k: float):
    """E [V/m] and H [A/m] of Hertzian dipoles (moments (M, 3) [A m] at (M, 3)) at points (N, 3), summed.

    References
    ----------
    C. A. Balanis, Antenna Theory, 3rd ed., Wiley, 2005, Sec. 4.2 (infinitesimal dipole, all zones),
    written for an arbitrary orientation.
    """
    p = np.asarray(moment_am, dtype=complex)
    d = np.asarray(obs_m, dtype=float)[:, None, :] - np.asarray(src_m, dtype=float)[None, :, :]
    r = np.sqrt(np.sum(d * d, axis=-1))
    rh = d / r[..., None]
    g = np.exp(-1j * k * r) / (4.0 * math.pi * r)
    kr = k * r
    rp = np.sum(rh * p[None], axis=-1)
    omega_mu0 = k * ETA0_OHM
    a = (1.0 - 1j / kr - 1.0 / kr ** 2)
    b = (-1.0 + 3j / kr + 3.0 / kr ** 2)
    e = -1j * omega_mu0 * g[..., None] * (a[..., None] * p[None] + (b * rp)[..., None] * rh)
    h = ((1j * k + 1.0 / r) * g)[..., None] * np.cross(p[None], rh)
    return e.sum(axis=1), h.sum(axis=1)


# --- spectral machinery -------------------------------------------------------------------------------

def _kz(kk, krho):
    """sqrt(kk^2 - krho^2) on the proper sheet (Im <= 0) for krho on or above the real axis."""
    return -1j * np.sqrt(krho * krho - kk * kk)


_ALPHAS = 2.0 * math.pi * np.arange(5) / 5.0
_NS = np.arange(-2, 3)
#: Fourier coefficient n = -2..2 from the five samples in alpha: (1/5) e^{-j n alpha}, (n, alpha).
_ALPHA_TO_N = np.exp(-1j * np.outer(_NS, _ALPHAS)) / 5.0


def _spectral_coefficients(krho, k0: float, eps_c: complex, k_img: complex):
    """Fourier coefficients in alpha of the reflected spectral fields, minus K times the image.

    Returns C[o, n, c, K]: o = source orientation (0 x, 1 z), n = -2..2, c = Ex Ey Ez Hx Hy Hz, per unit
    moment [A m]; the field at (rho, phi, h = z + z') is
    int krho dkrho 2 pi sum_n C_n e^{j n phi} (-j)^|n| J_|n|(krho rho) e^{-j kz h}.
    """
    krho = np.asarray(krho, dtype=complex)
    k1 = k0 * np.sqrt(eps_c)
    kz = _kz(k0, krho)
    kz1 = _kz(k1, krho)
    g_te = (kz - kz1) / (kz + kz1) + k_img
    g_tm = (eps_c * kz - kz1) / (eps_c * kz + kz1) - k_img
    omega_mu0 = k0 * ETA0_OHM
    omega_eps0 = k0 / ETA0_OHM
    ca, sa = np.cos(_ALPHAS)[:, None], np.sin(_ALPHAS)[:, None]
    # down-going wavevector and TE unit vector, shapes (5, K)
    kdx, kdy, kdz = krho * ca, krho * sa, -kz * np.ones_like(ca)
    krz = kz * np.ones_like(ca)
    ex, ey = -sa * np.ones_like(krho), ca * np.ones_like(krho)
    out = np.empty((2, 5, 6, len(krho)), dtype=complex)
    pre_e = -omega_mu0 / (8.0 * math.pi ** 2 * kz)
    pre_h = -1.0 / (8.0 * math.pi ** 2 * kz)
    for o, u in enumerate(((1.0, 0.0, 0.0), (0.0, 0.0, 1.0))):
        kdu = kdx * u[0] + kdy * u[1] + kdz * u[2]
        # incident E.e_te (kd . e_te = 0) and H.e_te
        ei = pre_e * (u[0] * ex + u[1] * ey - 0.0 * kdu)
        # (kd x u) . e_te
        cx = kdy * u[2] - kdz * u[1]
        cy = kdz * u[0] - kdx * u[2]
        hi = pre_h * (cx * ex + cy * ey)
        s = g_te * ei          # TE reflected E amplitude along e_te
        t = g_tm * hi          # TM reflected H amplitude along e_te
        # E_r = s e + (-kr x (t e)) / (omega eps0);  kr x e = (-kz cos a, -kz sin a, krho)
        kxe_x, kxe_y, kxe_z = -krz * ca, -krz * sa, krho * np.ones_like(ca)
        e_r = (s * ex - t * kxe_x / omega_eps0, s * ey - t * kxe_y / omega_eps0, -t * kxe_z / omega_eps0)
        # H_r = kr x (s e) / (omega mu0) + t e
        h_r = (s * kxe_x / omega_mu0 + t * ex, s * kxe_y / omega_mu0 + t * ey, s * kxe_z / omega_mu0)
        comps = np.stack(e_r + h_r, axis=1)               # (5 alpha, 6, K)
        out[o] = (_ALPHA_TO_N @ comps.reshape(5, -1)).reshape(5, 6, -1)
    return out


def _path(k0: float, eps_c: complex, b: float, kmax: float, panel: float, *, top_per_b: float = 2.0,
          grade: float = 0.0):
    """Nodes and weights of the krho path: 0 -> jb -> a + jb -> a, then the real axis to kmax.

    Panels of 8 Gauss-Legendre nodes: ``top_per_b`` per length b along the top, ``panel`` wide along the
    real axis; with ``grade`` > 0 the real-axis panels are at least ``grade`` times their distance to the
    nearest singularity (branch points k0 and k1; the surface-wave pole lies near k0), capped by ``panel``.
    """
    k1 = k0 * np.sqrt(eps_c)
    a = 2.0 * k0
    if -k1.imag < 2.0 * b or abs(k1.imag) < 0.2 * abs(k1.real):
        a = max(a, k1.real + k0)
    xg, wg = gauss_legendre_01(8)
    nodes, weights = [], []

    def seg(z0, z1, n_panels):
        for i in range(n_panels):
            za = z0 + (z1 - z0) * i / n_panels
            zb = z0 + (z1 - z0) * (i + 1) / n_panels
            nodes.append(za + (zb - za) * xg)
            weights.append((zb - za) * wg)

    seg(0.0, 1j * b, 2)
    seg(1j * b, a + 1j * b, max(4, math.ceil(a * top_per_b / b)))
    seg(a + 1j * b, a, 2)
    if kmax > a and grade > 0:
        x = a
        while x < kmax:
            width = min(panel, max(0.5 * k0, grade * min(x - k0, abs(x - k1))))
            seg(x, min(kmax, x + width), 1)
            x += width
    elif kmax > a:
        seg(a, kmax, max(1, math.ceil((kmax - a) / panel)))
    return np.concatenate(nodes).astype(complex), np.concatenate(weights).astype(complex)


def _integrate(k0, eps_c, rho, phi, h, kmax_factor: float = 40.0, k_img=None):
    """Reflected field remainder (without the K image) at (rho, phi, h) for unit x and z dipoles.

    Direct evaluation, one path per call (rho, phi, h arrays of one shape). Returns (2, 6, N).
    """
    rho = np.atleast_1d(np.asarray(rho, dtype=float))
    phi = np.atleast_1d(np.asarray(phi, dtype=float))
    h = np.atleast_1d(np.asarray(h, dtype=float))
    rmax = float(max(np.max(rho), np.max(h), 1e-3 / k0))
    b = min(0.5 * k0, 2.0 / rmax)
    kmax = 2.0 * k0 + kmax_factor / float(np.min(h))
    k1 = k0 * np.sqrt(eps_c)
    kmax = max(kmax, abs(k1) + k0) if abs(k1) < 10 * kmax else kmax
    panel = min(0.5 * k0, math.pi / max(float(np.max(rho)), 1e-9), 1.0 / float(np.min(h)))
    kr, w = _path(k0, eps_c, b, kmax, panel)
    from scipy.special import jv

    coef = _spectral_coefficients(kr, k0, eps_c, image_factor(eps_c) if k_img is None else k_img)
    kz = _kz(k0, kr)
    out = np.zeros((2, 6, len(rho)), dtype=complex)
    step = max(1, 4_000_000 // len(kr))
    for lo in range(0, len(rho), step):
        sl = slice(lo, lo + step)
        arg = np.outer(rho[sl], kr)
        ph = np.exp(-1j * np.outer(h[sl], kz)) * (2.0 * math.pi * kr * w)[None, :]
        for n in range(-2, 3):
            jn = jv(abs(n), arg) * ((-1j) ** abs(n))
            ker = jn * ph * np.exp(1j * n * phi[sl])[:, None]
            out[:, :, sl] += np.einsum("ock,pk->ocp", coef[:, n + 2], ker)
    return out


def _image_fields(k0, eps_c, src_m, moment_am, obs_m, factor):
    """factor x the perfect-ground image field of dipoles at src_m with moments (M, 3)."""
    img_src = np.asarray(src_m, dtype=float) * np.array([1.0, 1.0, -1.0])
    img_mom = np.asarray(moment_am, dtype=complex) * np.array([-1.0, -1.0, 1.0])
    e, h = hertz_dipole_fields(img_mom * factor, img_src, obs_m, k0)
    return e, h


def reflected_dipole_fields(k0: float, eps_c: complex, src_m, moment_am, obs_m):
    """Field reflected by the ground at points obs_m (N, 3) from one Hertzian dipole (exact Sommerfeld).

    Parameters
    ----------
    k0 : float
        Free-space wavenumber [rad/m].
    eps_c : complex
        Complex relative permittivity of the ground (``complex_permittivity``).
    src_m : array_like (3,)
        Dipole position, z' > 0 [m].
    moment_am : array_like (3,)
        Dipole moment I l [A m] (complex).
    obs_m : array_like (N, 3)
        Observation points, z >= 0 [m], with z + z' > 0.

    Returns
    -------
    e_v_m, h_a_m : ndarray (N, 3) complex
        Reflected E [V/m] and H [A/m] (add the direct field for the total).

    References
    ----------
    Sommerfeld (1909); Chew (1990), Sec. 2.3-2.4; see the module docstring for the formulation.
    """
    src = np.asarray(src_m, dtype=float)
    p = np.asarray(moment_am, dtype=complex)
    obs = np.atleast_2d(np.asarray(obs_m, dtype=float))
    d = obs - src
    rho = np.hypot(d[:, 0], d[:, 1])
    phi = np.arctan2(d[:, 1], d[:, 0])
    h = obs[:, 2] + src[2]
    e = np.zeros(obs.shape, dtype=complex)
    hh = np.zeros(obs.shape, dtype=complex)
    # horizontal moments by linearity: the x dipole, and the y dipole as the x dipole turned by 90 deg
    for amp, turn in ((p[0], 0.0), (p[1], 0.5 * math.pi)):
        if abs(amp) == 0:
            continue
        res = _integrate(k0, eps_c, rho, phi - turn, h)[0]
        c, s_ = math.cos(turn), math.sin(turn)
        e[:, 0] += amp * (c * res[0] - s_ * res[1])
        e[:, 1] += amp * (s_ * res[0] + c * res[1])
        e[:, 2] += amp * res[2]
        hh[:, 0] += amp * (c * res[3] - s_ * res[4])
        hh[:, 1] += amp * (s_ * res[3] + c * res[4])
        hh[:, 2] += amp * res[5]
    res_v = _integrate(k0, eps_c, rho, phi, h)[1] if abs(p[2]) > 0 else None
    if res_v is not None:
        e += p[2] * res_v[:3].T
        hh += p[2] * res_v[3:].T
    ei, hi = _image_fields(k0, eps_c, src[None], p[None], obs, image_factor(eps_c))
    return e + ei, hh + hi


# --- interpolation tables over horizontal distance and height sum ---------------------------------------

#: Table quantities (per unit moment [A m], remainder without the K image), in cylindrical components about
#: the source: vertical dipole E_rho, E_z, H_phi; horizontal dipole (along x, at azimuth phi from it)
#: E_rho / cos, E_z / cos, H_phi / cos, E_phi / sin, H_rho / sin, H_z / sin.
_QUANT = (  # (orientation, component, phi, sign)
    (1, 0, 0.0, 1.0), (1, 2, 0.0, 1.0), (1, 4, 0.0, 1.0),
    (0, 0, 0.0, 1.0), (0, 2, 0.0, 1.0), (0, 4, 0.0, 1.0),
    (0, 0, 0.5 * math.pi, -1.0), (0, 4, 0.5 * math.pi, 1.0), (0, 5, 0.5 * math.pi, 1.0))
#: Per quantity the source orientation and field component of ``_QUANT`` and the weight of each Fourier order
#: n = -2..2 in the coefficient of J_|n|: sign e^{j n phi} (-j)^|n|, shape (9, 5, 3).
_QUANT_O = np.array([q[0] for q in _QUANT])
_QUANT_C = np.array([q[1] for q in _QUANT])
_QUANT_WEIGHTS = np.array([[[sign * np.exp(1j * n * phi) * (-1j) ** abs(n) if abs(n) == m else 0.0 for m in range(3)]
                            for n in range(-2, 3)] for (_o, _c, phi, sign) in _QUANT])
_QUANT_WEIGHTS_T = np.ascontiguousarray(_QUANT_WEIGHTS.transpose(0, 2, 1))
#: The quantities that carry J_0, J_1, J_2 (the others' coefficients are zero: the vertical dipole's fields
#: are axisymmetric, the horizontal dipole's are cos/sin phi times J_0 +- J_2 or J_1).
_ORDERS = ([1, 3, 5, 6, 7], [0, 2, 4, 8], [3, 5, 6, 7])
#: Heights summed together in one matrix product while building a table.
_ROW_GROUP = 8
#: Grid steps: u = asinh(rho / h_min) and ln h.
_DU, _DLH = 0.1, 0.1
#: Quadrature of the tables (the direct ``_integrate`` keeps its finer path as the reference). Tail length in
#: units of 1/h (the integrand decays as e^{-krho h}; e^{-18} = 1.5e-8); real-axis panels of 8 nodes at most
#: ``_J_PANEL`` periods of J(krho rho_max) and ``_DECAY_PANEL`` / h_min wide, at least ``_GRADE`` times their
#: distance to k0 and k1 (never below k0 / 2); ``_TOP_PER_B`` panels per length b along the top of the path.
#: Measured against the reference settings (tail 30, 0.5 period, 1 / h_min, 3 panels per b, grade 0.5) at the
#: table nodes: within 1.1e-6 of the largest value of each quantity and height (tests/test_ground.py), far
#: below the 0.3 % of the bilinear interpolation, and 4 to 8 times fewer krho nodes than the fixed k0 / 2
#: panels used before.
_TAIL = 18.0
_J_PANEL, _DECAY_PANEL, _TOP_PER_B, _GRADE = 1.6, 6.0, 0.6, 2.0
#: krho nodes per block while building a table (bounds its memory to a few tens of MB).
_BLOCK = 8192


#: |z| up to which ``bessel_j01`` sums the power series (its largest term, about e^|z| / (2 pi |z|), costs
#: 1e-11 of the values there); beyond, Hankel's asymptotic expansion with ``_HANKEL_TERMS`` terms.
_SERIES_MAX = 16.0
#: Terms of the series up to each |z| (each term beyond below 1e-17 of the largest: (|z|/2)^2n / n!^2).
_SERIES_BANDS = ((2.0, 13), (6.0, 22), (_SERIES_MAX, 52))
#: Series coefficients 1 / m!^2 of J_0 and 1 / (m! (m + 1)!) of 2 J_1 / z, in powers of -z^2 / 4.
_J0_SERIES = [1.0 / math.factorial(m) ** 2 for m in range(52)]
_J1_SERIES = [1.0 / (math.factorial(m) * math.factorial(m + 1)) for m in range(52)]
_HANKEL_TERMS = 16


def bessel_j01(z):
    """J_0(z) and J_1(z) for complex z with Re z >= 0 and small Im z (the table's path: |Im z| <= 2).

    About ten times faster than ``scipy.special.jv`` for complex arguments (AMOS), which the tables spent most of
    their time in. Power series (Abramowitz and Stegun 9.1.10) for |z| <= 16, Hankel's asymptotic expansion
    (A&S 9.2.5, 9.2.9, 9.2.10) beyond; within 1e-10 of ``jv`` over that range (tests/test_ground.py).
    """
    z = np.asarray(z, dtype=complex)
    j0v = np.empty(z.shape, dtype=complex)
    j1v = np.empty(z.shape, dtype=complex)
    mag = np.abs(z)
    small = mag <= _SERIES_MAX
    lower = -1.0
    for upper, n in _SERIES_BANDS:        # fewer terms for the many small arguments
        band = (mag > lower) & (mag <= upper)
        lower = upper
        if not band.any():
            continue
        zs = z[band]
        w = -0.25 * zs * zs
        a = np.full(zs.shape, _J0_SERIES[n - 1], dtype=complex)
        b = np.full(zs.shape, _J1_SERIES[n - 1], dtype=complex)
        for m in range(n - 2, -1, -1):
            a *= w
            a += _J0_SERIES[m]
            b *= w
            b += _J1_SERIES[m]
        j0v[band], j1v[band] = a, 0.5 * zs * b
    if not small.all():
        zl = z[~small]
        inv2 = 1.0 / (zl * zl)
        for order, out in ((0, j0v), (1, j1v)):
            mu = 4.0 * order * order
            coef = [1.0]
            for k in range(1, _HANKEL_TERMS):
                coef.append(coef[-1] * (mu - (2 * k - 1) ** 2) / (8.0 * k))
            p = np.zeros(zl.shape, dtype=complex)
            q = np.zeros(zl.shape, dtype=complex)
            for k in range((_HANKEL_TERMS - 1) // 2, -1, -1):
                p = p * inv2 + (-1) ** k * coef[2 * k]
                if 2 * k + 1 < _HANKEL_TERMS:
                    q = q * inv2 + (-1) ** k * coef[2 * k + 1]
            chi = zl - (0.5 * order + 0.25) * math.pi
            out[~small] = np.sqrt(2.0 / (math.pi * zl)) * (p * np.cos(chi) - q / zl * np.sin(chi))
    return j0v, j1v


class ReflectionTable:
    """Sommerfeld remainder fields of unit vertical and horizontal dipoles on a (rho, z + z') grid.

    Built once per (frequency, soil, range). The remainder (reflected field minus K times the image)
    times R e^{jk0 R} (R = sqrt(rho^2 + h^2), the image distance) is smooth and is interpolated
    bilinearly in (asinh(rho / s), ln h), s = lambda / 500 (grids anchored there, whatever the range).

    Parameters
    ----------
    k0 : float
        Free-space wavenumber [rad/m].
    eps_c : complex
        Complex relative permittivity of the soil.
    rho_max_m, h_min_m, h_max_m : float
        Largest horizontal distance, smallest and largest height sum z + z' to cover [m].
    """

    def __init__(self, k0: float, eps_c: complex, rho_max_m: float, h_min_m: float, h_max_m: float):
        from scipy.special import j0, j1

        self.k0, self.eps_c = float(k0), complex(eps_c)
        self.k_img = image_factor(self.eps_c)
        # Grid anchored at a fixed scale (twice the lowest wire height accepted), so that tables built for
        # different ranges share their nodes and give the same values where both apply.
        self.scale = 2.0 * MIN_HEIGHT_WAVELENGTHS * 2.0 * math.pi / self.k0
        h_min_m = max(float(h_min_m), self.scale)
        rho_max = max(float(rho_max_m), h_min_m)
        h_max = max(float(h_max_m), h_min_m * 1.001)
        nu = math.ceil(math.asinh(rho_max / self.scale) / _DU) + 2
        n0 = math.floor(math.log(h_min_m / self.scale) / _DLH)
        n1 = math.ceil(math.log(h_max / self.scale) / _DLH) + 1
        self.u = np.arange(nu) * _DU
        self.lh = math.log(self.scale) + np.arange(n0, n1 + 1) * _DLH
        nh = len(self.lh)
        self.h_min = float(math.exp(self.lh[0]))
        rho = self.scale * np.sinh(self.u)
        hs = np.exp(self.lh)
        rmax = float(max(rho[-1], hs[-1], 1e-3 / k0))
        b = min(0.5 * k0, 2.0 / rmax)
        kmax = 2.0 * k0 + _TAIL / self.h_min
        panel = min(_J_PANEL * 2.0 * math.pi / max(rho[-1], 1e-9), _DECAY_PANEL / self.h_min)
        kr, w = _path(k0, self.eps_c, b, kmax, panel, top_per_b=_TOP_PER_B, grade=_GRADE)
        kz = _kz(k0, kr)
        cplx = np.abs(kr.imag) > 0
        n_top = int(np.max(np.nonzero(cplx)[0])) + 1 if np.any(cplx) else 0
        a_end = kr[n_top - 1].real if n_top else 0.0
        kend = np.array([int(np.searchsorted(kr.real[n_top:], a_end + _TAIL / h)) + n_top for h in hs])
        vals = np.zeros((nh, len(_QUANT), nu), dtype=complex)
        # krho nodes in blocks (memory stays bounded however many nodes the tail needs)
        for c0 in range(0, len(kr), _BLOCK):
            c1 = min(len(kr), c0 + _BLOCK)
            kb, wb = kr[c0:c1], w[c0:c1]
            coef = _spectral_coefficients(kb, k0, self.eps_c, self.k_img)       # (2, 5, 6, B)
            # a[q, m, k]: weight of J_m in quantity q
            a = np.matmul(_QUANT_WEIGHTS_T, coef[_QUANT_O, :, _QUANT_C]) * (2.0 * math.pi * kb * wb)   # (9, 3, B)
            # J_m(krho rho) as (B, nu) blocks: complex on the path's top, real on the real axis (its products real)
            top = max(0, min(n_top, c1) - c0)
            jm = np.empty((3, top, nu), dtype=complex)
            if top:
                x_top = np.outer(kb[:top], rho)
                jm[0], jm[1] = bessel_j01(x_top)
                with np.errstate(divide="ignore", invalid="ignore"):   # J2 = 2 J1 / x - J0 (recurrence)
                    jm[2] = np.where(np.abs(x_top) > 1e-2, 2.0 * jm[1] / x_top - jm[0], x_top ** 2 / 8.0)
            jr = np.empty((3, len(kb) - top, nu))
            if top < len(kb):
                x_tail = np.outer(kb[top:].real, rho)
                jr[0], jr[1] = j0(x_tail), j1(x_tail)
                with np.errstate(divide="ignore", invalid="ignore"):   # J2 = 2 J1 / x - J0 (recurrence)
                    jr[2] = np.where(x_tail > 1e-2, 2.0 * jr[1] / x_tail - jr[0], x_tail ** 2 / 8.0)
            # Heights in groups of _ROW_GROUP (kend falls with h): one matrix product per group and order,
            # each height's nodes beyond its own tail end weighted 0.
            a_m = [np.ascontiguousarray(a[qs, m]) for m, qs in enumerate(_ORDERS)]
            for g0 in range(0, nh, _ROW_GROUP):
                g1 = min(nh, g0 + _ROW_GROUP)
                ke = min(kend[g0], c1) - c0
                if ke <= 0:
                    break
                e = np.exp(-1j * hs[g0:g1, None] * kz[None, c0:c0 + ke])
                e[np.arange(ke)[None, :] >= (np.minimum(kend[g0:g1], c1) - c0)[:, None]] = 0.0
                kt = min(top, ke)
                for m, qs in enumerate(_ORDERS):
                    t = (a_m[m][None, :, :ke] * e[:, None, :]).reshape(-1, ke)
                    acc = t[:, :kt] @ jm[m, :kt]
                    if ke > top:      # complex times real: two real products (half the work of a complex one)
                        tail = t[:, top:]
                        acc += tail.real @ jr[m, :ke - top]
                        acc += 1j * (tail.imag @ jr[m, :ke - top])
                    vals[g0:g1, qs] += acc.reshape(g1 - g0, len(qs), nu)
        vals = vals.transpose(2, 0, 1)
        r = np.sqrt(rho[:, None] ** 2 + hs[None, :] ** 2)
        self.values = vals * (r * np.exp(1j * k0 * r))[..., None]
        self._flat = None
        self.rho_max, self.h_max = float(rho[-1]), float(hs[-1])

    def covers(self, rho_max_m: float, h_min_m: float, h_max_m: float) -> bool:
        return rho_max_m <= self.rho_max and h_min_m >= self.h_min * (1 - 1e-12) and h_max_m <= self.h_max

    def cells(self) -> np.ndarray:
        """Per cell its four corners' values side by side (cells, 4, 9), complex64: one gather per pair."""
        if self._flat is None:
            v = self.values.astype(np.complex64)
            self._flat = np.ascontiguousarray(
                np.stack([v[:-1, :-1], v[:-1, 1:], v[1:, :-1], v[1:, 1:]], axis=2).reshape(-1, 4, v.shape[-1]))
        return self._flat

    def lookup(self, rho, h):
        """Interpolated quantities (9, ...) at horizontal distances rho and height sums h [m].

        Single precision inside the interpolation (its own error is about 1e-3; complex64 keeps 1e-7)
        halves the memory traffic of the four corner gathers.
        """
        nu, nh = len(self.u), len(self.lh)
        self.cells()
        shape = np.shape(rho)
        rho = np.asarray(rho, dtype=np.float32).ravel()
        h = np.asarray(h, dtype=np.float32).ravel()
        u = np.arcsinh(rho * np.float32(1.0 / self.scale)) * np.float32(1.0 / _DU)
        v = (np.log(h) - np.float32(self.lh[0])) * np.float32(1.0 / _DLH)
        i = np.minimum(u.astype(np.int32), nu - 2)
        j = np.clip(v.astype(np.int32), 0, nh - 2)
        fu, fv = u - i, v - j
        r = np.sqrt(rho * rho + h * h)
        kr = np.float32(self.k0) * r
        inv = np.float32(1.0) / r
        ph = np.empty(r.shape, dtype=np.complex64)
        ph.real = np.cos(kr) * inv
        ph.imag = -np.sin(kr) * inv
        a = ph * (np.float32(1.0) - fu)
        b = ph * fu
        w = np.empty((len(r), 1, 4), dtype=np.complex64)
        gv = np.float32(1.0) - fv
        w[:, 0, 0], w[:, 0, 1], w[:, 0, 2], w[:, 0, 3] = a * gv, a * fv, b * gv, b * fv
        out = np.matmul(w, self._flat[i * (nh - 1) + j])[:, 0, :]      # (P, 9)
        return out.T.reshape((-1,) + shape)


def rca_quantities(k0: float, eps_c: complex, rho, h):
    """The table's nine remainder quantities (``ReflectionTable.lookup``) by the reflection-coefficient
    approximation: the perfect-ground image field with its parts in and across the plane of incidence
    weighted by the plane-wave Fresnel coefficients of the image ray's incidence angle, minus K times it.

    With cos(theta_i) = h / R2 (R2 the image distance), the field of the image in the plane of incidence
    (E of a TM wave, H of a TE wave) is weighted by Gamma_TM, that across it by -Gamma_TE (both give the
    image back over a perfect conductor, and zero reflection over eps_c = 1). It is the leading term of the
    saddle-point evaluation of the Sommerfeld integral (Banos 1966; Chew 1990, Sec. 2.4; from memory): the
    Norton surface wave and the near-zone corrections are left out, so it is used only where
    ``rca_valid`` holds.

    Parameters
    ----------
    rho, h : ndarray
        Horizontal distance and height sum z + z' [m] (same shape).

    Returns
    -------
    ndarray (9, ...) complex
        As ``ReflectionTable.lookup`` [V/m and A/m per A m].
    """
    rho = np.asarray(rho, dtype=float)
    h = np.asarray(h, dtype=float)
    r = np.sqrt(rho * rho + h * h)
    c, s = h / r, rho / r
    gv, gh = fresnel_coefficients(c, eps_c)
    k_img = image_factor(eps_c)
    tv, th = gv - k_img, gh + k_img
    kr = k0 * r
    g = np.exp(-1j * kr) / (4.0 * math.pi * r)
    a = 1.0 - 1j / kr - 1.0 / kr ** 2
    b = -1.0 + 3j / kr + 3.0 / kr ** 2
    ge = -1j * k0 * ETA0_OHM * g           # -j omega mu0 g
    gm = (1j * k0 + 1.0 / r) * g
    # image of the vertical dipole (moment +z at -z'), and of the x dipole (moment -x) at azimuth 0 and 90 deg
    return np.stack([tv * ge * b * c * s, tv * ge * (a + b * c * c), tv * gm * s,
                     tv * ge * (-a - b * s * s), tv * ge * (-b * s * c), tv * gm * c,
                     th * (-ge * a), -th * gm * c, th * gm * s])


#: Smallest Norton numerical distance |w| of a source-point pair at which the near field uses the
#: reflection-coefficient approximation (``rca_quantities``) instead of the Sommerfeld integrals. The
#: approximation leaves out Norton's ground wave (1 - R_v) F(w), F(w) ~ -1/(2w) for large |w| (Norton 1937,
#: from memory), and the near-zone corrections: measured against the direct Sommerfeld integral for every soil
#: class at 1.8-144 MHz, its error is at most 1.1/|w| of the image field (tests/test_ground.py), so below
#: 0.6 % here, about the interpolation error of the tables. It needs the image distance to be roughly
#: 50 wavelengths or more (far more along the ground), so places near an antenna always get the exact method.
RCA_MIN_NUMERICAL_DISTANCE = 200.0


def numerical_distance(k0: float, eps_c: complex, rho, h):
    """Norton's numerical distance |w| = |k0 R2 / 2 (cos t + u sqrt(1 - u^2 sin^2 t))^2| [1], u = eps_c^-1/2.

    R2 = sqrt(rho^2 + h^2) is the image distance and t the incidence angle of the image ray, cos t = h / R2
    (K. A. Norton, Proc. IRE 25, 1937; the form of R. E. Collin, Antennas and Radiowave Propagation, 1985;
    from memory).
    """
    r = np.hypot(rho, h)
    c = np.asarray(h, dtype=float) / r
    u = 1.0 / np.sqrt(complex(eps_c))
    return 0.5 * k0 * r * np.abs(c + u * np.sqrt(1.0 - u * u * (1.0 - c * c))) ** 2


def rca_radius_m(k0: float, eps_c: complex) -> float:
    """Image distance [m] below which no pair reaches ``RCA_MIN_NUMERICAL_DISTANCE`` (exact method there)."""
    c = np.linspace(0.0, 1.0, 401)
    u = 1.0 / np.sqrt(complex(eps_c))
    m_max = float(np.max(np.abs(c + u * np.sqrt(1.0 - u * u * (1.0 - c * c))) ** 2))
    return 2.0 * RCA_MIN_NUMERICAL_DISTANCE / (k0 * m_max * 1.01)


def rca_mask(k0: float, eps_c: complex, rho, h):
    """True where a pair (horizontal distance rho, height sum h [m]) may use the reflection-coefficient
    approximation (``numerical_distance`` at least ``RCA_MIN_NUMERICAL_DISTANCE``)."""
    rho = np.asarray(rho, dtype=float)
    h = np.asarray(h, dtype=float)
    mask = np.hypot(rho, h) >= rca_radius_m(k0, eps_c)
    if mask.any():
        mask[mask] = numerical_distance(k0, eps_c, rho[mask], h[mask]) >= RCA_MIN_NUMERICAL_DISTANCE
    return mask


_TABLES: dict = {}


def reflection_table(k0: float, eps_c: complex, rho_max_m: float, h_min_m: float, h_max_m: float) -> ReflectionTable:
    """A table covering the range, reused across calls with the same (k0, soil) when it covers it."""
    key = (round(k0, 12), complex(eps_c))
    tab = _TABLES.get(key)
    if tab is not None and tab.covers(rho_max_m, h_min_m, h_max_m):
        return tab
    if tab is not None:   # grow to cover both
        rho_max_m, h_min_m, h_max_m = (max(rho_max_m, tab.rho_max), min(h_min_m, tab.h_min), max(h_max_m, tab.h_max))
    tab = ReflectionTable(k0, eps_c, rho_max_m * 1.05, h_min_m, h_max_m * 1.05)
    if len(_TABLES) > 8:
        _TABLES.clear()
    _TABLES[key] = tab
    return tab


def remainder_fields(tab: ReflectionTable, src_m, mom_am, obs_m, *, want_h: bool = True):
    """Sommerfeld remainder E [V/m] (and H [A/m]) at obs (N, 3) of dipoles (M, 3) with moments (M, 3).

    Add the K-weighted image field (exact, elsewhere) for the whole reflected field. Any other ``tab`` with a
    ``lookup`` goes to ``remainder_fields_reference``. For a table: the interpolation of
    ``ReflectionTable.lookup`` with the work per pair cut: real bilinear weights applied to the cell's
    corners (stored side by side) in one contraction, the phase factor e^{-jk0 R}/R applied to the three
    moment terms instead of the nine quantities; points sharing a height (``LEVEL_MIN_POINTS`` or more: map
    planes) by ``_remainder_level``, about 2 to 3 times faster again. Same values as
    ``remainder_fields_reference`` to within single-precision rounding (tests/test_ground.py: 1e-6 of the largest
    field, 2e-6 on the planes).
    """
    if not isinstance(tab, ReflectionTable):
        return remainder_fields_reference(tab, src_m, mom_am, obs_m, want_h=want_h)
    src, mom, obs, e_out, h_out, m_scale = _remainder_arrays(src_m, mom_am, obs_m, want_h)
    moments = tuple(np.ascontiguousarray(mom[:, c] / m_scale, dtype=np.complex64) for c in range(3))
    rest = np.arange(len(obs))
    if len(src) and len(obs):
        # Points sharing a height: each source's height sum is fixed, the table is interpolated in ln h once per
        # source and only linearly in u per pair (_remainder_level); the other points take the bilinear blocks.
        zs, inv, counts = np.unique(obs[:, 2], return_inverse=True, return_counts=True)
        level = counts[inv] >= LEVEL_MIN_POINTS
        if level.any():
            for g in np.flatnonzero(counts >= LEVEL_MIN_POINTS):
                idx = np.flatnonzero(inv == g)
                e_g, h_g = _remainder_level(tab, src, moments, obs[idx], float(zs[g]), want_h)
                e_out[idx] = e_g
                if want_h:
                    h_out[idx] = h_g
            rest = np.flatnonzero(~level)
    step = max(1, 4_000 // max(1, len(src)))   # small blocks stay in cache (measured 1.7x faster than 200k)
    for lo in range(0, len(rest), step):
        sel = rest[lo:lo + step]
        e_out[sel], h_b = _remainder_block(tab, src, moments, obs[sel], want_h)
        if want_h:
            h_out[sel] = h_b
    e_out *= m_scale
    if want_h:
        h_out *= m_scale
    return e_out, h_out


def _remainder_arrays(src_m, mom_am, obs_m, want_h):
    """Inputs as arrays, zeroed outputs and the moment scale of both remainder paths.

    The per-pair sums run in single precision (the table's own error is about 1e-3), with the moments
    scaled to O(1) by ``m_scale``.
    """
    src = np.asarray(src_m, dtype=float)
    mom = np.asarray(mom_am, dtype=complex)
    obs = np.asarray(obs_m, dtype=float)
    e_out = np.zeros(obs.shape, dtype=complex)
    h_out = np.zeros(obs.shape, dtype=complex) if want_h else None
    return src, mom, obs, e_out, h_out, float(np.max(np.abs(mom))) or 1.0


#: Points at one height from which ``remainder_fields`` interpolates per source height (``_remainder_level``).
LEVEL_MIN_POINTS = 64
#: Point pairs per block of ``_remainder_level`` (measured fastest: the gathered rows stay in cache).
LEVEL_PAIRS = 8192
#: Table quantities of a horizontal source in the level path (linear combinations of ``_QUANT``'s, formed on the
#: table so that the per-pair sums are matrix products): (E_rho - E_phi) / 2, (E_rho + E_phi) / 2 and E_z of the
#: x dipole (per cos, sin phi), then (H_phi + H_rho) / 2, (H_rho - H_phi) / 2 and H_z; of a vertical source E_rho,
#: E_z, H_phi. Rows of weights on the nine quantities.
_LEVEL_H = np.array([[0, 0, 0, .5, 0, 0, -.5, 0, 0], [0, 0, 0, .5, 0, 0, .5, 0, 0], [0, 0, 0, 0, 1, 0, 0, 0, 0],
                     [0, 0, 0, 0, 0, .5, 0, .5, 0], [0, 0, 0, 0, 0, -.5, 0, .5, 0], [0, 0, 0, 0, 0, 0, 0, 0, 1]])
_LEVEL_V = np.eye(9)[:3]


def _level_lines(tab, h, weights):
    """Per height sum h (M,) [m] the table along u at that height, as the bilinear lookup interpolates it in
    ln h, for the quantity combinations ``weights`` (K, 9): rows [value(i), value(i + 1) - value(i)] as
    complex64 (2 K, M nu), source m's row i at column m nu + i."""
    nu, nh = len(tab.u), len(tab.lh)
    v = (np.log(np.asarray(h, dtype=np.float32)) - np.float32(tab.lh[0])) * np.float32(1.0 / _DLH)
    j = np.clip(v.astype(np.int32), 0, nh - 2)
    fv = (v - j).astype(float)
    vals = tab.values @ weights.T                                          # (nu, nh, K)
    line = vals[:, j] * (1.0 - fv)[None, :, None] + vals[:, j + 1] * fv[None, :, None]   # (nu, M, K)
    kk = len(weights)
    out = np.zeros((2 * kk, len(h), nu), dtype=np.complex64)
    out[:kk] = line.transpose(2, 1, 0)
    out[kk:, :, :-1] = np.diff(out[:kk], axis=2)
    return out.reshape(2 * kk, -1)


def _remainder_level(tab, src, moments, obs, z: float, want_h: bool):
    """``remainder_fields`` at points (N, 3) all at height z, moments scaled to O(1).

    The same interpolation as ``_remainder_block`` (bilinear in u = asinh(rho / s), ln h), arranged for points at
    one height: each source's height sum z + z' is fixed, so the table is interpolated in ln h once per source
    (``_level_lines``) and per pair only linearly in u; horizontal sources gather six quantity combinations and
    vertical ones three (a sloping source counts in both), and the sums over the sources are matrix products of
    pair kernels (real angle factors cos phi, sin phi, cos 2 phi, sin 2 phi times the interpolated quantities and
    the phase factor e^{-jk0 R}/R) with the moments. With the x dipole's E_rho = A cos, E_phi = -B sin (the
    table's E_phi / sin is -B) the field of a moment (px, py) is
    E_x = px D + (px c2 + py s2) S, E_y = py D + (px s2 - py c2) S, D = (A - B) / 2, S = (A + B) / 2, and the
    same for H. Equal to ``_remainder_block`` to single-precision rounding (tests/test_ground.py).
    """
    f32 = np.float32
    nu = len(tab.u)
    px, py, pz = moments
    e_out = np.zeros((len(obs), 3), dtype=complex)
    h_out = np.zeros((len(obs), 3), dtype=complex) if want_h else None
    o32 = obs[:, :2].astype(np.float32)
    for horizontal in (True, False):
        sel = np.flatnonzero((np.abs(px) + np.abs(py) > 0) if horizontal else (np.abs(pz) > 0))
        if not len(sel):
            continue
        weights = (_LEVEL_H if want_h else _LEVEL_H[:3]) if horizontal else (_LEVEL_V if want_h else _LEVEL_V[:2])
        kk = len(weights)
        hm = (z + src[sel, 2]).astype(np.float32)
        lines = _level_lines(tab, hm, weights)
        s32 = src[sel, :2].astype(np.float32)
        m = len(sel)
        base = (np.arange(m, dtype=np.intp) * nu)[None, :]
        hm2 = hm * hm
        mom = np.stack([px[sel], py[sel]], axis=1) if horizontal else pz[sel, None]
        step = max(1, LEVEL_PAIRS // m)
        sx, sy = s32[None, :, 0].copy(), s32[None, :, 1].copy()
        a_u, a_u2, b_u, k0 = f32(1.0 / tab.scale), f32(1.0 / tab.scale ** 2), f32(1.0 / _DU), f32(tab.k0)
        for lo in range(0, len(obs), step):
            o = o32[lo:lo + step]
            p = len(o)
            dx = o[:, 0, None] - sx
            dy = o[:, 1, None] - sy
            s = dx * dx
            s += dy * dy
            rho = np.sqrt(s)
            u = s * a_u2                                  # u = asinh(rho / scale) / du, the cheaper way
            u += f32(1.0)
            np.sqrt(u, out=u)
            u += rho * a_u
            np.log(u, out=u)
            u *= b_u
            i = u.astype(np.intp)
            np.minimum(i, nu - 2, out=i)
            np.subtract(u, i, out=u, dtype=np.float32, casting="unsafe")    # the fraction within the cell
            i += base
            g = np.take(lines, i, axis=1, mode="wrap")                        # (2 K, P, M)
            q = g[kk:] * u
            q += g[:kk]                                                       # (K, P, M)
            r = s + hm2
            np.sqrt(r, out=r)
            kr = r * k0
            np.reciprocal(r, out=r)
            ph = np.empty(r.shape, dtype=np.complex64)
            np.multiply(np.cos(kr), r, out=ph.real)
            np.sin(kr, out=kr)
            kr *= r
            np.negative(kr, out=ph.imag)
            # cos phi, sin phi (0 straight above a source, where every angle-dependent quantity vanishes)
            on = rho > 0
            np.reciprocal(rho, out=rho, where=on)
            c = np.multiply(dx, rho, out=dx, where=on)
            sn = np.multiply(dy, rho, out=dy, where=on)
            if horizontal:
                # phase factor times the angle factors 1, cos 2 phi, sin 2 phi, cos phi, sin phi (complex)
                fac = np.empty((4, p, m), dtype=np.complex64)
                np.multiply(ph, c * c - sn * sn, out=fac[0])
                np.multiply(ph, f32(2.0) * c * sn, out=fac[1])
                np.multiply(ph, c, out=fac[2])
                np.multiply(ph, sn, out=fac[3])
                nk = 10 if want_h else 5
                ker = np.empty((nk, p, m), dtype=np.complex64)
                np.multiply(q[0], ph, out=ker[0])
                np.multiply(q[1], fac[0:2], out=ker[1:3])
                np.multiply(q[2], fac[2:4], out=ker[3:5])
                if want_h:
                    np.multiply(q[3], ph, out=ker[5])
                    np.multiply(q[4], fac[0:2], out=ker[6:8])
                    np.multiply(q[5], fac[3:1:-1], out=ker[8:10])
                t = (ker.reshape(nk * p, m) @ mom).reshape(nk, p, 2)      # each kernel times px and py
                e = e_out[lo:lo + step]
                e[:, 0] += t[0, :, 0] + t[1, :, 0] + t[2, :, 1]
                e[:, 1] += t[0, :, 1] - t[1, :, 1] + t[2, :, 0]
                e[:, 2] += t[3, :, 0] + t[4, :, 1]
                if want_h:
                    h = h_out[lo:lo + step]
                    h[:, 0] += t[7, :, 0] - t[5, :, 1] - t[6, :, 1]
                    h[:, 1] += t[5, :, 0] - t[6, :, 0] - t[7, :, 1]
                    h[:, 2] += t[8, :, 0] - t[9, :, 1]
            else:
                q *= ph
                nk = 5 if want_h else 3
                ker = np.empty((nk, p, m), dtype=np.complex64)
                np.multiply(q[0], c, out=ker[0])
                np.multiply(q[0], sn, out=ker[1])
                ker[2] = q[1]
                if want_h:
                    np.multiply(q[2], c, out=ker[3])
                    np.multiply(q[2], sn, out=ker[4])
                t = (ker.reshape(nk * p, m) @ mom).reshape(nk, p)
                e_out[lo:lo + step] += t[:3].T
                if want_h:
                    h_out[lo:lo + step, 0] -= t[4]
                    h_out[lo:lo + step, 1] += t[3]
    return e_out, h_out


def _remainder_block(tab, src, moments, o, want_h):
    """``remainder_fields`` of one block of points (moments scaled to O(1))."""
    f32 = np.float32
    px, py, pz = moments
    nu, nh = len(tab.u), len(tab.lh)
    dx = o[:, None, 0] - src[None, :, 0]
    dy = o[:, None, 1] - src[None, :, 1]
    rho64 = np.sqrt(dx * dx + dy * dy)
    with np.errstate(invalid="ignore", divide="ignore"):
        inv_rho = 1.0 / rho64
        cph = np.where(rho64 > 0, dx * inv_rho, 1.0).astype(np.float32)
        sph = np.where(rho64 > 0, dy * inv_rho, 0.0).astype(np.float32)
    rho = rho64.astype(np.float32)
    h = (o[:, None, 2] + src[None, :, 2]).astype(np.float32)
    u = np.arcsinh(rho * f32(1.0 / tab.scale)) * f32(1.0 / _DU)
    i = np.minimum(u.astype(np.int32), nu - 2)
    v = (np.log(h) - f32(tab.lh[0])) * f32(1.0 / _DLH)
    j = np.clip(v.astype(np.int32), 0, nh - 2)
    fu, fv = u - i, v - j
    gu, gv = f32(1.0) - fu, f32(1.0) - fv
    w = np.empty(fu.shape + (4,), dtype=np.float32)
    w[..., 0], w[..., 1], w[..., 2], w[..., 3] = gu * gv, gu * fv, fu * gv, fu * fv
    g = tab.cells().view(np.float32)[i * (nh - 1) + j]                       # (P, M, 4, 18)
    q = np.einsum("pmc,pmck->pmk", w, g, optimize=False).view(np.complex64).transpose(2, 0, 1)   # (9, P, M)
    r = np.sqrt(rho * rho + h * h)
    kr = f32(tab.k0) * r
    inv_r = f32(1.0) / r
    ph = np.empty(r.shape, dtype=np.complex64)
    ph.real = np.cos(kr) * inv_r
    ph.imag = -np.sin(kr) * inv_r
    ca = (px * cph + py * sph) * ph
    sb = (px * sph - py * cph) * ph
    pzp = pz * ph
    e = np.empty((len(o), 3), dtype=complex)
    e_rho = ca * q[3] + pzp * q[0]
    e_phi = sb * q[6]
    e[:, 0] = np.sum(e_rho * cph - e_phi * sph, axis=1)
    e[:, 1] = np.sum(e_rho * sph + e_phi * cph, axis=1)
    e[:, 2] = np.sum(ca * q[4] + pzp * q[1], axis=1)
    if not want_h:
        return e, None
    hf = np.empty((len(o), 3), dtype=complex)
    h_rho = sb * q[7]
    h_phi = ca * q[5] + pzp * q[2]
    hf[:, 0] = np.sum(h_rho * cph - h_phi * sph, axis=1)
    hf[:, 1] = np.sum(h_rho * sph + h_phi * cph, axis=1)
    hf[:, 2] = np.sum(sb * q[8], axis=1)
    return e, hf


def remainder_fields_reference(tab: ReflectionTable, src_m, mom_am, obs_m, *, want_h: bool = True):
    """``remainder_fields`` by ``tab.lookup`` and the nine quantities per pair: any object with that lookup
    (``ReflectionApproximation`` too); for a ``ReflectionTable`` the earlier, slower path, kept as the
    reference that ``remainder_fields`` is tested against."""
    src, mom, obs, e_out, h_out, m_scale = _remainder_arrays(src_m, mom_am, obs_m, want_h)
    px, py, pz = (np.ascontiguousarray(mom[:, c] / m_scale, dtype=np.complex64) for c in range(3))
    step = max(1, 4_000 // max(1, len(src)))   # small blocks stay in cache (measured 1.7x faster than 200k)
    for lo in range(0, len(obs), step):
        o = obs[lo:lo + step]
        dx = o[:, None, 0] - src[None, :, 0]
        dy = o[:, None, 1] - src[None, :, 1]
        rho = np.hypot(dx, dy)
        h = o[:, None, 2] + src[None, :, 2]
        with np.errstate(invalid="ignore", divide="ignore"):
            cph = np.where(rho > 0, dx / rho, 1.0).astype(np.float32)
            sph = np.where(rho > 0, dy / rho, 0.0).astype(np.float32)
        q = tab.lookup(rho, h)
        ca = px * cph + py * sph
        sb = px * sph - py * cph
        e_rho = ca * q[3] + pz * q[0]
        e_phi = sb * q[6]
        e_out[lo:lo + step, 0] = np.sum(e_rho * cph - e_phi * sph, axis=1)
        e_out[lo:lo + step, 1] = np.sum(e_rho * sph + e_phi * cph, axis=1)
        e_out[lo:lo + step, 2] = np.sum(ca * q[4] + pz * q[1], axis=1)
        if want_h:
            h_rho = sb * q[7]
            h_phi = ca * q[5] + pz * q[2]
            h_out[lo:lo + step, 0] = np.sum(h_rho * cph - h_phi * sph, axis=1)
            h_out[lo:lo + step, 1] = np.sum(h_rho * sph + h_phi * cph, axis=1)
            h_out[lo:lo + step, 2] = np.sum(sb * q[8], axis=1)
    e_out *= m_scale
    if want_h:
        h_out *= m_scale
    return e_out, h_out


# --- use by the solver: PWS segments as a few Hertzian dipoles each -------------------------------------

#: Most Gauss-Legendre nodes per segment for the remainder (see ``remainder_nodes``).
MAX_REMAINDER_NODES = 8


#: Gauss-Legendre nodes per segment and per (segment length / smallest height sum) for the remainder.
REMAINDER_NODES_PER_HEIGHT = 1.0


def remainder_nodes(st, h_min_m: float) -> int:
    """Gauss-Legendre nodes per segment for the Sommerfeld remainder of the reaction matrix (``RemainderRows``)
    over the smallest height sum h_min_m (the near fields take ``_remainder_dipoles``).

    The remainder varies on the scale of the height sum z + z' (the subtracted image carries the
    singular part), so segments get ``REMAINDER_NODES_PER_HEIGHT`` nodes per height sum (1 to 8): one
    node where the segments are short against the height (measured, when the near fields used the same rule:
    the near field within 0.3 % of the direct Sommerfeld integral, 1 to 3 nodes, for a lambda/2 dipole 0.05 and
    0.14 lambda up, points at 0 to 3 m; for the near fields of low sloped wires it was not enough,
    ``FIELD_NODES_PER_HEIGHT_SLOPED``).
    """
    return int(min(MAX_REMAINDER_NODES, max(1, math.ceil(REMAINDER_NODES_PER_HEIGHT * float(st.length_m.max())
                                                          / h_min_m))))


def _low(st) -> float:
    return float(min(st.start_m[:, 2].min(), st.end_m[:, 2].min()))


def _segment_nodes(st, k: float, nq: int):
    """Node points (Ns, Q, 3), weights d w (Ns, Q) [m] and half-function shapes f1, f2 (Ns, Q)."""
    xg, wg = gauss_legendre_01(nq)
    d = st.length_m
    s = d[:, None] * xg[None, :]
    pts = st.start_m[:, None, :] + s[..., None] * st.direction[:, None, :]
    sk = np.sin(k * d)[:, None]
    return pts, d[:, None] * wg[None, :], np.sin(k * (d[:, None] - s)) / sk, np.sin(k * s) / sk


def _horizontal_span(a, b) -> float:
    # column by column (a reduction over the rows of an (N, 2) view is many times slower)
    dx = max(a[:, 0].max(), b[:, 0].max()) - min(a[:, 0].min(), b[:, 0].min())
    dy = max(a[:, 1].max(), b[:, 1].max()) - min(a[:, 1].min(), b[:, 1].min())
    return float(np.hypot(dx, dy))


def structure_table(st, k: float, obs_m=None) -> ReflectionTable:
    """Interpolation table covering the structure (and points ``obs_m``, if given) over its soil."""
    pts = np.concatenate([st.start_m, st.end_m])
    z_lo, z_hi = float(pts[:, 2].min()), float(pts[:, 2].max())
    if obs_m is None or len(obs_m) == 0:
        return reflection_table(k, st.soil_eps_c, _horizontal_span(pts, pts), 2.0 * z_lo, 2.0 * z_hi)
    obs = np.asarray(obs_m, dtype=float)
    return reflection_table(k, st.soil_eps_c, _horizontal_span(pts, obs), z_lo + max(0.0, float(obs[:, 2].min())),
                            z_hi + float(obs[:, 2].max()))


def _remainder_dipoles(st, k: float, seg_i: np.ndarray, points_m: np.ndarray):
    """Hertzian dipoles (positions (M, 3) [m], moments (M, 3) [A m]) standing for the segment currents.

    The height sums are taken from the lowest point. Each straight run of segments (``fields._runs``) gets the
    fewer dipoles of: the per-segment rule (``_segment_dipoles``: ``FIELD_NODES_PER_HEIGHT`` or
    ``FIELD_NODES_PER_HEIGHT_SLOPED`` Gauss-Legendre nodes per segment length / height sum, 1 to 8) and the run
    rule (``_run_dipoles``: ``RUN_NODES_PER_HEIGHT`` per run length / height sum, plus half a node per radian of
    phase along the run, plus 2). Both measured against 8 nodes per segment in tests/test_ground.py.
    """
    z_obs = max(0.0, float(np.min(points_m[:, 2])))
    h_seg = np.minimum(st.start_m[:, 2], st.end_m[:, 2]) + z_obs
    per_h = np.where(np.abs(st.direction[:, 2]) > _SLOPED_SIN, FIELD_NODES_PER_HEIGHT_SLOPED, FIELD_NODES_PER_HEIGHT)
    nq_seg = np.clip(np.ceil(per_h * st.length_m / h_seg), 1, MAX_REMAINDER_NODES).astype(int)
    if RUN_NODES_PER_HEIGHT <= 0:
        return _segment_dipoles(st, k, seg_i, nq_seg, np.ones(st.num_segments, dtype=bool))
    from rfsafe.antenna.wire.fields import _runs

    geo = _runs(st)
    per_seg = np.ones(st.num_segments, dtype=bool)
    src, mom = [], []
    first = 0
    fine = None
    for r0, r1, *_ in geo["runs"][:geo["real_runs"]]:
        idx = geo["seg"][first:first + (r1 - r0 - 1)]
        first += r1 - r0 - 1
        length = float(st.length_m[idx].sum())
        n_run = math.ceil(RUN_NODES_PER_HEIGHT * length / float(h_seg[idx].min()) + 0.5 * k * length) + 2
        if len(idx) > 1 and n_run < int(nq_seg[idx].sum()) and n_run <= _RUN_MAX_NODES:
            if fine is None:
                fine = _segment_nodes(st, k, _RUN_MOMENT_NODES)
            p, m = _run_dipoles(st, seg_i, idx, n_run, fine)
            src.append(p)
            mom.append(m)
            per_seg[idx] = False
    if per_seg.any():
        p, m = _segment_dipoles(st, k, seg_i, nq_seg, per_seg)
        src.append(p)
        mom.append(m)
    return np.concatenate(src), np.concatenate(mom)


def _segment_dipoles(st, k: float, seg_i, nq_seg, use):
    """The per-segment rule: ``nq_seg`` Gauss-Legendre nodes on each segment where ``use``, moments I(s) w ds."""
    src, mom = [], []
    for nq in unique_ints(nq_seg[use]):
        sel = use & (nq_seg == nq)
        pts, w, f1, f2 = _segment_nodes(st, k, int(nq))
        cur = seg_i[sel, 0, None] * f1[sel] + seg_i[sel, 1, None] * f2[sel]     # (Ns_sel, Q) [A]
        src.append(pts[sel].reshape(-1, 3))
        mom.append(((cur * w[sel])[..., None] * st.direction[sel, None, :]).reshape(-1, 3))
    return np.concatenate(src), np.concatenate(mom)


#: Gauss-Legendre nodes per segment and per (segment length / smallest height sum) for the near fields: along
#: segments within about 6 deg of the ground, and along the others (whose height sum changes along them, so that
#: the remainder, which grows steeply as the height sum falls, needs more). Measured against 8 nodes per segment
#: (which agrees with the direct Sommerfeld integral to 3e-4 of the field): a ground-mounted vertical with four
#: radials 0.3 m up at 7.1 MHz, maps at 0, 0.5 and 1.5 m, within 0.24 % of the field (floored at a tenth of the
#: map's largest); one node per height sum everywhere, the rule before, erred by 0.5 % in E at 1.5 m above the
#: radials and 3.9 % in H at ground level beside them (tests/test_ground_sources.py).
FIELD_NODES_PER_HEIGHT = 1.5
FIELD_NODES_PER_HEIGHT_SLOPED = 4.0
#: |direction_z| above which a segment counts as sloped for ``FIELD_NODES_PER_HEIGHT_SLOPED`` (about 6 deg).
_SLOPED_SIN = 0.1
#: Nodes of the run rule per (run length / smallest height sum), besides half a node per radian of phase along the
#: run and 2 more (``_run_dipoles``); 0 switches the run rule off.
RUN_NODES_PER_HEIGHT = 2.5
#: Gauss-Legendre nodes per segment for the moments of the run rule (exact for the sinusoidal currents).
_RUN_MOMENT_NODES = 8
#: Most nodes of the run rule (longer or lower runs keep the per-segment rule).
_RUN_MAX_NODES = 64


def _run_dipoles(st, seg_i, idx, n: int, fine):
    """The run rule: n dipoles at the Gauss-Legendre nodes of a straight run (segments ``idx``, in order), their
    moments matching the run's current against every polynomial of degree below n along the run.

    The moment of node j is int I(s) l_j(s) ds (l_j the Lagrange polynomial of the nodes), integrated segment by
    segment (``fine``: ``_segment_nodes`` with ``_RUN_MOMENT_NODES`` nodes each), so the rule is exact wherever the remainder is a polynomial of
    degree n - 1 along the run, and its error is that of polynomial interpolation of the remainder at the nodes: the
    remainder is analytic within the height sum of the run (the image, which carries the singular part, is summed
    in closed form), so it falls geometrically with n / (length / height). Measured against 8 nodes per segment
    (tests/test_ground_sources.py): within 0.03 % of the field for high dipoles and an inverted V (the per-segment
    rule with one node per height sum: 0.05-0.1 %), with a half to a quarter of the dipoles; for an 80 m wire 6 m
    up (42 dipoles for 120 segments) 0.11 % in H at ground level, where against the direct Sommerfeld integral it
    errs by 0.16 % and the per-segment rule by 0.08 % (fewer samples of the table's own interpolation error,
    which the results state as 0.3 %).
    """
    o = st.start_m[idx[0]]
    u = st.direction[idx[0]]
    length = float(st.length_m[idx].sum())
    pts, w, f1, f2 = fine
    fine_s = ((pts[idx] - o) @ u).ravel()
    fine_c = ((seg_i[idx, 0, None] * f1[idx] + seg_i[idx, 1, None] * f2[idx]) * w[idx]).ravel()   # I ds [A m]
    xg, _ = gauss_legendre_01(n)
    # Lagrange polynomials at the fine nodes in barycentric form (Berrut and Trefethen, SIAM Review 46, 2004):
    # l_j(t) = (b_j / (t - x_j)) / sum_m b_m / (t - x_m), b_j = 1 / prod_{m != j} (x_j - x_m), on [0, 1]
    b = 1.0 / np.prod(xg[:, None] - xg[None, :] + np.eye(n), axis=1)
    d = fine_s[None, :] / length - xg[:, None]                              # (n, fine)
    hit = d == 0.0
    d[hit] = 1.0
    lag = b[:, None] / d
    lag /= lag.sum(axis=0)
    cols = np.flatnonzero(hit.any(axis=0))                                    # a fine node on a node: l_j = delta
    lag[:, cols] = hit[:, cols]
    weights = lag @ fine_c
    return o + (xg * length)[:, None] * u, weights[:, None] * u


def _rca_points(st, k: float, src, points_m) -> np.ndarray:
    """True for points whose every pair with the dipoles at ``src`` satisfies ``rca_mask``."""
    # Candidates: points at least the reflection-coefficient radius from the image of the structure's box;
    # each of their pairs is then checked (most points near an antenna are not candidates).
    ends = np.concatenate([st.start_m, st.end_m])
    lo = np.r_[ends[:, :2].min(0), -ends[:, 2].max()]
    hi = np.r_[ends[:, :2].max(0), -ends[:, 2].min()]
    d = np.maximum(lo - points_m, points_m - hi)
    np.maximum(d, 0.0, out=d)
    far = d[:, 0] ** 2 + d[:, 1] ** 2 + d[:, 2] ** 2 >= rca_radius_m(k, st.soil_eps_c) ** 2   # the gap, squared
    cand = np.flatnonzero(far)
    step = max(1, 200_000 // len(src))
    for lo_i in range(0, len(cand), step):
        o = points_m[cand[lo_i:lo_i + step]]
        rho = np.hypot(o[:, None, 0] - src[None, :, 0], o[:, None, 1] - src[None, :, 1])
        far[cand[lo_i:lo_i + step]] = rca_mask(k, st.soil_eps_c, rho, o[:, None, 2] + src[None, :, 2]).all(axis=1)
    return far


def approximation_cautions(st, k: float, points_m, labels=None) -> tuple[str, ...]:
    """One line naming the points whose ground reflection came from the reflection-coefficient
    approximation (``remainder_near_fields``), or nothing when every point had the Sommerfeld integrals."""
    if st.soil_eps_c is None:
        return ()
    pts = np.atleast_2d(np.asarray(points_m, dtype=float))
    if len(pts) == 0:
        return ()
    src, _ = _remainder_dipoles(st, k, np.zeros((st.num_segments, 2)), pts)
    far = _rca_points(st, k, src, pts)
    if not far.any():
        return ()
    names = [str(labels[i]) if labels is not None else f"points_m[{i}]" for i in np.flatnonzero(far)]
    return (f"Real ground: the ground reflection at {', '.join(names)} (every part of the antenna at a Norton "
            f"numerical distance of at least {RCA_MIN_NUMERICAL_DISTANCE:g}) is the reflection-coefficient "
            "approximation (Fresnel-weighted image; error below 0.6 % of the image field, measured against the "
            "Sommerfeld integrals); everywhere else the Sommerfeld integrals.",)


def remainder_near_fields(st, k: float, seg_i: np.ndarray, points_m: np.ndarray, usage: dict | None = None):
    """Sommerfeld remainder of E [V/m] and H [A/m] at points (N, 3) from the segment currents (Ns, 2).

    The PWS current of the segments is integrated as Hertzian dipoles along them (``_remainder_dipoles``: a
    Gauss-Legendre rule per segment or a moment-matched rule per straight run); the image part (-K times the
    image currents) is summed exactly by the caller with the other closed-form segment fields. A point whose
    every pair with those dipoles satisfies ``rca_mask`` gets the reflection-coefficient approximation; every
    other point the interpolated Sommerfeld integrals, the table covering only those. ``usage`` (a dict) counts the
    points of each method under "exact" and "rca".
    """
    points_m = np.asarray(points_m, dtype=float)
    src, mom = _remainder_dipoles(st, k, seg_i, points_m)
    far = _rca_points(st, k, src, points_m)
    if usage is not None:
        usage["rca"] = usage.get("rca", 0) + int(far.sum())
        usage["exact"] = usage.get("exact", 0) + int((~far).sum())
    if not far.any():
        return remainder_fields(structure_table(st, k, points_m), src, mom, points_m)
    e_out = np.empty(points_m.shape, dtype=complex)
    h_out = np.empty(points_m.shape, dtype=complex)
    e_out[far], h_out[far] = _rca_fields(k, st.soil_eps_c, src, mom, points_m[far])
    if not far.all():
        near = ~far
        tab = structure_table(st, k, points_m[near])
        e_out[near], h_out[near] = remainder_fields(tab, src, mom, points_m[near])
    return e_out, h_out


class ReflectionApproximation:
    """The lookup of a ``ReflectionTable`` answered by ``rca_quantities`` (closed form, any range)."""

    def __init__(self, k0: float, eps_c: complex):
        self.k0, self.eps_c = float(k0), complex(eps_c)

    def lookup(self, rho, h):
        return rca_quantities(self.k0, self.eps_c, rho, h)


def _rca_fields(k: float, eps_c: complex, src, mom, obs):
    """Remainder E, H at obs (N, 3) from dipoles (M, 3) by the reflection-coefficient approximation."""
    return remainder_fields_reference(ReflectionApproximation(k, eps_c), src, mom, obs)


#: Point pairs per block of the remainder fill (about 700 bytes of temporaries each: some 12 MB).
REMAINDER_PAIRS = 16_384


class RemainderRows:
    """Rows of the half-function reaction matrix of the Sommerfeld remainder, S[2p+e', 2q+e] = -int f_p t_p . E_q.

    Low-order Gauss-Legendre quadrature on both segments (the remainder is smooth on the scale of the
    segment for wires above ground; ``remainder_nodes``). The remainder's dyadic Green's function is
    reciprocal (Sommerfeld's half-space, Chew 1990 Sec. 2.4) and the tabulated one keeps it: S is symmetric
    to rounding (measured |S - S^T| / max |S| about 1.5e-16, tests/test_ground.py), so the solver fills one
    triangle. Blocks of rows take ``rows``; memory is bounded by the block, not by N^2.
    """

    def __init__(self, st, k: float):
        self.tab = structure_table(st, k)
        self.nq = nq = remainder_nodes(st, 2.0 * _low(st))
        pts, w, f1, f2 = _segment_nodes(st, k, nq)
        self.ns = st.num_segments
        self.p = pts.reshape(-1, 3)
        self.sdir = np.repeat(st.direction, nq, axis=0)
        self.fw = np.stack([f1 * w, f2 * w], axis=1)               # (Ns, 2, Q)

    def block_rows(self, r0: int, c0: int) -> int:
        """Test segments per block from r0 on against the source segments c0 onward (``REMAINDER_PAIRS``)."""
        return max(1, REMAINDER_PAIRS // (self.nq * self.nq * max(1, self.ns - c0)))

    def rows(self, r0: int, r1: int, c0: int = 0) -> np.ndarray:
        """S[2 r0:2 r1, 2 c0:] (test segments r0:r1, source segments c0 on), shape (2 (r1 - r0), 2 (Ns - c0))."""
        nq, ns = self.nq, self.ns
        o = self.p[r0 * nq:r1 * nq]
        src = self.p[c0 * nq:]
        dx = o[:, None, 0] - src[None, :, 0]
        dy = o[:, None, 1] - src[None, :, 1]
        rho = np.hypot(dx, dy)
        h = o[:, None, 2] + src[None, :, 2]
        with np.errstate(invalid="ignore", divide="ignore"):
            cph = np.where(rho > 0, dx / rho, 1.0)
            sph = np.where(rho > 0, dy / rho, 0.0)
        q = self.tab.lookup(rho, h).astype(complex)
        sd = self.sdir[c0 * nq:]
        sx, sy, sz = sd[None, :, 0], sd[None, :, 1], sd[None, :, 2]
        ca = sx * cph + sy * sph
        sb = sx * sph - sy * cph
        e_rho = ca * q[3] + sz * q[0]
        e_phi = sb * q[6]
        e_z = ca * q[4] + sz * q[1]
        t = self.sdir[r0 * nq:r1 * nq]
        g = ((e_rho * cph - e_phi * sph) * t[:, 0, None] + (e_rho * sph + e_phi * cph) * t[:, 1, None]
             + e_z * t[:, 2, None])
        g = g.reshape(r1 - r0, nq, ns - c0, nq)
        s = -np.einsum("pea,paqb,qfb->peqf", self.fw[r0:r1], g, self.fw[c0:])
        return s.reshape(2 * (r1 - r0), 2 * (ns - c0))


def remainder_reaction(st, k: float) -> np.ndarray:
    """The whole half-function reaction matrix of the Sommerfeld remainder (``RemainderRows``), (2 Ns, 2 Ns).

    For checks: the solver adds the remainder block by block, one triangle (``solver.impedance_matrix``).
    """
    fill = RemainderRows(st, k)
    out = np.empty((2 * fill.ns, 2 * fill.ns), dtype=complex)
    step = fill.block_rows(0, 0)
    for r0 in range(0, fill.ns, step):
        r1 = min(fill.ns, r0 + step)
        out[2 * r0:2 * r1] = fill.rows(r0, r1)
    return out


def with_soil(st, spec, *, prefix: str = ""):
    """The structure with its soil set (``Structure.soil_eps_c``); refuses wires too close to the soil."""
    from dataclasses import replace

    from rfsafe.antenna.wire.model import soil_of
    from rfsafe.errors import bad_value

    soil = soil_of(spec, prefix=prefix)
    z_min = MIN_HEIGHT_WAVELENGTHS * st.wavelength_m
    low = np.minimum(st.start_m[:, 2], st.end_m[:, 2])
    if np.any(low < z_min):
        q = int(np.argmin(low))
        w = int(st.wire[q])
        raise bad_value(st.wire_fields[w], st.wire_labels[w],
                        f"comes within {low[q]:.3g} m of the real ground (accepted: every part at least "
                        f"{z_min:.3g} m = lambda/{1 / MIN_HEIGHT_WAVELENGTHS:g} above it; wires on or in the "
                        "soil are not modelled)")
    return replace(st, soil_eps_c=soil.complex_permittivity(st.freq_hz))


def method_text(spec, st) -> str:
    """What the real-ground model did, for results."""
    from rfsafe.antenna.wire.model import soil_of

    soil = soil_of(spec)
    eps = st.soil_eps_c
    r_rca = rca_radius_m(2 * math.pi / st.wavelength_m, eps)
    return (f"real ground, {soil.text()}, complex permittivity {eps.real:.4g}{eps.imag:+.4g}j at "
            f"{st.freq_hz / 1e6:.6g} MHz: near fields and feed impedance from the exact Sommerfeld integrals "
            "(quasi-static image plus interpolated remainder; Sommerfeld 1909, Chew 1990 Sec. 2.3-2.4), except "
            "the near fields of places whose every pair with the antenna is at a Norton numerical distance of at "
            f"least {RCA_MIN_NUMERICAL_DISTANCE:g} (image distance {r_rca:.3g} m or more here, farther along the "
            "ground), which take the reflection-coefficient approximation (Fresnel-weighted image, within 0.6 % "
            "of the image field there, measured against the Sommerfeld integrals); gain and pattern from the "
            "space wave with Fresnel reflection coefficients (far zone; the surface wave, which decays along the "
            "ground, is not in the pattern). Not modelled: wires on or in the soil, buried radials, layered or "
            "sloping ground.")


_FREE: dict = {}


def _without_images(st):
    """The structure with ``ground=False`` (its own currents only), kept for the last few structures."""
    hit = _FREE.get(id(st))
    if hit is not None and hit[0] is st:
        return hit[1]
    from dataclasses import replace

    if len(_FREE) > 4:
        _FREE.clear()
    free = replace(st, ground=False)
    _FREE[id(st)] = (st, free)
    return free


def space_wave_intensity(st, k: float, seg_i, rhat, radiation_vector):
    """Far-zone radiation intensity [W/sr] over real ground: direct plus Fresnel-reflected space wave.

    E_theta ~ (N_d + Gamma_TM N_i) . theta_hat and E_phi ~ (N_d - Gamma_TE N_i) . phi_hat, with N_i the
    radiation vector of the perfect-ground image currents (both coefficients give the image back over a
    perfect conductor). Valid in the far zone above the horizon (Balanis, Antenna Theory, 3rd ed.,
    Sec. 4.8, dipoles above a flat lossy earth).
    """
    return _space_wave(st, k, seg_i, rhat, radiation_vector, image=False)[0]


def space_and_image_intensity(st, k: float, seg_i, rhat, radiation_vector):
    """``space_wave_intensity`` and, from the same radiation vectors, the intensity of the same currents over
    a perfect ground (Gamma_TM = 1, Gamma_TE = -1: the ground-wave bound of the solver), both [W/sr].

    One evaluation of the radiation vectors serves both: the solver's perfect-ground twin of the pattern grid
    then costs nothing more.
    """
    return _space_wave(st, k, seg_i, rhat, radiation_vector, image=True)


def _space_wave(st, k: float, seg_i, rhat, radiation_vector, *, image: bool):
    m = np.array([1.0, 1.0, -1.0])
    r = np.asarray(rhat, dtype=float)
    # The image currents (mirrored, horizontal parts reversed) radiate N_i(r) = -M N_d(M r), M = diag(1, 1, -1):
    # one evaluation of the real currents' radiation vector in the directions r and M r gives both.
    flat = r.reshape(-1, 3)
    both = radiation_vector(_without_images(st), k, seg_i, np.concatenate([flat, flat * m]))
    n_d = both[:len(flat)].reshape(r.shape)
    n_i = -(both[len(flat):] * m).reshape(r.shape)
    gv, gh = fresnel_coefficients(np.clip(r[..., 2], 0.0, 1.0), st.soil_eps_c)
    rxy = np.hypot(r[..., 0], r[..., 1])
    safe = rxy > 1e-12
    ph = np.stack([np.where(safe, -r[..., 1] / np.where(safe, rxy, 1.0), 0.0),
                   np.where(safe, r[..., 0] / np.where(safe, rxy, 1.0), 1.0), np.zeros_like(rxy)], axis=-1)
    th = np.cross(ph, r)
    d_t, d_p = np.einsum("...i,...i->...", n_d, th), np.einsum("...i,...i->...", n_d, ph)
    i_t, i_p = np.einsum("...i,...i->...", n_i, th), np.einsum("...i,...i->...", n_i, ph)
    c = ETA0_OHM * k * k / (32.0 * math.pi ** 2)
    up = r[..., 2] >= 0
    u = c * (np.abs(d_t + gv * i_t) ** 2 + np.abs(d_p - gh * i_p) ** 2)
    if not image:
        return np.where(up, u, 0.0), None
    u_img = c * (np.abs(d_t + i_t) ** 2 + np.abs(d_p + i_p) ** 2)
    return np.where(up, u, 0.0), np.where(up, u_img, 0.0)
