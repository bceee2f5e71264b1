"""Far-field exposure physics against OET Bulletin 65 and facts of the trade."""

import math

import numpy as np
import pytest
from hypothesis import given, strategies as st

from rfsafe import exposure as ex
from rfsafe.limits import limits_at


def _fcc(freq_mhz, env="uncontrolled"):
    (lim,) = limits_at("fcc", freq_mhz * 1e6, env)
    return lim


def test_plane_wave_relation():
    # common practice (OET Bulletin 65, section 2): S = E^2/377 = 377 H^2
    e, h = ex.plane_wave_fields(10.0)
    assert e ** 2 / 377.0 == pytest.approx(10.0)
    assert 377.0 * h ** 2 == pytest.approx(10.0)


def test_far_field_formula_with_oet65_ground_factor():
    # OET Bulletin 65 (1997), section 2: S = 2.56 EIRP / (4 pi R^2) = 0.64 EIRP / (pi R^2)
    eirp, r = 1000.0, 20.0
    s = ex.far_field_power_density_w_m2(eirp, r, ex.GROUND_FACTORS["typical"])
    assert s == pytest.approx(0.64 * eirp / (math.pi * r ** 2), rel=1e-12)
    # full reflection doubles the field: F = 4 (common practice)
    assert ex.far_field_power_density_w_m2(eirp, r, 4.0) == pytest.approx(eirp / (math.pi * r ** 2))


def test_compliance_distance_closed_form_fcc_vhf():
    # OET Bulletin 65, section 2, prediction equation solved for R with the 2.56 factor:
    # R = sqrt(0.64 EIRP / (pi S)); 47 CFR 1.1310 Table 1 (B), 30-300 MHz: S = 0.2 mW/cm^2 = 2 W/m^2.
    # A high-gain VHF array: 1 kW into 13 dBi (invented check values, closed form only).
    eirp = 1000.0 * 10 ** 1.3
    r = ex.compliance_distance_m(eirp, 2.56, _fcc(146.0))
    assert r == pytest.approx(math.sqrt(0.64 * eirp / (math.pi * 2.0)), rel=1e-9)


def test_compliance_distance_hf_follows_180_over_f2():
    # 47 CFR 1.1310 Table 1 (B), 1.34-30 MHz: S = 180/f^2 mW/cm^2 (f in MHz)
    f = 14.2
    s_lim = 180 / f ** 2 * 10.0  # W/m^2
    eirp = 250.0
    r = ex.compliance_distance_m(eirp, 4.0, _fcc(f))
    assert r == pytest.approx(math.sqrt(4.0 * eirp / (4 * math.pi * s_lim)), rel=1e-3)  # H/E rounding in table


@given(p=st.floats(0.1, 1e4), k=st.floats(1.0, 100.0), f=st.sampled_from([1.9, 7.1, 14.2, 50.1, 146.0, 435.0, 1296.0]))
def test_more_power_never_shrinks_distance(p, k, f):
    lim = _fcc(f)
    assert ex.compliance_distance_m(p * k, 2.56, lim) >= ex.compliance_distance_m(p, 2.56, lim)


@given(p=st.floats(0.1, 1e4), f=st.sampled_from([1.9, 7.1, 14.2, 50.1, 146.0, 435.0, 1296.0, 5800.0]))
def test_ratio_is_one_at_the_compliance_distance(p, f):
    lim = _fcc(f)
    r = ex.compliance_distance_m(p, 4.0, lim)
    ratio = ex.ratio_at(lim, ex.far_field_power_density_w_m2(p, r, 4.0))
    assert float(ratio) == pytest.approx(1.0, rel=1e-9)


@given(r=st.floats(0.5, 500.0), k=st.floats(1.1, 20.0))
def test_ratio_scales_as_inverse_square(r, k):
    lim = _fcc(14.2)
    a = ex.ratio_at(lim, ex.far_field_power_density_w_m2(100.0, r, 1.0))
    b = ex.ratio_at(lim, ex.far_field_power_density_w_m2(100.0, r * k, 1.0))
    assert float(a / b) == pytest.approx(k ** 2, rel=1e-9)


def test_near_field_boundary():
    # OET Bulletin 65, section 2: lambda/2pi is about 47.7/f(MHz) metres
    assert ex.near_field_distance_m(14.2e6) == pytest.approx(47.7 / 14.2, rel=1e-3)
    # Balanis, Antenna Theory, eq. (2-1): far field beyond 2 D^2 / lambda
    assert ex.aperture_far_field_distance_m(1.2, 10e9) == pytest.approx(2 * 1.2 ** 2 / (299792458 / 10e9))


def test_margin_db():
    assert ex.margin_db(0.5) == pytest.approx(10 * math.log10(2))
    assert ex.margin_db(2.0) < 0
    assert np.all(ex.margin_db(np.array([1.0])) == 0)
