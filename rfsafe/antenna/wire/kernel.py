"""Closed-form fields of a straight filament carrying a sinusoidal current, and quadrature rules.

A straight segment of length ``d`` from ``P1`` to ``P2`` (unit vector ``s``) carries one of two
piecewise-sinusoidal (PWS) "half functions"::

    shape 1:  I(z') = sin k(d - z') / sin kd      (1 at P1, 0 at P2)
    shape 2:  I(z') = sin k z'      / sin kd      (0 at P1, 1 at P2)

Any current obeying I'' + k^2 I = 0 on the segment is a combination of the two. Because of that
equation the field of the segment integrates in closed form and depends only on the currents and
their derivatives at the two ends (terms ``e^{-jkR1}/R1``, ``e^{-jkR2}/R2``). With local cylindrical
coordinates (z along ``s`` from P1, rho from the axis), ``R_i = sqrt(rho^2 + (z_i - z)^2)``,
``E_i = e^{-jkR_i}``, ``D_i = z_i - z`` and ``[f] = f(end 2) - f(end 1)``::

    E_z   = (j eta / 4 pi k)     [ I' E / R ]
    E_rho = (j eta / 4 pi k rho) [ I' E D / R + j k I E ]
    H_phi = (1 / 4 pi rho)       [ I E D / R + I' E / (j k) ]

These are the fields of the current and of the line charge -I'/(j omega) on the segment. The point
charges +-I/(j omega) that a non-zero end current would leave at an end are omitted on purpose: every
basis function of the solver is continuous through its nodes (and through junctions and the ground
image), so those point charges cancel exactly. For a centre-fed dipole of half-length h with
I = I0 sin k(h - |z'|) the sums reduce to the classical expressions (Balanis, Antenna Theory, 3rd ed.,
Sec. 8.5, near fields of the sinusoidal-current dipole used by the induced-EMF method)::

    E_z   = -j eta I0 / 4 pi       [e^{-jkR1}/R1 + e^{-jkR2}/R2 - 2 cos kh e^{-jkr}/r]
    E_rho =  j eta I0 / (4 pi rho) [(z-h) e^{-jkR1}/R1 + (z+h) e^{-jkR2}/R2 - 2 z cos kh e^{-jkr}/r]
    H_phi =  j I0 / (4 pi rho)     [e^{-jkR1} + e^{-jkR2} - 2 cos kh e^{-jkr}]

The reduced (thin-wire) kernel puts the source current on the wire axis and the observation point
on the wire surface: ``rho`` is replaced by ``sqrt(rho^2 + a^2)`` (a = wire radius) in every
distance. The radial field then points along the true radial vector with magnitude scaled by
rho / sqrt(rho^2 + a^2), so the functions below return E_rho as a coefficient of the radial
*vector* (``E_rho_vec = er * rho_vec``) and H as a coefficient of ``s x rho_vec``; no division by the
true rho appears in the matrix fill.

References
----------
J. H. Richmond, "Radiation and scattering by thin-wire structures in the complex frequency domain,"
NASA CR-2396, 1974 (piecewise-sinusoidal reaction method, fields of the sinusoidal filament).
R. F. Harrington, Field Computation by Moment Methods, Macmillan, 1968 (Galerkin method, Ch. 4 wires).
C. A. Balanis, Antenna Theory: Analysis and Design, 3rd ed., Wiley, 2005, Ch. 4 (linear wire antennas)
and Ch. 8 (integral equations, moment method, self and mutual impedances).
P. R. Johnston and D. Elliott, "A sinh transformation for evaluating nearly singular boundary element
integrals," Int. J. Numer. Meth. Eng. 62, 2005 (from memory) -- the endpoint-clustered quadrature.
"""

from __future__ import annotations

from functools import lru_cache

import numpy as np

__all__ = [
    "ETA0_OHM",
    "gauss_legendre_01",
    "sinh_rule",
    "segment_e_terms",
    "segment_h_terms",
    "radiation_integrals",
]

#: Free-space wave impedance [ohm] (mu0 c0, CODATA 2018).
ETA0_OHM = 376.730313668


@lru_cache(maxsize=32)
def gauss_legendre_01(n: int) -> tuple[np.ndarray, np.ndarray]:
    """Gauss-Legendre nodes and weights on [0, 1].

    Parameters
    ----------
    n : int
        Number of nodes.

    Returns
    -------
    nodes, weights : ndarray (n,)
        Nodes in (0, 1) and weights summing to 1.
    """
    x, w = _leggauss(n)
    nodes, weights = 0.5 * (x + 1.0), 0.5 * w
    nodes.setflags(write=False)
    weights.setflags(write=False)
    return nodes, weights


def _leggauss(n: int) -> tuple[np.ndarray, np.ndarray]:
    """``numpy.polynomial.legendre.leggauss(n)`` (nodes and weights on [-1, 1]), bit for bit: from the stored
    table (``legendre_table``, numpy's own output) where it holds n, else from numpy."""
    from rfsafe.antenna.wire.legendre_table import HALF_RULES

    half = HALF_RULES.get(n)
    if half is None:
        return np.polynomial.legendre.leggauss(n)
    xh, wh = np.array(half[0]), np.array(half[1])
    m = n // 2   # the nodes are antisymmetric and the weights symmetric, exactly (as numpy makes them)
    return np.concatenate([xh, -xh[:m][::-1]]), np.concatenate([wh, wh[:m][::-1]])


def sinh_rule(length_m, scale_m, n: int) -> tuple[np.ndarray, np.ndarray]:
    """Quadrature on [0, L] clustered toward 0 for integrands like 1/sqrt(s^2 + b^2).

    The substitution s = b sinh(u), u in [0, asinh(L/b)] makes ``ds / sqrt(s^2 + b^2) = du``, so a
    near-singular peak of width b at s = 0 becomes smooth and Gauss-Legendre on u converges fast.

    Parameters
    ----------
    length_m : array_like
        Interval lengths L [m].
    scale_m : array_like
        Near-singularity scale b [m] (the wire radius for touching segments).
    n : int
        Gauss-Legendre nodes in u.

    Returns
    -------
    s, w : ndarray (..., n)
        Abscissae [m] and weights [m].

    References
    ----------
    Johnston and Elliott (2005), the sinh transformation (from memory).
    """
    length_m = np.asarray(length_m, dtype=float)[..., None]
    b = np.asarray(scale_m, dtype=float)[..., None]
    x, w = gauss_legendre_01(n)
    mu = np.arcsinh(length_m / b)
    u = mu * x
    return b * np.sinh(u), b * np.cosh(u) * mu * w


def _ends(z, rho2, d, k):
    r1 = np.sqrt(rho2 + z * z)
    dz2 = d - z
    r2 = np.sqrt(rho2 + dz2 * dz2)
    e1 = np.exp(-1j * k * r1)
    e2 = np.exp(-1j * k * r2)
    return r1, r2, e1, e2, -z, dz2


def segment_e_terms(z, rho2, d, k):
    """Electric field of the two PWS half functions of a segment, in local components.

    Parameters
    ----------
    z : ndarray
        Axial coordinate of the observation point from P1 along the segment [m].
    rho2 : ndarray
        Squared radial distance [m^2]; for the reduced kernel rho^2 + a^2.
    d : ndarray
        Segment length [m] (broadcasts with z).
    k : float
        Wavenumber [rad/m].

    Returns
    -------
    ez1, ez2 : ndarray complex
        Axial field [V/m per A of end current] of shape 1 and shape 2.
    er1, er2 : ndarray complex
        Radial field as coefficient of the radial vector [V/m^2 per A]:
        E_rho_vec = er * (r - P1 - z s).

    Notes
    -----
    With c = cos kd, s = sin kd and A = j eta / (4 pi s)::

        ez1 = A (c E1/R1 - E2/R2)            ez2 = A (c E2/R2 - E1/R1)
        er1 = A/rho2 (c E1 D1/R1 - E2 D2/R2 - j s E1)
        er2 = A/rho2 (c E2 D2/R2 - E1 D1/R1 + j s E2)

    References
    ----------
    Richmond, NASA CR-2396 (1974), fields of a sinusoidal filament; Balanis, Antenna Theory, 3rd ed.,
    Sec. 8.5 (the dipole special case). Derivation in the module docstring.
    """
    r1, r2, e1, e2, d1, d2 = _ends(z, rho2, d, k)
    kd = k * d
    c, s = np.cos(kd), np.sin(kd)
    a = 1j * ETA0_OHM / (4.0 * np.pi * s)
    g1, g2 = e1 / r1, e2 / r2
    ez1 = a * (c * g1 - g2)
    ez2 = a * (c * g2 - g1)
    ar = a / rho2
    er1 = ar * (c * g1 * d1 - g2 * d2 - 1j * s * e1)
    er2 = ar * (c * g2 * d2 - g1 * d1 + 1j * s * e2)
    return ez1, ez2, er1, er2


def segment_h_terms(z, rho2, d, k):
    """Magnetic field of the two PWS half functions of a segment.

    Parameters
    ----------
    z, rho2, d, k
        As in :func:`segment_e_terms` (rho2 is the true squared distance from the axis here).

    Returns
    -------
    h1, h2 : ndarray complex
        Coefficients of the vector s x rho_vec [A/m^2 per A]: H = h * (s x rho_vec).

    Notes
    -----
    With B = 1 / (4 pi s rho^2)::

        h1 = B (-s E1 D1/R1 + j E2 - j c E1)
        h2 = B ( s E2 D2/R2 - j c E2 + j E1)

    References
    ----------
    Richmond, NASA CR-2396 (1974); Balanis, Antenna Theory, 3rd ed., Sec. 8.5 (H_phi of the
    sinusoidal dipole). The static limit k -> 0 is the Biot-Savart field of a straight segment.
    """
    r1, r2, e1, e2, d1, d2 = _ends(z, rho2, d, k)
    kd = k * d
    c, s = np.cos(kd), np.sin(kd)
    b = 1.0 / (4.0 * np.pi * s * rho2)
    h1 = b * (-s * e1 * d1 / r1 + 1j * e2 - 1j * c * e1)
    h2 = b * (s * e2 * d2 / r2 - 1j * c * e2 + 1j * e1)
    return h1, h2


def radiation_integrals(alpha, d, k):
    """Radiation integrals of the two half functions: int_0^d I(z') e^{j alpha z'} dz'.

    Parameters
    ----------
    alpha : ndarray
        k (r_hat . s) for each direction and segment [rad/m].
    d : ndarray
        Segment length [m].
    k : float
        Wavenumber [rad/m].

    Returns
    -------
    j1, j2 : ndarray complex
        Integrals [m] for shape 1 and shape 2 (finite at alpha = +-k, written with sinc).

    Notes
    -----
    int_0^d e^{j a z} sin kz dz = (F(a + k) - F(a - k)) / 2j with
    F(x) = int_0^d e^{jxz} dz = d e^{jxd/2} sinc(x d / 2), and shape 1 follows from z -> d - z.
    """
    s = np.sin(k * d)
    # F at the four arguments, stacked (one pass of the same elementwise operations, not four)
    alpha_b, d_b = np.broadcast_arrays(alpha, d)
    x = np.stack([alpha_b + k, alpha_b - k, -alpha_b + k, -alpha_b - k])
    f = d_b * np.exp(0.5j * x * d_b) * np.sinc(x * d_b / (2.0 * np.pi))
    j2 = (f[0] - f[1]) / (2j * s)
    j1 = np.exp(1j * alpha * d) * (f[2] - f[3]) / (2j * s)
    return j1, j2
