"""Unit conversions (facts of the trade)."""

import pytest

from rfsafe import units


def test_power_density_units():
    # common practice: 1 mW/cm^2 = 10 W/m^2
    assert units.mw_cm2_to_w_m2(1.0) == 10.0
    assert units.w_m2_to_mw_cm2(10.0) == 1.0


def test_db_kinds_differ():
    # power dB is 10 log10, field dB is 20 log10
    assert units.power_db_to_ratio(3.0) == pytest.approx(10 ** 0.3)
    assert units.field_db_to_ratio(6.0) == pytest.approx(10 ** 0.3)
    assert units.power_ratio_to_db(2.0) == pytest.approx(10 * 0.30102999566398)
    assert units.field_ratio_to_db(2.0) == pytest.approx(20 * 0.30102999566398)


def test_dipole_gain():
    # common practice: half-wave dipole 1.64 = 2.15 dBi; 0 dBd = 2.15 dBi
    assert units.power_db_to_ratio(units.DIPOLE_GAIN_DBI) == pytest.approx(1.64, abs=0.001)
    assert units.dbd_to_dbi(0.0) == 2.15


def test_feet_and_wavelength():
    assert units.m_to_ft(0.3048) == pytest.approx(1.0)   # international foot, exact
    # lambda at 300 MHz is very nearly 1 m (c = 299 792 458 m/s exactly)
    assert units.wavelength_m(299_792_458.0) == 1.0
