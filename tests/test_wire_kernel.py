"""Closed-form fields of a sinusoidal filament segment (rfsafe.antenna.wire.kernel)."""

import math

import numpy as np
import pytest

from rfsafe.antenna.wire.kernel import (ETA0_OHM, gauss_legendre_01, radiation_integrals, segment_e_terms,
                                        segment_h_terms, sinh_rule)

K = 2 * math.pi  # lambda = 1 m
C0 = 299_792_458.0
OMEGA = K * C0
EPS0 = 1 / (ETA0_OHM * C0)
MU0 = ETA0_OHM / C0
D = 0.07


def _shapes(zp):
    s = math.sin(K * D)
    return {1: (np.sin(K * (D - zp)) / s, -K * np.cos(K * (D - zp)) / s),
            2: (np.sin(K * zp) / s, K * np.cos(K * zp) / s)}


def _brute_force(z, rho):
    """E = -j w A - grad(phi) and H = curl(A)/mu by 400-point quadrature of the potentials
    (Balanis, Antenna Theory, 3rd ed., Sec. 3.6 / 4.2: retarded potentials, e^{-jkR}/(4 pi R))."""
    x, w = np.polynomial.legendre.leggauss(400)
    zp, w = 0.5 * D * (x + 1), 0.5 * D * w
    r = np.sqrt(rho ** 2 + (z - zp) ** 2)
    e = np.exp(-1j * K * r)
    g = e / r
    dg_rho = -rho * (1 + 1j * K * r) * e / r ** 3
    dg_z = -(1 + 1j * K * r) * e * (z - zp) / r ** 3
    out = {}
    for shape, (cur, dcur) in _shapes(zp).items():
        line_charge = -dcur / (1j * OMEGA)  # continuity equation
        ez = -1j * OMEGA * MU0 / (4 * math.pi) * np.sum(w * cur * g) - np.sum(w * line_charge * dg_z) / (4 * math.pi * EPS0)
        er = -np.sum(w * line_charge * dg_rho) / (4 * math.pi * EPS0)
        h = -np.sum(w * cur * dg_rho) / (4 * math.pi)
        out[shape] = (ez, er, h)
    return out


@pytest.mark.parametrize("z,rho", [(0.03, 0.05), (-0.1, 0.02), (0.2, 0.3), (0.035, 0.004), (0.0, 0.001)])
def test_closed_forms_equal_the_integrated_retarded_potentials(z, rho):
    # The closed forms (Richmond, NASA CR-2396, 1974) must equal direct integration of the potentials
    # of the same current; 1e-10 relative is the 400-point quadrature level.
    ref = _brute_force(z, rho)
    ez1, ez2, er1, er2 = segment_e_terms(np.array(z), np.array(rho ** 2), D, K)
    h1, h2 = segment_h_terms(np.array(z), np.array(rho ** 2), D, K)
    for shape, (ez, er, h) in ((1, (ez1, er1 * rho, h1 * rho)), (2, (ez2, er2 * rho, h2 * rho))):
        assert ez == pytest.approx(ref[shape][0], rel=1e-10)
        assert er == pytest.approx(ref[shape][1], rel=1e-10)
        assert h == pytest.approx(ref[shape][2], rel=1e-10)


def test_static_limit_of_h_is_biot_savart():
    # Biot-Savart field of a straight segment with constant current I (textbook magnetostatics,
    # common practice): H = I/(4 pi rho) [(z - z1)/R1 - (z - z2)/R2]. A constant current on the
    # segment is shape 1 + shape 2 as k -> 0; 1e-6 relative covers the O((kd)^2) difference.
    k, d, z, rho = 1e-4, 0.5, 0.2, 0.3
    h1, h2 = segment_h_terms(np.array(z), np.array(rho ** 2), d, k)
    h = (h1 + h2) * rho
    ref = 1 / (4 * math.pi * rho) * (z / math.hypot(rho, z) - (z - d) / math.hypot(rho, z - d))
    assert h.real == pytest.approx(ref, rel=1e-6)


@pytest.mark.parametrize("cos_a", [0.3, 1.0, -1.0, 0.9999999, 0.0])
def test_radiation_integrals_are_finite_at_end_fire_and_match_quadrature(cos_a):
    x, w = gauss_legendre_01(40)
    zp, w = D * x, D * w
    alpha = K * cos_a
    j1, j2 = radiation_integrals(np.array(alpha), D, K)
    sh = _shapes(zp)
    assert j1 == pytest.approx(np.sum(w * sh[1][0] * np.exp(1j * alpha * zp)), rel=1e-12)
    assert j2 == pytest.approx(np.sum(w * sh[2][0] * np.exp(1j * alpha * zp)), rel=1e-12)


def test_sinh_rule_integrates_the_near_singular_kernel_exactly():
    # int_0^L ds / sqrt(s^2 + b^2) = asinh(L/b): the rule is built so that this is exact.
    s, w = sinh_rule(np.array([0.05]), np.array([1e-5]), 12)
    assert np.sum(w / np.sqrt(s ** 2 + 1e-10)) == pytest.approx(math.asinh(0.05 / 1e-5), rel=1e-12)
    # The radial-field term of a bent junction, s / (s^2 + b^2): 0.5 ln(1 + L^2/b^2); 1e-8 relative.
    assert np.sum(w * s / (s ** 2 + 1e-10)) == pytest.approx(0.5 * math.log(1 + 0.05 ** 2 / 1e-10), rel=1e-8)
