"""Far-field exposure: power density, plane-wave fields, ratios, compliance distances, near-field flags.

All functions are pure and broadcast over numpy arrays. Exposure limits come
from :mod:`rfsafe.limits`; this module only does the physics.
"""

from __future__ import annotations

import numpy as np

from rfsafe.units import C0_M_S

__all__ = [
    "ETA_STANDARDS_OHM", "GROUND_FACTORS", "far_field_power_density_w_m2", "plane_wave_fields",
    "ratio_at", "compliance_distance_m", "near_field_distance_m", "aperture_far_field_distance_m",
    "margin_db", "ratio_at_horizontal_distance", "horizontal_compliance_distance_m",
]

#: Wave impedance used by exposure standards to relate S, E and H [ohm] (OET 65: S = E^2/3770 in mW/cm^2).
ETA_STANDARDS_OHM = 377.0

#: Power-density ground-reflection factors F (field factor squared): none, typical ground
#: (field factor 1.6, OET Bulletin 65 section 2), full reflection (field doubled).
GROUND_FACTORS = {"none": 1.0, "typical": 1.6 ** 2, "full": 4.0}


def far_field_power_density_w_m2(eirp_w, dist_m, ground_factor=1.0):
    """Far-field power density S = EIRP F / (4 pi R^2).

    Parameters
    ----------
    eirp_w : float or array_like
        Time-averaged EIRP toward the point [W].
    dist_m : float or array_like
        Distance from the antenna's centre of radiation [m], > 0.
    ground_factor : float
        Power-density reflection factor F [-]: 1 (none), 2.56 (typical
        ground), 4 (full reflection).

    Returns
    -------
    ndarray or float
        Power density [W/m^2].

    References
    ----------
    .. [1] FCC OET Bulletin 65, Edition 97-01 (1997), section 2, the
       far-field prediction equation and its ground-reflection form with
       the factor 2.56 (1.6 field reflection).
    """
    return np.asarray(eirp_w) * ground_factor / (4.0 * np.pi * np.asarray(dist_m) ** 2)


def plane_wave_fields(power_density_w_m2):
    """Plane-wave E [V/m rms] and H [A/m rms] from power density [W/m^2] (377 ohm).

    References
    ----------
    .. [1] FCC OET Bulletin 65 (1997), section 2: S = E^2/3770 = 37.7 H^2
       in mW/cm^2 with E in V/m and H in A/m (377 ohm free-space impedance).
    """
    s = np.asarray(power_density_w_m2, dtype=float)
    return np.sqrt(s * ETA_STANDARDS_OHM), np.sqrt(s / ETA_STANDARDS_OHM)


def ratio_at(limit, power_density_w_m2):
    """Exposure ratio of a far-field (plane-wave) power density against one limit.

    The ratio is the largest of S/S_lim, (E/E_lim)^2 and (H/H_lim)^2 over the
    quantities the limit defines, with E and H from the plane-wave relation.
    """
    from rfsafe.limits import exposure_ratio

    e, h = plane_wave_fields(power_density_w_m2)
    return exposure_ratio(limit, power_density_w_m2=power_density_w_m2, e_field_v_m=e, h_field_a_m=h)


def compliance_distance_m(eirp_w: float, ground_factor: float, limit) -> float:
    """Distance [m] at which the far-field exposure ratio against ``limit`` equals 1.

    Because every far-field ratio scales as 1/R^2, the distance is
    ``sqrt(ratio at 1 m)``.

    Parameters
    ----------
    eirp_w : float
        EIRP to compare with the limit (time-averaged for averaged limits,
        peak-envelope for instantaneous ones) [W].
    ground_factor : float
        Power-density reflection factor F [-].
    limit : rfsafe.limits.Limit
        The limit.

    References
    ----------
    .. [1] FCC OET Bulletin 65 (1997), section 2: the prediction equation
       solved for distance, R = sqrt(EIRP F / (4 pi S)).
    """
    s1 = far_field_power_density_w_m2(eirp_w, 1.0, ground_factor)
    return float(np.sqrt(ratio_at(limit, s1)))


def ratio_at_horizontal_distance(compliance_dist_m, horizontal_dist_m, height_difference_m):
    """Far-field exposure ratio at a horizontal distance from the antenna's foot, at another height.

    Under the far-field prediction every ratio falls as 1/R^2, so with the 3-D compliance distance
    d (ratio 1 at R = d) the ratio at horizontal distance rho and height difference dz is
    ``d^2 / (rho^2 + dz^2)``.

    Parameters
    ----------
    compliance_dist_m : float or array_like
        3-D compliance distance (see :func:`compliance_distance_m`) [m].
    horizontal_dist_m : float or array_like
        Horizontal distance from the point below the antenna's centre of radiation [m].
    height_difference_m : float
        Height of the antenna's centre of radiation above the evaluation height [m].

    Returns
    -------
    float or ndarray
        Exposure ratio [1] (peak gain toward the point, as the compliance distance assumes).

    References
    ----------
    .. [1] FCC OET Bulletin 65 (1997), section 2: far-field prediction S = EIRP F / (4 pi R^2),
       with R the straight-line distance.
    """
    d = np.asarray(compliance_dist_m, dtype=float)
    r2 = np.asarray(horizontal_dist_m, dtype=float) ** 2 + float(height_difference_m) ** 2
    with np.errstate(divide="ignore"):
        return d ** 2 / r2


def horizontal_compliance_distance_m(compliance_dist_m, height_difference_m):
    """Horizontal distance from the antenna's foot beyond which the far-field ratio is at most 1 [m].

    ``sqrt(d^2 - dz^2)``, or 0 where the height difference alone exceeds the 3-D compliance
    distance d (nobody at that height is above the limit).

    References
    ----------
    .. [1] FCC OET Bulletin 65 (1997), section 2 (far-field prediction; R the straight-line distance).
    """
    d = np.asarray(compliance_dist_m, dtype=float)
    return np.sqrt(np.maximum(d ** 2 - float(height_difference_m) ** 2, 0.0))


def near_field_distance_m(freq_hz):
    """Boundary of the reactive near field, lambda / (2 pi) [m].

    References
    ----------
    .. [1] C. A. Balanis, Antenna Theory, 4th ed., sec. 2.2.4 (field regions);
       OET Bulletin 65 (1997), section 2 (about 47.7 / f[MHz] m).
    """
    return C0_M_S / np.asarray(freq_hz, dtype=float) / (2.0 * np.pi)


def aperture_far_field_distance_m(aperture_m, freq_hz):
    """Far-field (Fraunhofer) distance 2 D^2 / lambda of an aperture of size D [m].

    References
    ----------
    .. [1] C. A. Balanis, Antenna Theory, 4th ed., sec. 2.2.4, eq. (2-1).
    """
    return 2.0 * np.asarray(aperture_m) ** 2 * np.asarray(freq_hz) / C0_M_S


def margin_db(ratio):
    """Margin to the limit [dB] = -10 log10(exposure ratio); negative means exceeded."""
    return -10.0 * np.log10(ratio)
