"""Far-field radiation patterns: gain of an antenna toward a direction.

Every pattern is a pure, vectorised function of the direction expressed in the
antenna's own frame. :func:`direction_in_antenna_frame` turns site-frame
offsets (x east, y north, z up [m]) and the antenna's orientation into that
frame; :func:`pattern_gain` / :func:`pattern_gain_dbi` give the gain.

The antenna frame
-----------------
``forward`` points along the main beam (compass bearing ``azimuth_deg``,
raised by ``tilt_deg``), ``right`` is horizontal, 90 deg clockwise of the
beam bearing, and ``up`` completes the right-handed set (vertical when the
tilt is zero). The element axis of a dipole is ``up`` for vertical
polarisation and ``right`` for horizontal polarisation: a horizontal dipole's
wire runs broadside to its azimuth, so its two main lobes point toward
``azimuth_deg`` and ``azimuth_deg + 180``. A quarter-wave vertical always has
its axis along ``up`` (it is vertical by definition).

Gains are power gains over isotropic; the analytic kinds are normalised so
that their directivity integrates to 4 pi over the sphere (the quarter-wave
vertical over its upper hemisphere, see :func:`quarter_wave_vertical_gain`).
"""

from __future__ import annotations

import csv
import functools
import math
from dataclasses import dataclass, field
from pathlib import Path
from typing import NamedTuple

import numpy as np

from rfsafe.bounds import MAX_FRONT_TO_BACK_DB, MIN_BEAMWIDTH_DEG
from rfsafe.errors import InputError, bad_value, format_value

__all__ = [
    "PATTERN_KINDS", "POLARISATIONS", "HALF_WAVE_DIPOLE_DIRECTIVITY", "SHORT_DIPOLE_DIRECTIVITY",
    "QUARTER_WAVE_VERTICAL_DIRECTIVITY",
    "AntennaDirection", "Pattern", "PatternTable",
    "direction_in_antenna_frame", "direction_from_angles",
    "isotropic_gain", "short_dipole_gain", "half_wave_dipole_gain", "quarter_wave_vertical_gain",
    "beam_gain", "beam_exponents", "beam_sphere_integral", "table_gain",
    "make_pattern", "pattern_gain", "pattern_gain_dbi", "load_pattern_table", "sphere_integral", "gauss_legendre",
]

PATTERN_KINDS = ("isotropic", "short-dipole", "half-wave-dipole", "quarter-wave-vertical", "beam", "table")
POLARISATIONS = ("horizontal", "vertical")


#: Directivity of an infinitesimal (short) dipole: 3/2 (Balanis, Antenna Theory, sec. 4.2).
SHORT_DIPOLE_DIRECTIVITY = 1.5
#: Directivity of a thin half-wave dipole, 4 / Cin(2 pi) = 1.641 (2.15 dBi)
#: (Balanis, Antenna Theory, sec. 4.6, D0 = 4/Cin(2 pi)), with the cosine integral
#: Cin(x) = int_0^x (1 - cos t)/t dt by 64-point Gauss-Legendre quadrature (numpy's leggauss nodes). Written
#: out so that no quadrature (and no numpy.polynomial import) runs at every start-up; tests/test_patterns.py
#: recomputes it by that quadrature and requires the same float bit for bit.
HALF_WAVE_DIPOLE_DIRECTIVITY = 1.6409223769845829
#: Quarter-wave monopole over perfect ground: twice the half-wave dipole (image theory,
#: Balanis, Antenna Theory, sec. 4.7), 3.28 (5.16 dBi).
QUARTER_WAVE_VERTICAL_DIRECTIVITY = 2.0 * HALF_WAVE_DIPOLE_DIRECTIVITY


class AntennaDirection(NamedTuple):
    """Unit direction vector in the antenna frame (components [1]).

    ``forward``, ``right`` and ``up`` are the components along the main beam,
    horizontal-right of it and the antenna's up axis; ``axis`` is the
    component along the element axis of a dipole (``up`` for vertical,
    ``right`` for horizontal polarisation).
    """

    forward: np.ndarray
    right: np.ndarray
    up: np.ndarray
    axis: np.ndarray

    @property
    def azimuth_deg(self) -> np.ndarray:
        """Bearing relative to the main beam, clockwise, in [0, 360) [deg]."""
        return np.mod(np.degrees(np.arctan2(self.right, self.forward)), 360.0)

    @property
    def elevation_deg(self) -> np.ndarray:
        """Elevation above the antenna's (tilted) horizontal plane [deg]."""
        return np.degrees(np.arctan2(self.up, np.hypot(self.forward, self.right)))


def _check_polarisation(polarisation: str) -> None:
    if polarisation not in POLARISATIONS:
        raise bad_value("polarisation", polarisation, 'is not accepted (accepted: "horizontal", "vertical")')


def direction_in_antenna_frame(dx_m, dy_m, dz_m, *, azimuth_deg: float = 0.0, tilt_deg: float = 0.0,
                               polarisation: str = "horizontal") -> AntennaDirection:
    """Direction from an antenna to points, in the antenna frame.

    Parameters
    ----------
    dx_m, dy_m, dz_m : array_like
        Offset of the points from the antenna, east, north and up [m]; broadcast together.
    azimuth_deg : float
        Main-beam bearing, degrees clockwise from north [deg].
    tilt_deg : float
        Main-beam elevation above horizontal [deg].
    polarisation : {"horizontal", "vertical"}
        Selects the element axis (``right`` or ``up``) reported in ``axis``.

    Returns
    -------
    AntennaDirection
        Unit-vector components [1]. A zero offset has no direction; it is
        returned as the main-beam direction (the caller's distance is zero and
        its power density infinite, which callers flag).

    References
    ----------
    Rotation of a vector into a frame whose axes are given by an azimuth
    (rotation about z) and an elevation tilt (rotation about the right axis):
    textbook vector geometry (common practice).
    """
    _check_polarisation(polarisation)
    dx = np.asarray(dx_m, dtype=float)
    dy = np.asarray(dy_m, dtype=float)
    dz = np.asarray(dz_m, dtype=float)
    r = np.sqrt(dx * dx + dy * dy + dz * dz)
    a, t = math.radians(azimuth_deg), math.radians(tilt_deg)
    sa, ca, st, ct = math.sin(a), math.cos(a), math.sin(t), math.cos(t)
    with np.errstate(invalid="ignore", divide="ignore"):
        inv = np.where(r > 0.0, 1.0 / r, 0.0)
    # forward = (sa ct, ca ct, st); right = (ca, -sa, 0); up = (-sa st, -ca st, ct)
    f = (dx * (sa * ct) + dy * (ca * ct) + dz * st) * inv
    f = np.where(r > 0.0, f, 1.0)
    rt = (dx * ca - dy * sa) * inv
    u = (dz * ct - (dx * sa + dy * ca) * st) * inv
    return AntennaDirection(f, rt, u, rt if polarisation == "horizontal" else u)


def direction_from_angles(azimuth_deg, elevation_deg, *, polarisation: str = "horizontal") -> AntennaDirection:
    """Direction given by its angles in the antenna frame (inverse of the angle properties).

    Parameters
    ----------
    azimuth_deg : array_like
        Bearing relative to the main beam, clockwise [deg].
    elevation_deg : array_like
        Elevation above the antenna's horizontal plane [deg].
    polarisation : {"horizontal", "vertical"}
        Selects the element axis.
    """
    _check_polarisation(polarisation)
    az = np.radians(np.asarray(azimuth_deg, dtype=float))
    el = np.radians(np.asarray(elevation_deg, dtype=float))
    ce = np.cos(el)
    f, rt, u = ce * np.cos(az), ce * np.sin(az), np.sin(el) + 0.0 * az
    f, rt, u = np.broadcast_arrays(f, rt, u)
    return AntennaDirection(f, rt, u, rt if polarisation == "horizontal" else u)


# --------------------------------------------------------------------------- analytic kinds

def isotropic_gain(direction: AntennaDirection) -> np.ndarray:
    """Isotropic radiator: gain 1 (0 dBi) in every direction [1]."""
    return np.ones_like(np.asarray(direction.forward, dtype=float))


def short_dipole_gain(direction: AntennaDirection) -> np.ndarray:
    """Short (infinitesimal) dipole, G = 3/2 sin^2(theta) [1].

    ``theta`` is the angle from the element axis; nulls off the ends.

    References
    ----------
    C. A. Balanis, *Antenna Theory: Analysis and Design*, 4th ed., Wiley, 2016,
    sec. 4.2 (infinitesimal dipole, directivity 3/2).
    """
    c = np.asarray(direction.axis, dtype=float)
    return SHORT_DIPOLE_DIRECTIVITY * np.maximum(1.0 - c * c, 0.0)


def _half_wave_shape(cos_theta: np.ndarray) -> np.ndarray:
    """[cos(pi/2 cos th) / sin th]^2, 0 at the ends of the element (its limit)."""
    c = np.asarray(cos_theta, dtype=float)
    s2 = 1.0 - c * c
    num = np.cos(0.5 * np.pi * c)
    with np.errstate(invalid="ignore", divide="ignore"):
        out = num * num / s2
    return np.where(s2 > 1e-12, out, 0.0)


def half_wave_dipole_gain(direction: AntennaDirection) -> np.ndarray:
    """Thin half-wave dipole, G = D0 [cos(pi/2 cos th)/sin th]^2 with D0 = 4/Cin(2 pi) [1].

    Peak 1.64 (2.15 dBi) broadside to the wire, nulls off its ends.

    References
    ----------
    C. A. Balanis, *Antenna Theory: Analysis and Design*, 4th ed., Wiley, 2016,
    sec. 4.6 (half-wavelength dipole: field pattern and D0 = 4/Cin(2 pi)).
    """
    return HALF_WAVE_DIPOLE_DIRECTIVITY * _half_wave_shape(direction.axis)


def quarter_wave_vertical_gain(direction: AntennaDirection) -> np.ndarray:
    """Quarter-wave vertical (monopole over perfect ground), G = 2 D0 [cos(pi/2 cos th)/sin th]^2 [1].

    Peak 3.28 (5.16 dBi) along the horizon. Above the horizon this is the
    image-theory pattern of a monopole on an infinite perfect ground, whose
    directivity integrates to 4 pi over the upper hemisphere. Below the
    horizon a real ground-plane antenna (elevated, with radials) does radiate;
    rfsafe mirrors the upper pattern into the lower hemisphere,
    ``G(pi - th) = G(th)``, which is conservative for people standing below
    an elevated vertical (the integral over the whole sphere is then 8 pi).
    The axis is the antenna's ``up`` axis whatever the polarisation field.

    References
    ----------
    C. A. Balanis, *Antenna Theory: Analysis and Design*, 4th ed., Wiley, 2016,
    sec. 4.7 (quarter-wavelength monopole over an infinite ground plane:
    image theory, directivity twice that of the half-wave dipole).
    """
    return QUARTER_WAVE_VERTICAL_DIRECTIVITY * _half_wave_shape(direction.up)


# --------------------------------------------------------------------------- beam model

def beam_exponents(beamwidth_h_deg: float, beamwidth_v_deg: float) -> tuple[float, float]:
    """Exponents (p, q) of the beam model's lobes for the given half-power beamwidths.

    ``cos(bw_h/4)^(2p) = 1/2`` and ``cos(bw_v/2)^q = 1/2``; see :func:`beam_gain`.
    """
    p = math.log(0.5) / (2.0 * math.log(math.cos(math.radians(beamwidth_h_deg) / 4.0)))
    q = math.log(0.5) / math.log(math.cos(math.radians(beamwidth_v_deg) / 2.0))
    return p, q


#: Fraction of the peak gain a beam is taken to radiate straight down (toward the ground under it) [1]:
#: 1/2 (-3 dB). A two-element endfire array of horizontal half-wave elements spaced lambda/4 and phased
#: for a rear null radiates straight down (broadside to its boom, where each element radiates its
#: maximum) exactly half its forward power density: |1 + e^{-j pi/2}|^2 / |1 + 1|^2 = 1/2 (array factor
#: of two elements times the element pattern, pattern multiplication). Closer-spaced two-element beams
#: and beams of more elements radiate less downward (from memory); the floor is rfsafe's conservative
#: stand-in for the downward lobe that a smooth lobe model misses, not a measured value.
DOWNWARD_FLOOR_FRACTION = 0.5
#: How the downward floor is stated in results.
DOWNWARD_FLOOR_TEXT = ("beam pattern below the antenna: at least 1/2 of the peak gain x sin^2(depression), i.e. "
                       "-3 dB straight down (conservative downward lobe; a pattern table or a wire model "
                       "replaces it)")


def beam_downward_floor(direction: AntennaDirection) -> np.ndarray:
    """The downward floor of the beam model relative to its peak [1]: 1/2 sin^2(depression) below the
    antenna's horizontal plane, 0 above it (see :data:`DOWNWARD_FLOOR_FRACTION`).

    The sin^2 taper is 1/2 straight down and 0 at the horizon; in both principal planes below the
    horizon it is never below the two-element lambda/4 array named above outside its forward quadrant.

    References
    ----------
    Two-element array factor and pattern multiplication: C. A. Balanis, *Antenna Theory*, 4th ed.,
    sec. 6.2 (from memory); half-wave element pattern: sec. 4.6.
    """
    u = np.asarray(direction.up, dtype=float)
    return np.where(u < 0.0, DOWNWARD_FLOOR_FRACTION * u * u, 0.0)


def beam_gain(direction: AntennaDirection, *, peak_gain_dbi: float, front_to_back_db: float,
              beamwidth_h_deg: float, beamwidth_v_deg: float, downward_floor: bool = True) -> np.ndarray:
    """Directional beam: a smooth main lobe with a back-lobe floor and a downward floor [1].

    .. math::

        G = G_0 \\max\\left( \\left[\\tfrac{1 + \\cos\\phi}{2}\\right]^{p} \\cos^{q}\\epsilon,
            \\; 10^{-FB/10} \\right)

    with ``phi`` the bearing from the main beam and ``epsilon`` the elevation
    above the antenna's horizontal plane. ``p`` and ``q`` put the half-power
    points exactly at +-bw_h/2 in the horizontal plane of the beam and +-bw_v/2
    in its vertical plane; the lobe falls smoothly to zero at the back and at
    the zenith, where the floor ``G0/FB`` takes over, so the front-to-back
    ratio is exactly FB. No side lobes are invented; the floor covers them
    only to the level of the back lobe. Below the antenna's horizontal plane the
    gain is never less than :func:`beam_downward_floor` times G0 (1/2 straight
    down), unless ``downward_floor`` is false: a smooth lobe would otherwise put
    the ground under a beam at the back-lobe floor, far below what real beams
    radiate there. The declared peak gain is taken as given (never lowered):
    :func:`make_pattern` rejects a peak gain larger than the lobe can have
    (``G0 * integral > 4 pi``, computed without the downward floor, which is a
    conservative overstatement rather than radiated power).

    Parameters
    ----------
    direction : AntennaDirection
    peak_gain_dbi : float
        Main-beam gain [dBi].
    front_to_back_db : float
        Front-to-back ratio [dB], > 3.01 dB.
    beamwidth_h_deg, beamwidth_v_deg : float
        Half-power beamwidths in the beam's horizontal and vertical planes [deg].

    References
    ----------
    Separable cos^n power-pattern model of a main lobe: C. A. Balanis,
    *Antenna Theory: Analysis and Design*, 4th ed., Wiley, 2016, sec. 2.6
    (directivity of U = cos^n patterns) (from memory); the floor is rfsafe's
    conservative stand-in for the back and side lobes.
    """
    p, q = beam_exponents(beamwidth_h_deg, beamwidth_v_deg)
    f = np.asarray(direction.forward, dtype=float)
    rt = np.asarray(direction.right, dtype=float)
    rho = np.hypot(f, rt)  # cos(elevation)
    # (1 + cos az)/2 = (rho + f)/(2 rho). Behind the beam (f < 0) rho + f cancels: within 1e-8 rad of the
    # back it rounded to 0, and a wide beam's lobe (p of 0.06 at 359 deg) fell to the back-lobe floor where it
    # is 0.09 G0. There rho + f = rt^2/(rho - f) (no cancellation). Zenith and nadir (rho = 0): f = 0, front.
    with np.errstate(invalid="ignore", divide="ignore"):
        half = np.where(f >= 0.0, np.where(rho > 0.0, 0.5 * (1.0 + f / rho), 1.0), 0.5 * rt * rt / (rho * (rho - f)))
    half = np.maximum(half, 0.0)
    lobe = np.maximum(half ** p * rho ** q, 10.0 ** (-front_to_back_db / 10.0))
    if downward_floor:
        lobe = np.maximum(lobe, beam_downward_floor(direction))
    return 10.0 ** (peak_gain_dbi / 10.0) * lobe


def sphere_integral(gain_function, n_el: int = 361, n_az: int = 720) -> float:
    """Integral of a gain pattern over the sphere [sr], in the antenna frame.

    Gauss-Legendre in sin(elevation) times the periodic midpoint rule in
    azimuth (spectrally accurate for smooth periodic integrands).
    ``gain_function(direction)`` returns the linear gain.
    """
    mu, w = np.polynomial.legendre.leggauss(n_el)  # mu = sin(elevation)
    az = (np.arange(n_az) + 0.5) * (360.0 / n_az)
    el = np.degrees(np.arcsin(mu))
    d = direction_from_angles(az[None, :], el[:, None], polarisation="horizontal")
    g = np.asarray(gain_function(d), dtype=float)
    return float(np.sum(w[:, None] * g) * (2.0 * math.pi / n_az))


@functools.lru_cache(maxsize=256)
def beam_sphere_integral(front_to_back_db: float, beamwidth_h_deg: float, beamwidth_v_deg: float) -> float:
    """Integral over the sphere of the beam model with 0 dBi peak [sr] (4 pi / this = its directivity).

    The quadrature of :func:`sphere_integral` on its 721 x 1440 grid (Gauss-Legendre in sin(elevation),
    midpoint in azimuth), with the lobe's separable form used directly: the lobe is
    ``max(a(elevation) h(azimuth), floor)``, so each elevation row sums ``a h`` over the azimuths where
    it lies above the floor (the largest ``h``, found by one sort and a prefix sum) and the floor over
    the rest. The same terms as the full grid, summed in another order, with the nodes of
    :func:`gauss_legendre` (read from their stored copy, :func:`_beam_elevation_rule`): within 1e-13
    relative of the full grid on numpy's nodes and weights (the difference is numpy's rounding of the
    outermost weights; tests/test_patterns.py compares them).
    """
    n_az = 1440
    p, q = beam_exponents(beamwidth_h_deg, beamwidth_v_deg)
    mu, w = _beam_elevation_rule()                            # mu = sin(elevation), 721 nodes
    az = np.radians((np.arange(n_az) + 0.5) * (360.0 / n_az))
    h = np.sort(np.maximum(0.5 * (1.0 + np.cos(az)), 0.0) ** p)   # [(1 + cos phi) / 2]^p, ascending
    a = np.sqrt(np.maximum(1.0 - mu * mu, 0.0)) ** q          # cos^q(elevation)
    floor = 10.0 ** (-front_to_back_db / 10.0)
    top = np.concatenate(([0.0], np.cumsum(h[::-1])))         # top[k]: sum of the k largest h
    with np.errstate(divide="ignore", over="ignore"):            # a = 0 or tiny: no h is above the floor
        above = n_az - np.searchsorted(h, floor / a, side="right")   # how many h have a h > floor
    rows = a * top[above] + floor * (n_az - above)            # sum over azimuth of max(a h, floor)
    return float(np.sum(w * rows) * (2.0 * math.pi / n_az))


@functools.lru_cache(maxsize=1)
def _beam_elevation_rule() -> tuple[np.ndarray, np.ndarray]:
    """``gauss_legendre(721)`` as stored in ``data/gauss_legendre_721.txt`` (the same floats bit for bit,
    tested; reading them takes well under a millisecond, computing them about 10 ms of every start-up that
    checks a beam)."""
    from importlib import resources

    text = resources.files("rfsafe.antenna").joinpath("data", "gauss_legendre_721.txt").read_text(encoding="utf-8")
    rows = [line.split() for line in text.splitlines() if line and not line.startswith("#")]
    nodes = np.array([float.fromhex(a) for a, _ in rows])
    weights = np.array([float.fromhex(b) for _, b in rows])
    nodes.flags.writeable = False
    weights.flags.writeable = False
    return nodes, weights


@functools.lru_cache(maxsize=8)
def gauss_legendre(n: int) -> tuple[np.ndarray, np.ndarray]:
    """Gauss-Legendre nodes (ascending) and weights on [-1, 1] for ``n`` points (cached; read-only arrays).

    Newton's method on P_n from Tricomi's approximation of its zeros, P_n and P_n' by Bonnet's
    three-term recurrence, vectorised over the nodes of one half (the other half by symmetry), until a
    step is below 1e-15, then once more for P_n' at the converged nodes; weights
    2 / ((1 - x^2) P_n'(x)^2), scaled to sum to 2 like numpy's. The nodes equal those of
    ``numpy.polynomial.legendre.leggauss`` to rounding (about 1e-16); the weights agree to 1e-8
    relative or better (n <= 1440), the difference lying in numpy's outermost weights: at n = 721 the
    outermost weight here is within 1e-11 of a 50-digit evaluation of the same formulas (Python's
    decimal module), numpy's within 3e-9. No eigenvalue solve (numpy's takes 0.1 s at n = 721; this
    takes about 5 ms).

    References
    ----------
    W. H. Press et al., *Numerical Recipes*, 3rd ed., sec. 4.6.1 (routine gauleg: Newton on the
    recurrence) (from memory); M. Abramowitz and I. A. Stegun, *Handbook of Mathematical Functions*,
    22.7.10 (recurrence), 22.8.5 (derivative), 25.4.29 (weights) (from memory).
    """
    m = (n + 1) // 2
    k = np.arange(1, m + 1, dtype=float)
    x = (1.0 - 1.0 / (8.0 * n * n) + 1.0 / (8.0 * n ** 3)) * np.cos(math.pi * (4.0 * k - 1.0) / (4.0 * n + 2.0))
    converged = False
    for _ in range(20):   # 3 to 5 passes for n <= 1440
        p0, p1 = np.ones_like(x), x.copy()                    # P_0, P_1
        for j in range(2, n + 1):
            p0, p1 = p1, ((2.0 * j - 1.0) * x * p1 - (j - 1.0) * p0) / j
        dp = n * (x * p1 - p0) / (x * x - 1.0)               # P_n'(x) = n (x P_n - P_{n-1}) / (x^2 - 1)
        if converged:                                         # P_n' at the converged nodes, for the weights
            break
        step = p1 / dp
        x = x - step
        converged = float(np.max(np.abs(step))) <= 1e-15
    w = 2.0 / ((1.0 - x * x) * dp * dp)
    lower = n // 2                                            # nodes below 0 (x is descending, all >= 0)
    nodes = np.concatenate((-x[:lower], np.zeros(n - 2 * lower), x[:lower][::-1]))
    weights = np.concatenate((w[:lower], w[lower:m], w[:lower][::-1]))
    weights *= 2.0 / np.sum(weights)
    nodes.flags.writeable = False
    weights.flags.writeable = False
    return nodes, weights


# --------------------------------------------------------------------------- tables

@dataclass(frozen=True, eq=False)
class PatternTable:
    """A measured or modelled pattern on a complete azimuth x elevation grid.

    Attributes
    ----------
    azimuth_deg : ndarray (n_az,)
        Sorted bearings relative to the main beam, clockwise, in [0, 360) [deg].
    elevation_deg : ndarray (n_el,)
        Sorted elevations from -90 to 90 [deg].
    gain_dbi : ndarray (n_el, n_az)
        Gain at each sample [dBi].
    path : str
        Where the table was read from.
    sphere_average_gain : float
        Integral of the interpolated gain over the sphere / 4 pi [1]; above 1
        the table states more power than an antenna can radiate (the gains
        are still used as given, which overstates exposure).
    """

    azimuth_deg: np.ndarray
    elevation_deg: np.ndarray
    gain_dbi: np.ndarray
    path: str = ""
    sphere_average_gain: float = field(default=float("nan"))

    @property
    def peak_gain_dbi(self) -> float:
        """Largest gain in the table [dBi]."""
        return float(np.max(self.gain_dbi))

    @functools.cached_property
    def _gain_lin(self) -> np.ndarray:
        return 10.0 ** (self.gain_dbi / 10.0)


def table_gain(direction: AntennaDirection, table: PatternTable) -> np.ndarray:
    """Gain from a pattern table, bilinear in (azimuth, elevation) on the linear gain [1].

    Interpolating the power gain (not dB) never falls below the dB-linear
    interpolation between the same samples, which errs on the safe side.
    Azimuth wraps around 360 deg; sample points are reproduced exactly.

    References
    ----------
    Bilinear interpolation on a rectangular grid: W. H. Press et al.,
    *Numerical Recipes*, 3rd ed., sec. 3.6 (common practice).
    """
    az = np.asarray(direction.azimuth_deg, dtype=float)
    el = np.asarray(direction.elevation_deg, dtype=float)
    a_grid, e_grid, g = table.azimuth_deg, table.elevation_deg, table._gain_lin
    n_az = a_grid.size
    # azimuth: periodic; cell [a_i, a_{i+1}) with a_{n} = a_0 + 360
    a_ext = np.append(a_grid, a_grid[0] + 360.0)
    az_w = np.where(az < a_grid[0], az + 360.0, az)
    i = np.clip(np.searchsorted(a_ext, az_w, side="right") - 1, 0, n_az - 1)
    span = a_ext[i + 1] - a_ext[i]
    ta = (az_w - a_ext[i]) / span
    i1 = (i + 1) % n_az
    j = np.clip(np.searchsorted(e_grid, el, side="right") - 1, 0, e_grid.size - 2)
    te = np.clip((el - e_grid[j]) / (e_grid[j + 1] - e_grid[j]), 0.0, 1.0)
    lo = g[j, i] * (1.0 - ta) + g[j, i1] * ta
    hi = g[j + 1, i] * (1.0 - ta) + g[j + 1, i1] * ta
    return lo * (1.0 - te) + hi * te


_TABLE_COLUMNS = ("azimuth_deg", "elevation_deg", "gain_dbi")


def load_pattern_table(path, *, field: str = "pattern_file") -> PatternTable:
    """Read a pattern table (CSV with columns azimuth_deg, elevation_deg, gain_dbi).

    Azimuth is the bearing relative to the antenna's main beam, clockwise, in
    [0, 360); elevation is above the antenna's horizontal plane, in
    [-90, 90]. The samples must form a complete grid: every azimuth at every
    elevation, each exactly once, with elevations -90 and 90 present (the
    poles, where every azimuth must give the same gain). Lines starting with
    ``#`` are comments.

    Raises
    ------
    InputError
        Naming ``field``, the file, the line and what is accepted.
    """
    p = Path(path)
    where = str(p)

    def err(msg: str) -> InputError:
        return bad_value(field, where, msg)

    from rfsafe.bounds import MAX_GAIN_DBI, MAX_PATTERN_FILE_BYTES, MAX_PATTERN_ROWS, MIN_GAIN_DBI

    try:
        with p.open("rb") as fh:  # one byte past the bound: a huge or endless file stops there
            data = fh.read(MAX_PATTERN_FILE_BYTES + 1)
        if len(data) > MAX_PATTERN_FILE_BYTES:
            raise err(f"is larger than {MAX_PATTERN_FILE_BYTES:,} bytes (accepted: at most that)")
        text = data.decode("utf-8")
    except FileNotFoundError:
        raise err("does not exist") from None
    except IsADirectoryError:
        raise err("is a directory, not a CSV file") from None
    except UnicodeDecodeError:
        raise err("is not UTF-8 text") from None
    except OSError as exc:
        raise err(f"cannot be read ({exc.strerror})") from None

    lines = [(n, line) for n, line in enumerate(text.splitlines(), start=1)
             if line.strip() and not line.lstrip().startswith("#")]
    if len(lines) - 1 > MAX_PATTERN_ROWS:
        raise err(f"has {len(lines) - 1} data lines (accepted: at most {MAX_PATTERN_ROWS})")
    if not lines:
        raise err("is empty (accepted: a CSV with columns azimuth_deg, elevation_deg, gain_dbi)")
    header_no, header_line = lines[0]
    header = [h.strip() for h in next(csv.reader([header_line]))]
    for h in header:
        if h not in _TABLE_COLUMNS:
            raise err(f"line {header_no}: column {format_value(h)} is not accepted "
                      "(accepted columns: azimuth_deg, elevation_deg, gain_dbi)")
    for c in _TABLE_COLUMNS:
        if header.count(c) != 1:
            raise err(f"line {header_no}: needs exactly one column {c} "
                      "(accepted columns: azimuth_deg, elevation_deg, gain_dbi)")
    col = {c: header.index(c) for c in _TABLE_COLUMNS}

    seen: dict[tuple[float, float], int] = {}
    rows: list[tuple[float, float, float]] = []
    for n, line in lines[1:]:
        cells = [c.strip() for c in next(csv.reader([line]))]
        if len(cells) != len(header):
            raise err(f"line {n}: has {len(cells)} values, the header has {len(header)}")
        vals = {}
        for c in _TABLE_COLUMNS:
            try:
                v = float(cells[col[c]])
            except ValueError:
                raise err(f"line {n}: {c} {format_value(cells[col[c]])} must be a number") from None
            if not math.isfinite(v):
                raise err(f"line {n}: {c} {cells[col[c]]} must be a finite number")
            vals[c] = v
        az, el, g = vals["azimuth_deg"], vals["elevation_deg"], vals["gain_dbi"]
        if not 0.0 <= az < 360.0:
            raise err(f"line {n}: azimuth_deg {format_value(az)} is out of range "
                      "(accepted: >= 0 and < 360; 360 is the same bearing as 0)")
        if not -90.0 <= el <= 90.0:
            raise err(f"line {n}: elevation_deg {format_value(el)} is out of range (accepted: -90 to 90)")
        if not MIN_GAIN_DBI <= g <= MAX_GAIN_DBI:
            raise err(f"line {n}: gain_dbi {format_value(g)} is out of range "
                      f"(accepted: {MIN_GAIN_DBI:g} to {MAX_GAIN_DBI:g} dBi)")
        if (az, el) in seen:
            raise err(f"line {n}: azimuth_deg {format_value(az)}, elevation_deg {format_value(el)} "
                      f"repeats line {seen[(az, el)]} (each direction once)")
        seen[(az, el)] = n
        rows.append((az, el, g))
    if not rows:
        raise err("has no data lines (accepted: a CSV with columns azimuth_deg, elevation_deg, gain_dbi)")

    a_grid = np.array(sorted({r[0] for r in rows}))
    e_grid = np.array(sorted({r[1] for r in rows}))
    for pole in (-90.0, 90.0):
        if pole not in e_grid:
            raise err(f"has no samples at elevation_deg {format_value(pole)} "
                      "(accepted: elevations covering -90 to 90, the whole sphere)")
    a_index = {a: k for k, a in enumerate(a_grid)}
    e_index = {e: k for k, e in enumerate(e_grid)}
    grid = np.full((e_grid.size, a_grid.size), np.nan)
    for az, el, g in rows:
        grid[e_index[el], a_index[az]] = g
    missing = np.argwhere(np.isnan(grid))
    if missing.size:
        je, ia = missing[0]
        raise err(f"is missing azimuth_deg {format_value(float(a_grid[ia]))}, elevation_deg "
                  f"{format_value(float(e_grid[je]))} ({len(missing)} grid points missing; "
                  "accepted: every azimuth at every elevation)")
    for pole, row in ((-90.0, grid[0]), (90.0, grid[-1])):
        if np.ptp(row) != 0.0:
            raise err(f"elevation_deg {format_value(pole)} is a single direction but gain_dbi varies "
                      f"from {format_value(float(row.min()))} to {format_value(float(row.max()))} "
                      "(accepted: the same gain_dbi for every azimuth at a pole)")
    table = PatternTable(a_grid, e_grid, grid, where)
    avg = sphere_integral(lambda d: table_gain(d, table), n_el=181, n_az=360) / (4.0 * math.pi)
    return PatternTable(a_grid, e_grid, grid, where, avg)


# --------------------------------------------------------------------------- dispatch

@dataclass(frozen=True)
class Pattern:
    """A validated pattern: kind and parameters (build with :func:`make_pattern`).

    ``peak_gain_dbi`` is the gain toward the strongest direction [dBi]. For the
    analytic kinds it defaults to the kind's directivity; a declared value
    scales the shape (taken as given). ``sphere_integral_sr`` is the integral
    of the gain over the sphere [sr] (4 pi for a lossless, correctly
    normalised pattern; 8 pi for the quarter-wave vertical, see its notes).
    """

    kind: str
    peak_gain_dbi: float
    front_to_back_db: float | None = None
    beamwidth_h_deg: float | None = None
    beamwidth_v_deg: float | None = None
    table: PatternTable | None = None

    def gain(self, direction: AntennaDirection) -> np.ndarray:
        """Linear gain toward ``direction`` [1]."""
        k = self.kind
        if k == "beam":
            return beam_gain(direction, peak_gain_dbi=self.peak_gain_dbi,
                             front_to_back_db=self.front_to_back_db,
                             beamwidth_h_deg=self.beamwidth_h_deg, beamwidth_v_deg=self.beamwidth_v_deg)
        if k == "table":
            return table_gain(direction, self.table)
        base = _ANALYTIC[k]
        g = base[0](direction)
        scale = 10.0 ** (self.peak_gain_dbi / 10.0) / base[1]
        return g if scale == 1.0 else g * scale

    @property
    def sphere_integral_sr(self) -> float:
        if self.kind == "beam":
            return 10.0 ** (self.peak_gain_dbi / 10.0) * beam_sphere_integral(
                self.front_to_back_db, self.beamwidth_h_deg, self.beamwidth_v_deg)
        if self.kind == "table":
            return self.table.sphere_average_gain * 4.0 * math.pi
        base = _ANALYTIC[self.kind]
        full = 8.0 * math.pi if self.kind == "quarter-wave-vertical" else 4.0 * math.pi
        return full * 10.0 ** (self.peak_gain_dbi / 10.0) / base[1]


_ANALYTIC = {
    "isotropic": (isotropic_gain, 1.0),
    "short-dipole": (short_dipole_gain, SHORT_DIPOLE_DIRECTIVITY),
    "half-wave-dipole": (half_wave_dipole_gain, HALF_WAVE_DIPOLE_DIRECTIVITY),
    "quarter-wave-vertical": (quarter_wave_vertical_gain, QUARTER_WAVE_VERTICAL_DIRECTIVITY),
}


def _finite(field_name: str, value, what: str) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value):
        raise bad_value(field_name, value, f"must be a finite number ({what})")
    return float(value)


def make_pattern(kind: str, *, peak_gain_dbi: float | None = None, front_to_back_db: float | None = None,
                 beamwidth_h_deg: float | None = None, beamwidth_v_deg: float | None = None,
                 table: PatternTable | None = None, field: str = "antenna") -> Pattern:
    """Validate pattern parameters once and return a :class:`Pattern`.

    Parameters
    ----------
    kind : str
        One of :data:`PATTERN_KINDS`.
    peak_gain_dbi : float, optional
        Peak gain [dBi]. Required for "beam"; optional for the analytic kinds
        (default: their directivity); for "table", if given, it must equal the
        table's largest gain.
    front_to_back_db, beamwidth_h_deg, beamwidth_v_deg : float
        Beam parameters [dB], [deg], [deg]; required for "beam" only.
    table : PatternTable
        Required for "table" only.
    field : str
        Field path prefix used in error messages, e.g. ``stations[1].antenna``.

    Raises
    ------
    InputError
        A missing or out-of-range parameter, or a beam whose declared peak
        gain is more than its lobe can have.
    """
    if kind not in PATTERN_KINDS:
        raise bad_value(f"{field}.kind", kind,
                        "is not a pattern kind (accepted: " + ", ".join(format_value(k) for k in PATTERN_KINDS) + ")")
    beam_keys = {"front_to_back_db": front_to_back_db, "beamwidth_h_deg": beamwidth_h_deg,
                 "beamwidth_v_deg": beamwidth_v_deg}
    if kind != "beam":
        for key, v in beam_keys.items():
            if v is not None:
                raise bad_value(f"{field}.{key}", v, 'applies only to kind = "beam"')
    if kind != "table" and table is not None:
        raise InputError(f'{field}.pattern_file: applies only to kind = "table"')
    if kind in _ANALYTIC:
        g = _ANALYTIC[kind][1]
        peak = 10.0 * math.log10(g) if peak_gain_dbi is None else _finite(f"{field}.gain_dbi", peak_gain_dbi, "dBi")
        return Pattern(kind, peak)
    if kind == "table":
        if table is None:
            raise InputError(f'{field}.pattern_file: is required for kind = "table"')
        if peak_gain_dbi is not None and abs(peak_gain_dbi - table.peak_gain_dbi) > 0.01:
            raise bad_value(f"{field}.gain_dbi", peak_gain_dbi,
                            f"differs from the largest gain_dbi in the pattern table ({table.peak_gain_dbi:g} dBi); "
                            "give the same value or leave it out")
        return Pattern(kind, table.peak_gain_dbi, table=table)
    # beam
    if peak_gain_dbi is None:
        raise InputError(f'{field}.gain_dbi: is required for kind = "beam"')
    peak = _finite(f"{field}.gain_dbi", peak_gain_dbi, "dBi")
    for key, v in beam_keys.items():
        if v is None:
            raise InputError(f'{field}.{key}: is required for kind = "beam"')
    fb = _finite(f"{field}.front_to_back_db", front_to_back_db, "dB")
    bh = _finite(f"{field}.beamwidth_h_deg", beamwidth_h_deg, "deg")
    bv = _finite(f"{field}.beamwidth_v_deg", beamwidth_v_deg, "deg")
    if not 10.0 * math.log10(2.0) < fb <= MAX_FRONT_TO_BACK_DB:
        raise bad_value(f"{field}.front_to_back_db", front_to_back_db,
                        f"is out of range (accepted: > 3.01 dB, so that the half-power points lie on the main lobe, "
                        f"and <= {MAX_FRONT_TO_BACK_DB:g} dB, where rfsafe's beam model is checked)")
    # narrower than MIN_BEAMWIDTH_DEG the exponents lose their precision, and cos of a quarter of the beamwidth
    # rounds to 1 (a division by zero) below about 2e-6 deg
    if not MIN_BEAMWIDTH_DEG <= bh < 360.0:
        raise bad_value(f"{field}.beamwidth_h_deg", beamwidth_h_deg,
                        f"is out of range (accepted: >= {MIN_BEAMWIDTH_DEG:g} and < 360)")
    if not MIN_BEAMWIDTH_DEG <= bv < 180.0:
        raise bad_value(f"{field}.beamwidth_v_deg", beamwidth_v_deg,
                        f"is out of range (accepted: >= {MIN_BEAMWIDTH_DEG:g} and < 180)")
    integral = beam_sphere_integral(fb, bh, bv)
    d_max_dbi = 10.0 * math.log10(4.0 * math.pi / integral)
    if peak > d_max_dbi:
        raise bad_value(f"{field}.gain_dbi", peak_gain_dbi,
                        f"is more than a main lobe of {bh:g} x {bv:g} deg with {fb:g} dB front-to-back can have "
                        f"(at most {math.floor(d_max_dbi * 100) / 100:.2f} dBi in rfsafe's beam model); "
                        "check that the gain is in dBi (not dBd) and the beamwidths")
    return Pattern(kind, peak, fb, bh, bv)


def _as_direction(parts: tuple) -> AntennaDirection:
    if len(parts) == 1 and isinstance(parts[0], AntennaDirection):
        return parts[0]
    if len(parts) == 4:
        return AntennaDirection(*parts)
    raise TypeError("give an AntennaDirection, or its four components forward, right, up, axis")


def pattern_gain(kind: str, *direction, peak_gain_dbi: float | None = None,
                 front_to_back_db: float | None = None, beamwidth_h_deg: float | None = None,
                 beamwidth_v_deg: float | None = None, table: PatternTable | None = None,
                 field: str = "antenna") -> np.ndarray:
    """Linear gain of a pattern kind toward a direction [1] (see :func:`make_pattern`).

    ``direction`` is an :class:`AntennaDirection` or its four components
    (``pattern_gain(kind, *direction_in_antenna_frame(...))`` works too). For
    many directions with one antenna, build the :class:`Pattern` once with
    :func:`make_pattern` and call its ``gain``.
    """
    return make_pattern(kind, peak_gain_dbi=peak_gain_dbi, front_to_back_db=front_to_back_db,
                        beamwidth_h_deg=beamwidth_h_deg, beamwidth_v_deg=beamwidth_v_deg,
                        table=table, field=field).gain(_as_direction(direction))


def pattern_gain_dbi(kind: str, *direction, **params) -> np.ndarray:
    """Gain of a pattern kind toward a direction [dBi] (10 log10 of :func:`pattern_gain`; nulls give -inf)."""
    g = pattern_gain(kind, *direction, **params)
    with np.errstate(divide="ignore"):
        return 10.0 * np.log10(g)
