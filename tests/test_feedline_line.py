"""Line physics checked against scikit-rf (general-purpose reference library), textbook closed forms
(Pozar, Microwave Engineering, 4th ed.) and facts of the trade (marked common practice)."""

import math

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st

skrf = pytest.importorskip("skrf")
from skrf import tlineFunctions as tf  # noqa: E402
from skrf.media import DefinedGammaZ0  # noqa: E402

from rfsafe.errors import InputError  # noqa: E402
from rfsafe.feedline import cable_class, matched_loss_db  # noqa: E402
from rfsafe.feedline import line as fl  # noqa: E402
from rfsafe.units import ETA0_OHM  # noqa: E402

# cases: (cable, freq_hz, length_m, load_ohm) -- several classes, lengths, frequencies, complex loads
CASES = [
    ("rg-58", 3.6e6, 25.0, 12 - 35j),
    ("rg-8x", 14.2e6, 17.3, 73 + 42.5j),
    ("rg-213", 28.5e6, 40.0, 300 - 150j),
    ("rg-174", 145e6, 3.0, 20 + 5j),
    ("window-450", 7.1e6, 22.0, 60 + 10j),
    ("open-wire-600", 1.9e6, 60.0, 5000 - 2000j),
    ("twinlead-300", 50.1e6, 12.0, 36 + 20j),
]


def _gamma(cable_id, freq_hz, length_m):
    c = cable_class(cable_id)
    ml = matched_loss_db(c, freq_hz, length_m)
    return c, fl.propagation_constant(ml / length_m, freq_hz, c.velocity_factor)


@pytest.mark.parametrize("cable_id,freq_hz,length_m,zl", CASES)
def test_input_impedance_matches_skrf_media(cable_id, freq_hz, length_m, zl):
    """Zin of a lossy line vs scikit-rf DefinedGammaZ0.line cascaded with a load (real Z0)."""
    c, g = _gamma(cable_id, freq_hz, length_m)
    f = skrf.Frequency(freq_hz, freq_hz, 1, unit="Hz")
    media = DefinedGammaZ0(frequency=f, z0=c.z0_ohm, gamma=g)
    ntw = media.line(length_m, unit="m") ** media.load(complex(fl.reflection_coefficient(zl, c.z0_ohm)))
    ours = fl.input_impedance(zl, c.z0_ohm, g, length_m)
    # both are double-precision evaluations of the same closed form; 1e-9 leaves room for the
    # S-parameter round trip in skrf
    assert ours == pytest.approx(complex(ntw.z[0, 0, 0]), rel=1e-9)


@pytest.mark.parametrize("cable_id,freq_hz,length_m,zl", CASES)
def test_gamma_and_swr_both_ends_match_skrf(cable_id, freq_hz, length_m, zl):
    c, g = _gamma(cable_id, freq_hz, length_m)
    gl = fl.reflection_coefficient(zl, c.z0_ohm)
    assert gl == pytest.approx(complex(np.squeeze(tf.load_impedance_2_reflection_coefficient(c.z0_ohm, zl))), rel=1e-12)
    g_in = fl.reflection_at_distance(gl, g, length_m)
    ref_in = complex(np.squeeze(tf.load_impedance_2_reflection_coefficient_at_theta(c.z0_ohm, zl, g * length_m)))
    assert g_in == pytest.approx(ref_in, rel=1e-12, abs=1e-15)
    assert fl.swr_from_reflection(gl) == pytest.approx(float(np.squeeze(tf.zl_2_swr(c.z0_ohm, zl))), rel=1e-12)
    zin = fl.input_impedance(zl, c.z0_ohm, g, length_m)
    assert fl.swr_from_reflection(fl.reflection_coefficient(zin, c.z0_ohm)) == pytest.approx(
        float(np.squeeze(tf.zl_2_swr(c.z0_ohm, zin))), rel=1e-12)
    # the SWR at the transmitter end is lower than at the antenna end on a lossy line (Pozar sec. 2.7)
    assert abs(g_in) < abs(gl)


@pytest.mark.parametrize("cable_id,freq_hz,length_m,zl", CASES)
def test_total_loss_closed_form_matches_skrf(cable_id, freq_hz, length_m, zl):
    """Closed form (real Z0) vs scikit-rf zl_2_total_loss (exact, any Z0) evaluated with the real Z0."""
    c, g = _gamma(cable_id, freq_hz, length_m)
    ml = matched_loss_db(c, freq_hz, length_m)
    ours = fl.mismatch_total_loss_db(ml, abs(fl.reflection_coefficient(zl, c.z0_ohm)))
    ref = 10 * math.log10(float(np.squeeze(tf.zl_2_total_loss(c.z0_ohm, zl, g * length_m))))
    # identical physics for a real Z0; 1e-9 relative covers the different rounding paths
    assert ours == pytest.approx(ref, rel=1e-9)
    assert fl.exact_total_loss_db(zl, c.z0_ohm, g, length_m) == pytest.approx(ref, rel=1e-9)


@pytest.mark.parametrize("cable_id,freq_hz,length_m,zl", CASES)
def test_total_loss_exact_complex_z0_matches_skrf(cable_id, freq_hz, length_m, zl):
    """Exact loss with Z0 = R0 (1 - j alpha/beta) vs scikit-rf zl_2_total_loss with the same complex Z0."""
    c, g = _gamma(cable_id, freq_hz, length_m)
    z0c = fl.low_loss_complex_z0(c.z0_ohm, g)
    ref = 10 * math.log10(float(np.squeeze(tf.zl_2_total_loss(z0c, zl, g * length_m))))
    assert fl.exact_total_loss_db(zl, z0c, g, length_m) == pytest.approx(ref, rel=1e-9)
    zin_ref = complex(np.squeeze(tf.zl_2_zin(z0c, zl, g * length_m)))
    assert fl.input_impedance(zl, z0c, g, length_m) == pytest.approx(zin_ref, rel=1e-10)


@pytest.mark.parametrize("cable_id,freq_hz,length_m,zl", CASES[:4])
def test_voltage_current_along_line_match_skrf_propagation(cable_id, freq_hz, length_m, zl):
    """V(x), I(x) from our standing-wave solution vs scikit-rf voltage_current_propagation from the input."""
    c, g = _gamma(cable_id, freq_hz, length_m)
    x = np.array([0.0, 0.3 * length_m, 0.77 * length_m, length_m])  # from the transmitter
    v, i = fl.line_voltage_current(zl, c.z0_ohm, g, length_m, length_m - x, 100.0)
    v2, i2 = tf.voltage_current_propagation(np.array([v[0]]), np.array([i[0]]), np.array([complex(c.z0_ohm)]),
                                            np.array([g * x]))
    np.testing.assert_allclose(np.squeeze(v2), v, rtol=1e-9)
    np.testing.assert_allclose(np.squeeze(i2), i, rtol=1e-9)
    # net input power is the requested 100 W: P = Re(V I*)/2
    assert 0.5 * (v[0] * np.conj(i[0])).real == pytest.approx(100.0, rel=1e-12)


def test_coax_z0_closed_form():
    """Pozar, Microwave Engineering, 4th ed., Example 2.1 / Table 2.1: Z0 = eta0/(2 pi sqrt(er)) ln(D/d)."""
    # air line with D/d = e: Z0 = eta0 / (2 pi)
    assert fl.coax_z0_ohm(math.e * 1e-3, 1e-3) == pytest.approx(ETA0_OHM / (2 * math.pi), rel=1e-14)
    # polyethylene, er = 2.25, D/d = 3.5 (a 50-ohm-class geometry)
    assert fl.coax_z0_ohm(7e-3, 2e-3, 2.25) == pytest.approx(ETA0_OHM / (2 * math.pi * 1.5) * math.log(3.5), rel=1e-14)


def test_two_wire_exact_and_approximation():
    """Pozar Table 2.1 two-wire line: Z0 = eta0/(pi sqrt(er)) acosh(s/d); ln(2s/d) only for s >> d."""
    s, d = 0.15, 2e-3
    assert fl.two_wire_z0_ohm(s, d) == pytest.approx(ETA0_OHM / math.pi * math.acosh(s / d), rel=1e-14)
    # 600-ohm-class open wire: the log approximation agrees to better than 1e-3 at s/d = 75 ...
    assert fl.two_wire_z0_approx_ohm(s, d) == pytest.approx(fl.two_wire_z0_ohm(s, d), rel=1e-3)
    # ... but not for close spacing (s/d = 1.5), where only the exact form holds
    assert abs(fl.two_wire_z0_approx_ohm(3e-3, 2e-3) / fl.two_wire_z0_ohm(3e-3, 2e-3) - 1) > 0.05


def test_matched_load_no_reflection():
    """Common practice: 50 ohm on 50 ohm line -> SWR 1, no reflected power."""
    g = fl.reflection_coefficient(50, 50)
    assert g == 0
    assert fl.swr_from_reflection(g) == 1.0
    assert fl.mismatch_loss_db(g) == 0.0
    assert math.isinf(fl.return_loss_db(g))


def test_dipole_on_ladder_line_swr():
    """Common practice: a 50-72 ohm dipole on 400-450 ohm ladder line shows an SWR near 6-9."""
    for z0 in (400, 450):
        for r in (50, 72):
            # the bound 9 is reached exactly (450/50) up to rounding in (1+|G|)/(1-|G|)
            assert 5.5 <= fl.swr_from_reflection(fl.reflection_coefficient(r, z0)) <= 9.0 * (1 + 1e-12)
    assert fl.swr_from_reflection(fl.reflection_coefficient(72, 450)) == pytest.approx(450 / 72, rel=1e-12)


def test_gamma_from_powers_and_swr():
    """Common practice: |Gamma| = sqrt(Pr/Pf); Pozar eq. 2.41: SWR = (1+|G|)/(1-|G|)."""
    assert fl.reflection_from_powers(100.0, 11.11) == pytest.approx(math.sqrt(0.1111), rel=1e-14)
    assert fl.reflection_from_swr(3.0) == pytest.approx(0.5, rel=1e-15)
    assert fl.swr_from_reflection(0.5) == pytest.approx(3.0, rel=1e-15)
    assert fl.return_loss_db(0.5) == pytest.approx(-20 * math.log10(0.5), rel=1e-15)
    assert fl.mismatch_loss_db(0.5) == pytest.approx(-10 * math.log10(0.75), rel=1e-15)


def test_lossless_peak_voltage():
    """Pozar eq. 2.40 with P_f = |V+|^2/(2 Z0): V_max = sqrt(2 P Z0)(1 + |G|)."""
    assert fl.lossless_peak_voltage_v_peak(1000.0, 50.0, 0.5) == pytest.approx(math.sqrt(2 * 1000 * 50) * 1.5)


def test_bad_inputs():
    with pytest.raises(InputError, match=r"^swr: 0.5 must be >= 1$"):
        fl.reflection_from_swr(0.5)
    with pytest.raises(InputError, match=r"^gamma_load_mag: 1.0 must be >= 0 and < 1$"):
        fl.mismatch_total_loss_db(1.0, 1.0)
    with pytest.raises(InputError, match="reflected_w"):
        fl.reflection_from_powers(10.0, 20.0)


@settings(max_examples=200, deadline=None)
@given(r=st.floats(1e-3, 1e5), x=st.floats(-1e5, 1e5), z0=st.floats(1.0, 1000.0))
def test_passive_load_gamma_at_most_one(r, x, z0):
    """|Gamma| <= 1 for any passive load on a real Z0 (Pozar sec. 2.3)."""
    assert abs(fl.reflection_coefficient(complex(r, x), z0)) <= 1.0 + 1e-12


@settings(max_examples=200, deadline=None)
@given(ml=st.floats(0.0, 20.0), g1=st.floats(0.0, 0.999), g2=st.floats(0.0, 0.999))
def test_total_loss_grows_with_swr(ml, g1, g2):
    lo, hi = sorted((g1, g2))
    l_lo, l_hi = fl.mismatch_total_loss_db(ml, lo), fl.mismatch_total_loss_db(ml, hi)
    assert l_hi >= l_lo - 1e-12
    assert l_lo >= ml - 1e-12  # never below the matched loss
