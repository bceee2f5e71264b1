"""Transmission-line physics: reflection, SWR, lossy-line impedance transformation, loss and the
standing-wave voltage and current along a line.

Conventions
-----------
* Gamma is the **voltage** reflection coefficient, Gamma = (Z_L - Z0) / (Z_L + Z0).
* Phasors use the e^{+j omega t} time convention; the propagation constant is gamma = alpha + j beta
  with alpha >= 0 [Np/m] and beta > 0 [rad/m].
* Position along the line is the distance ``d`` [m] from the load (antenna end) toward the
  transmitter: V(d) = V+ (e^{gamma d} + Gamma_L e^{-gamma d}), I(d) = V+/Z0 (e^{gamma d} - Gamma_L e^{-gamma d}).
* Voltage and current amplitudes are phasor magnitudes, i.e. **peak** values of the RF sine wave;
  rms = peak / sqrt(2).
* Impedances and reflection coefficients are complex; everything is SI.
"""

from __future__ import annotations

import math

import numpy as np

from rfsafe.errors import bad_value
from rfsafe.units import C0_M_S, ETA0_OHM

__all__ = [
    "swr_of_load",
    "NP_PER_DB",
    "reflection_coefficient", "reflection_from_swr", "reflection_from_powers", "swr_from_reflection",
    "return_loss_db", "mismatch_loss_db", "propagation_constant", "low_loss_complex_z0",
    "input_impedance", "reflection_at_distance", "mismatch_total_loss_db", "exact_total_loss_db",
    "line_voltage_current", "lossless_peak_voltage_v_peak", "coax_z0_ohm", "two_wire_z0_ohm",
    "two_wire_z0_approx_ohm",
]

#: Nepers per decibel of a field (amplitude) quantity: ln(10)/20.
NP_PER_DB = math.log(10.0) / 20.0


def reflection_coefficient(load_ohm, z0_ohm):
    """Voltage reflection coefficient of a load (complex, dimensionless).

    .. math:: \\Gamma = (Z_L - Z_0) / (Z_L + Z_0)

    Parameters
    ----------
    load_ohm : complex or array
        Load impedance [ohm].
    z0_ohm : complex or array
        Characteristic (reference) impedance [ohm].

    References
    ----------
    Pozar, *Microwave Engineering*, 4th ed., eq. (2.35).
    """
    zl = np.asarray(load_ohm, dtype=complex)
    z0 = np.asarray(z0_ohm, dtype=complex)
    out = (zl - z0) / (zl + z0)
    return complex(out) if out.ndim == 0 else out


def swr_of_load(load_ohm: complex, z0_ohm: float) -> float:
    """SWR of a passive load on a line of real characteristic impedance, accurate near |Gamma| = 1.

    .. math:: 1 - |\\Gamma|^2 = \\frac{4 R_L Z_0}{|Z_L + Z_0|^2},\\quad
              SWR = \\frac{(1 + |\\Gamma|)^2}{1 - |\\Gamma|^2}

    (the same SWR as (1 + |Gamma|)/(1 - |Gamma|), without the cancellation of 1 - |Gamma| when the
    load is nearly reactive); ``inf`` for a purely reactive load.

    References
    ----------
    Pozar, *Microwave Engineering*, 4th ed., eq. (2.35) and (2.41).
    """
    zl = complex(load_ohm)
    d = abs(zl + z0_ohm)  # hypot: no overflow for any finite load
    one_minus_g2 = 4.0 * z0_ohm * (zl.real / d) / d if d > 0 else 0.0
    if not one_minus_g2 > 0:
        return math.inf
    g = abs(zl - z0_ohm) / d
    return (1.0 + g) ** 2 / one_minus_g2


def reflection_from_swr(swr):
    """Reflection-coefficient magnitude from SWR: \\|Gamma\\| = (S - 1)/(S + 1); S = inf gives 1.

    References
    ----------
    Pozar, *Microwave Engineering*, 4th ed., eq. (2.41) solved for \\|Gamma\\|.
    """
    s = np.asarray(swr, dtype=float)
    if np.any(~(s >= 1.0)):
        raise bad_value("swr", swr if np.ndim(swr) == 0 else s.tolist(), "must be >= 1")
    with np.errstate(invalid="ignore"):
        g = np.where(np.isinf(s), 1.0, (s - 1.0) / (s + 1.0))
    return float(g) if g.ndim == 0 else g


def reflection_from_powers(forward_w, reflected_w):
    """Reflection-coefficient magnitude from forward and reflected power: sqrt(P_r / P_f).

    References
    ----------
    Pozar, *Microwave Engineering*, 4th ed., eq. (2.38) (reflected power is \\|Gamma\\|^2 times incident).
    """
    pf = np.asarray(forward_w, dtype=float)
    pr = np.asarray(reflected_w, dtype=float)
    if np.any(~(pf > 0)):
        raise bad_value("forward_w", forward_w, "must be > 0 W")
    if np.any(~(pr >= 0)) or np.any(pr > pf):
        raise bad_value("reflected_w", reflected_w, "must be >= 0 W and not above the forward power")
    g = np.sqrt(pr / pf)
    return float(g) if g.ndim == 0 else g


def swr_from_reflection(gamma):
    """SWR from a reflection coefficient (complex or magnitude): (1 + \\|G\\|)/(1 - \\|G\\|); inf at \\|G\\| = 1.

    References
    ----------
    Pozar, *Microwave Engineering*, 4th ed., eq. (2.41).
    """
    g = np.abs(np.asarray(gamma))
    with np.errstate(divide="ignore"):
        s = np.where(g >= 1.0, np.inf, (1.0 + g) / np.where(g >= 1.0, 1.0, 1.0 - g))
    return float(s) if s.ndim == 0 else s


def return_loss_db(gamma):
    """Return loss [dB] = -20 log10 \\|Gamma\\| (field ratio, 20 log). inf for a perfect match.

    References
    ----------
    Pozar, *Microwave Engineering*, 4th ed., eq. (2.39).
    """
    g = np.abs(np.asarray(gamma))
    with np.errstate(divide="ignore"):
        rl = -20.0 * np.log10(g)
    return float(rl) if rl.ndim == 0 else rl


def mismatch_loss_db(gamma):
    """Mismatch loss [dB] = -10 log10(1 - \\|Gamma\\|^2) (power ratio, 10 log).

    References
    ----------
    Pozar, *Microwave Engineering*, 4th ed., eq. (2.38): delivered / incident = 1 - \\|Gamma\\|^2.
    """
    g = np.abs(np.asarray(gamma))
    with np.errstate(divide="ignore"):
        ml = -10.0 * np.log10(1.0 - g**2)
    return float(ml) if ml.ndim == 0 else ml


def propagation_constant(loss_db_per_m, freq_hz, velocity_factor):
    """Propagation constant gamma = alpha + j beta [1/m] from matched loss and velocity factor.

    alpha = loss_dB/m * ln(10)/20 [Np/m]; beta = 2 pi f / (vf c0) [rad/m].

    Parameters
    ----------
    loss_db_per_m : float or array
        Matched loss [dB/m].
    freq_hz : float or array
        Frequency [Hz].
    velocity_factor : float
        Phase velocity / c0.

    References
    ----------
    Pozar, *Microwave Engineering*, 4th ed., eq. (2.5) (gamma = alpha + j beta) and eq. (2.31)
    (v_p = omega / beta).
    """
    alpha = np.asarray(loss_db_per_m, dtype=float) * NP_PER_DB
    beta = 2.0 * np.pi * np.asarray(freq_hz, dtype=float) / (velocity_factor * C0_M_S)
    out = alpha + 1j * beta
    return complex(out) if out.ndim == 0 else out


def low_loss_complex_z0(r0_ohm, gamma_per_m):
    """Complex characteristic impedance of a low-loss line with conductor loss dominant.

    .. math:: Z_0 \\approx R_0 (1 - j \\alpha / \\beta)

    (the small imaginary part that a series resistance R adds when G is negligible:
    Z0 = sqrt((R + j w L)/(j w C)) ~ R0 (1 - j R/(2 w L)) and alpha = R/(2 R0)).

    References
    ----------
    Pozar, *Microwave Engineering*, 4th ed., sec. 2.7, eq. (2.77)-(2.79) (low-loss line, expansion of
    Z0 and gamma in R/(omega L)).
    """
    g = np.asarray(gamma_per_m, dtype=complex)
    out = r0_ohm * (1.0 - 1j * g.real / g.imag)
    return complex(out) if out.ndim == 0 else out


def input_impedance(load_ohm, z0_ohm, gamma_per_m, length_m):
    """Input impedance [ohm] of a lossy line of length ``length_m`` terminated in ``load_ohm``.

    .. math:: Z_{in} = Z_0 \\frac{Z_L + Z_0 \\tanh \\gamma l}{Z_0 + Z_L \\tanh \\gamma l}

    References
    ----------
    Pozar, *Microwave Engineering*, 4th ed., eq. (2.91).
    """
    t = np.tanh(np.asarray(gamma_per_m, dtype=complex) * np.asarray(length_m, dtype=float))
    zl = np.asarray(load_ohm, dtype=complex)
    out = z0_ohm * (zl + z0_ohm * t) / (z0_ohm + zl * t)
    return complex(out) if out.ndim == 0 else out


def reflection_at_distance(gamma_load, gamma_per_m, dist_m):
    """Reflection coefficient at distance ``dist_m`` [m] from the load: Gamma_L e^{-2 gamma d}.

    References
    ----------
    Pozar, *Microwave Engineering*, 4th ed., eq. (2.42) with j beta replaced by gamma (sec. 2.7).
    """
    out = np.asarray(gamma_load, dtype=complex) * np.exp(-2.0 * np.asarray(gamma_per_m) * np.asarray(dist_m))
    return complex(out) if out.ndim == 0 else out


def mismatch_total_loss_db(matched_loss_db, gamma_load_mag):
    """Total loss [dB] of a mismatched lossy line with a real characteristic impedance (closed form).

    .. math:: L = 10 \\log_{10} \\frac{a^2 - |\\Gamma_L|^2}{a (1 - |\\Gamma_L|^2)},\\quad a = 10^{ML/10}

    The net input power is P_f,L (a - \\|G\\|^2/a) and the load receives P_f,L (1 - \\|G\\|^2).

    Parameters
    ----------
    matched_loss_db : float or array
        Matched loss of the whole line [dB], >= 0.
    gamma_load_mag : float or array
        \\|Gamma\\| at the load end, 0 <= \\|G\\| < 1.

    References
    ----------
    The ARRL Antenna Book / ARRL Handbook, chapter on transmission lines, "total loss of a mismatched
    line" (the form above); derived in Pozar, *Microwave Engineering*, 4th ed., sec. 2.7, eq. (2.93)
    (power lost on a terminated lossy line).
    """
    ml = np.asarray(matched_loss_db, dtype=float)
    g = np.asarray(gamma_load_mag, dtype=float)
    if np.any(~(ml >= 0)):
        raise bad_value("matched_loss_db", matched_loss_db, "must be >= 0 dB")
    if np.any(~((g >= 0) & (g < 1))):
        raise bad_value("gamma_load_mag", gamma_load_mag, "must be >= 0 and < 1")
    # the same expression as ML + 10 log10(1 - |G|^2 / a^2) - 10 log10(1 - |G|^2): no overflow of a^2
    # on a very lossy line
    out = ml + 10.0 * np.log10(1.0 - g * g * 10.0 ** (-ml / 5.0)) - 10.0 * np.log10(1.0 - g * g)
    return float(out) if out.ndim == 0 else out


def _abcd_input(load_ohm, z0_ohm, gamma_per_m, length_m):
    """Voltage and current at the input for unit load current (ABCD of a line)."""
    gl = np.asarray(gamma_per_m, dtype=complex) * np.asarray(length_m, dtype=float)
    zl = np.asarray(load_ohm, dtype=complex)
    v_in = zl * np.cosh(gl) + z0_ohm * np.sinh(gl)
    i_in = zl / z0_ohm * np.sinh(gl) + np.cosh(gl)
    return v_in, i_in


def exact_total_loss_db(load_ohm, z0_ohm, gamma_per_m, length_m):
    """Total loss [dB] = 10 log10(P_in / P_load), exact for any (complex) Z0 and load.

    Uses V and I at both ends from the ABCD matrix of the line (cosh, Z0 sinh; sinh/Z0, cosh) and
    P = Re(V I*)/2; valid where the forward/reflected power split of the closed form is not
    (complex Z0).

    References
    ----------
    Pozar, *Microwave Engineering*, 4th ed., Table 4.1 (ABCD of a transmission line, with j beta l
    replaced by gamma l) and eq. (2.93).
    """
    zl = np.asarray(load_ohm, dtype=complex)
    if np.any(~(zl.real > 0)):
        raise bad_value("load_ohm", load_ohm, "must have a resistance > 0 ohm")
    v_in, i_in = _abcd_input(zl, z0_ohm, gamma_per_m, length_m)
    p_in = 0.5 * np.real(v_in * np.conj(i_in))
    p_l = 0.5 * zl.real
    out = 10.0 * np.log10(p_in / p_l)
    return float(out) if out.ndim == 0 else out


def line_voltage_current(load_ohm, z0_ohm, gamma_per_m, length_m, dist_m, input_power_w):
    """Voltage and current phasors (peak amplitudes) along a line for a given net input power.

    Parameters
    ----------
    load_ohm : complex
        Load impedance at d = 0 [ohm].
    z0_ohm : complex
        Characteristic impedance [ohm].
    gamma_per_m : complex
        Propagation constant [1/m].
    length_m : float
        Line length [m]; the input is at d = length_m.
    dist_m : array
        Distances from the load [m].
    input_power_w : float
        Net power into the line at its input [W] (time-average of the RF sine at that envelope).

    Returns
    -------
    v, i : complex arrays
        V(d) [V peak] and I(d) [A peak] phasors.

    References
    ----------
    Pozar, *Microwave Engineering*, 4th ed., eq. (2.34a,b) with j beta replaced by gamma (sec. 2.7).
    """
    zl = complex(load_ohm)
    v_in, i_in = _abcd_input(zl, z0_ohm, gamma_per_m, length_m)
    p_in_unit = 0.5 * float(np.real(v_in * np.conj(i_in)))
    scale = math.sqrt(input_power_w / p_in_unit)  # I_L amplitude giving the requested input power
    v_plus = 0.5 * (zl + z0_ohm) * scale
    v_minus = 0.5 * (zl - z0_ohm) * scale
    d = np.asarray(dist_m, dtype=float)
    ep = np.exp(gamma_per_m * d)
    em = np.exp(-gamma_per_m * d)
    return v_plus * ep + v_minus * em, (v_plus * ep - v_minus * em) / z0_ohm


def lossless_peak_voltage_v_peak(forward_w, z0_ohm, gamma_mag):
    """Largest voltage [V peak] on a lossless line: sqrt(2 P_f Z0) (1 + \\|Gamma\\|).

    References
    ----------
    Pozar, *Microwave Engineering*, 4th ed., eq. (2.40) (V_max = \\|V0+\\| (1 + \\|Gamma\\|)) with
    P_f = \\|V0+\\|^2 / (2 Z0), eq. (2.36).
    """
    return np.sqrt(2.0 * np.asarray(forward_w) * z0_ohm) * (1.0 + np.asarray(gamma_mag))


def coax_z0_ohm(outer_diameter_m, inner_diameter_m, relative_permittivity=1.0):
    """Characteristic impedance of a coaxial line [ohm]: eta0 / (2 pi sqrt(er)) ln(D/d).

    Parameters
    ----------
    outer_diameter_m : float
        Inner diameter of the outer conductor, D [m].
    inner_diameter_m : float
        Diameter of the centre conductor, d [m].
    relative_permittivity : float
        Relative permittivity of the dielectric.

    References
    ----------
    Pozar, *Microwave Engineering*, 4th ed., Example 2.1 and Table 2.1 (coaxial line L and C).
    """
    if not (inner_diameter_m > 0 and outer_diameter_m > inner_diameter_m):
        raise bad_value("outer_diameter_m", outer_diameter_m, "must exceed the inner diameter (> 0 m)")
    return ETA0_OHM / (2.0 * math.pi * math.sqrt(relative_permittivity)) * math.log(outer_diameter_m / inner_diameter_m)


def two_wire_z0_ohm(spacing_m, wire_diameter_m, relative_permittivity=1.0):
    """Characteristic impedance of a parallel two-wire line [ohm], exact: eta0/(pi sqrt(er)) acosh(s/d).

    Parameters
    ----------
    spacing_m : float
        Centre-to-centre spacing s [m].
    wire_diameter_m : float
        Wire diameter d [m]; s > d.

    References
    ----------
    Pozar, *Microwave Engineering*, 4th ed., Table 2.1 (two-wire line: L = mu/pi acosh(D/d),
    C = pi eps / acosh(D/d)).
    """
    if not (wire_diameter_m > 0 and spacing_m > wire_diameter_m):
        raise bad_value("spacing_m", spacing_m, "must exceed the wire diameter (> 0 m)")
    return ETA0_OHM / (math.pi * math.sqrt(relative_permittivity)) * math.acosh(spacing_m / wire_diameter_m)


def two_wire_z0_approx_ohm(spacing_m, wire_diameter_m, relative_permittivity=1.0):
    """Usual approximation of the two-wire Z0 [ohm], for comparison only: eta0/(pi sqrt(er)) ln(2s/d)
    (~ 276 log10(2s/d) in air), valid for s >> d.

    References
    ----------
    Limit of :func:`two_wire_z0_ohm` for s >> d (acosh x ~ ln 2x); Pozar, *Microwave Engineering*,
    4th ed., Table 2.1.
    """
    if not (wire_diameter_m > 0 and spacing_m > wire_diameter_m):
        raise bad_value("spacing_m", spacing_m, "must exceed the wire diameter (> 0 m)")
    return ETA0_OHM / (math.pi * math.sqrt(relative_permittivity)) * math.log(2.0 * spacing_m / wire_diameter_m)
