"""Unit conversions used at the edges of rfsafe (SI inside).

Power ratios and field (amplitude) ratios are different functions: power dB is
10 log10, field dB is 20 log10.
"""

from __future__ import annotations

import numpy as np

__all__ = [
    "ETA0_OHM", "C0_M_S", "FT_PER_M", "M_PER_FT",
    "mhz_to_hz", "hz_to_mhz", "m_to_ft", "ft_to_m",
    "w_m2_to_mw_cm2", "mw_cm2_to_w_m2",
    "power_db_to_ratio", "power_ratio_to_db", "field_db_to_ratio", "field_ratio_to_db",
    "dbd_to_dbi", "dbi_to_dbd", "DIPOLE_GAIN_DBI", "w_to_dbm", "dbm_to_w",
    "wavelength_m",
]

#: Speed of light in vacuum [m/s] (exact, SI 2019).
C0_M_S = 299_792_458.0
#: Free-space wave impedance [ohm]; exposure standards use 377 ohm, see ``limits``.
ETA0_OHM = 376.730313412
M_PER_FT = 0.3048  # exact, international foot
FT_PER_M = 1.0 / M_PER_FT
#: Half-wave dipole gain over isotropic [dBi]: 10 log10(1.64) (common practice, 2.15 dBi).
DIPOLE_GAIN_DBI = 2.15


def mhz_to_hz(freq_mhz):
    """Frequency [MHz] -> [Hz]."""
    return np.asarray(freq_mhz, dtype=float) * 1e6 if np.ndim(freq_mhz) else float(freq_mhz) * 1e6


def hz_to_mhz(freq_hz):
    """Frequency [Hz] -> [MHz]."""
    return np.asarray(freq_hz, dtype=float) / 1e6 if np.ndim(freq_hz) else float(freq_hz) / 1e6


def m_to_ft(dist_m):
    """Distance [m] -> [ft]."""
    return dist_m * FT_PER_M


def ft_to_m(dist_ft):
    """Distance [ft] -> [m]."""
    return dist_ft * M_PER_FT


def w_m2_to_mw_cm2(s_w_m2):
    """Power density [W/m^2] -> [mW/cm^2] (1 mW/cm^2 = 10 W/m^2)."""
    return s_w_m2 / 10.0


def mw_cm2_to_w_m2(s_mw_cm2):
    """Power density [mW/cm^2] -> [W/m^2] (1 mW/cm^2 = 10 W/m^2)."""
    return s_mw_cm2 * 10.0


def power_db_to_ratio(db):
    """Power ratio from decibels: 10**(dB/10)."""
    return 10.0 ** (np.asarray(db, dtype=float) / 10.0) if np.ndim(db) else 10.0 ** (db / 10.0)


def power_ratio_to_db(ratio):
    """Decibels of a power ratio: 10 log10(ratio)."""
    return 10.0 * np.log10(ratio)


def field_db_to_ratio(db):
    """Field (voltage, current, E, H) ratio from decibels: 10**(dB/20)."""
    return 10.0 ** (np.asarray(db, dtype=float) / 20.0) if np.ndim(db) else 10.0 ** (db / 20.0)


def field_ratio_to_db(ratio):
    """Decibels of a field ratio: 20 log10(ratio)."""
    return 20.0 * np.log10(ratio)


def dbd_to_dbi(gain_dbd):
    """Gain over a half-wave dipole [dBd] -> over isotropic [dBi] (+2.15 dB)."""
    return gain_dbd + DIPOLE_GAIN_DBI


def dbi_to_dbd(gain_dbi):
    """Gain over isotropic [dBi] -> over a half-wave dipole [dBd] (-2.15 dB)."""
    return gain_dbi - DIPOLE_GAIN_DBI


def w_to_dbm(power_w):
    """Power [W] -> [dBm]."""
    return 10.0 * np.log10(np.asarray(power_w, dtype=float) * 1e3)


def dbm_to_w(power_dbm):
    """Power [dBm] -> [W]."""
    return 10.0 ** (np.asarray(power_dbm, dtype=float) / 10.0) / 1e3


def wavelength_m(freq_hz):
    """Free-space wavelength [m] at frequency [Hz]."""
    return C0_M_S / freq_hz
