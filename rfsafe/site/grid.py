"""Site grid kernel: far-field exposure ratios of several emitters over a grid of points and heights.

Power density from each emitter is the far-field prediction
``S = P G(direction) F / (4 pi R^2)``, as a station evaluation computes it at a
place (rfsafe.assess): R is the distance to the nearest part of the antenna's
radiating structure (rfsafe.antenna.extent; never less than
:data:`MIN_FAR_FIELD_DIST_M`), the gain is the pattern's toward the point from
the declared position, and where the point is within the near-field distance of
any part of the antenna at some evaluation height, the peak gain replaces the
pattern at every height (a far-field pattern's nulls do not hold there). Exposure ratios are ``S / S_lim`` with the plane-wave-equivalent limit of each
environment. A transmitter sends one configuration at a time, so at every
point and height each transmitter contributes its worst configuration there;
the contributions of all transmitters are summed (all may transmit at once,
conservative) and the worst evaluation height is kept.

Pure physics on numpy arrays: the site file, the power chain (rfsafe.assess)
and the limits are resolved by the caller.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Callable, Sequence

import numpy as np

from rfsafe.antenna.extent import Extent, NearestPart, extent_key, farthest_distance_m, shifted, structure_parts
from rfsafe.antenna.patterns import DOWNWARD_FLOOR_FRACTION, AntennaDirection, Pattern, beam_exponents
from rfsafe.site.constants import _FOUR_PI

__all__ = ["SiteEmitter", "RatioGrid", "ratio_grid", "transmitter_ratios", "MIN_FAR_FIELD_DIST_M",
           "limit_equivalent_w_m2", "site_pattern"]

#: Smallest distance used in the far-field formula [m], as for a station's places
#: (rfsafe.assess.MIN_FAR_FIELD_DIST_M, the same value; tested): a point on an antenna, or inside the
#: assumed envelope of one, gets a finite, very large ratio.
MIN_FAR_FIELD_DIST_M = 0.01


@dataclass(frozen=True)
class SiteEmitter:
    """One configuration of one transmitter placed on the site.

    Attributes
    ----------
    transmitter : str
        Name of the transmitter; configurations of one transmitter never
        transmit together (its worst one counts at each point).
    configuration : str
        Name of the configuration.
    x_m, y_m, height_m : float
        Centre of radiation: east, north, above ground [m].
    pattern : Pattern
        Radiation pattern (see :func:`rfsafe.antenna.patterns.make_pattern`).
    azimuth_deg, tilt_deg : float
        Main-beam bearing clockwise from north, and elevation [deg].
    polarisation : str
        "horizontal" or "vertical" (sets a dipole's axis).
    freq_hz : float
        Frequency [Hz].
    power_w : tuple of float
        Time-averaged power accepted by the antenna, per environment in
        :data:`ENVIRONMENTS` order (averaging windows differ) [W].
    limit_w_m2 : tuple of float
        Plane-wave-equivalent power-density limit per environment [W/m^2],
        such that the exposure ratio is ``S / limit_w_m2`` (a limit given as
        E or H is converted with 377 ohm; a second, instantaneous basis is
        folded in by the caller).
    ground_factor : float
        Power-density ground-reflection factor F [1].
    near_field_m : float
        Distance from the nearest part of the antenna inside which the
        far-field estimate is not trusted (lambda/2pi, or 2D^2/lambda for an
        aperture) [m].
    extent : Extent or None
        The radiating structure (rfsafe.antenna.extent) in coordinates
        relative to the centre of radiation ``(x_m, y_m, height_m)`` [m], so
        that it moves with the emitter; None: a point at the centre.
    """

    transmitter: str
    configuration: str
    x_m: float
    y_m: float
    height_m: float
    pattern: Pattern
    freq_hz: float
    power_w: tuple[float, float]
    limit_w_m2: tuple[float, float]
    ground_factor: float = 1.0
    azimuth_deg: float = 0.0
    tilt_deg: float = 0.0
    polarisation: str = "horizontal"
    near_field_m: float = 0.0
    extent: Extent | None = field(default=None, compare=False)

    @property
    def ratio_coefficient_m2(self) -> np.ndarray:
        """``P F / S_lim`` per environment [m^2]: ratio = this x G / (4 pi R^2)."""
        return np.array([p * self.ground_factor / s for p, s in zip(self.power_w, self.limit_w_m2)])


@dataclass(frozen=True)
class RatioGrid:
    """Total exposure ratios at points (worst height of the sum over transmitters).

    Attributes
    ----------
    ratio : ndarray (2, N)
        Per environment (:data:`ENVIRONMENTS` order) [1].
    worst_height_m : ndarray (2, N)
        Evaluation height at which the ratio was largest [m].
    near_field : ndarray (N,) of bool
        The point is within an emitter's near-field distance at some
        evaluation height: the far-field estimate is not valid there.
    evaluations : int
        Number of (point, emitter antenna, height) gain evaluations done.
    """

    ratio: np.ndarray
    worst_height_m: np.ndarray
    near_field: np.ndarray
    evaluations: int


# --------------------------------------------------------------------------- kernel

@dataclass(eq=False)
class _Group:
    """Emitters sharing one antenna placement and pattern: one geometry, max of coefficients."""

    transmitter: int
    x_m: float
    y_m: float
    height_m: float
    pattern: Pattern
    azimuth_deg: float
    tilt_deg: float
    polarisation: str
    coefficient: np.ndarray          # (2,) max over the group's configurations
    near_field_m: float
    members: list = field(default_factory=list)
    extent: Extent | None = None     # site coordinates (None: a point at the centre)

    reach_m: float = 0.0             # largest distance from the centre of radiation to any part [m]

    parts: tuple | None = None       # extent.structure_parts, computed once
    plan: "_NearestPlan | None" = None  # their float32 constants, made once

    def __post_init__(self) -> None:
        if self.extent is not None:
            self.reach_m = farthest_distance_m(self.extent, (self.x_m, self.y_m, self.height_m))
            self.parts = structure_parts(self.extent)
            self.plan = _NearestPlan(self.parts)

    def height_columns(self, heights) -> tuple:
        """The heights as columns (H, 1): z (float32), (z - height)^2 (float32, as the evaluators round R^2)
        and z - height (float64); kept for the last heights asked for."""
        cached = self.__dict__.get("_cols")
        if cached is None or cached[0] != heights:
            cached = (heights, (np.array([[h] for h in heights], dtype=_F32),
                                np.array([[(h - self.height_m) ** 2] for h in heights], dtype=_F32),
                                np.array([[h - self.height_m] for h in heights])))
            self.__dict__["_cols"] = cached
        return cached[1]

    def near_limits(self, heights) -> tuple:
        """For the peak-gain points (see :func:`_nearest_part_pass`): the candidates' squared horizontal reach
        [m^2], the squared near-field distance and its threshold (float32), and the peak gain / (4 pi)
        (float32); kept for the last heights asked for."""
        cached = self.__dict__.get("_near")
        if cached is None or cached[0] != heights:
            thr = max(self.near_field_m, MIN_FAR_FIELD_DIST_M)
            dzmin = max(min(abs(h - self.height_m) for h in heights) - self.reach_m, 0.0)
            lim = (thr + self.reach_m) ** 2 * (1.0 + 1e-6) - dzmin * dzmin   # relative margin for float32 rounding
            cached = (heights, (lim, _F32(self.near_field_m ** 2), _F32(thr * thr),
                                _F32(10.0 ** (self.pattern.peak_gain_dbi / 10.0) / _FOUR_PI)))
            self.__dict__["_near"] = cached
        return cached[1]

    def nearest_part(self, blk) -> "_BlockNearest | None":
        return None if self.extent is None else _BlockNearest(self.plan, blk)


def _groups(emitters: Sequence[SiteEmitter]) -> tuple[list[str], list[_Group]]:
    names: list[str] = []
    index: dict[str, int] = {}
    groups: dict[tuple, _Group] = {}
    for em in emitters:
        if em.transmitter not in index:
            index[em.transmitter] = len(names)
            names.append(em.transmitter)
        key = (em.transmitter, em.x_m, em.y_m, em.height_m, em.pattern, em.azimuth_deg, em.tilt_deg,
               em.polarisation, extent_key(em.extent))
        c = em.ratio_coefficient_m2
        if not np.all(np.isfinite(c)) or np.any(c <= 0):
            raise ValueError(f"emitter {em.transmitter}/{em.configuration}: coefficient {c} is not finite > 0")
        g = groups.get(key)
        if g is None:
            ext = None if em.extent is None else shifted(em.extent, (em.x_m, em.y_m, em.height_m))
            groups[key] = _Group(index[em.transmitter], em.x_m, em.y_m, em.height_m, em.pattern,
                                 em.azimuth_deg, em.tilt_deg, em.polarisation, c.copy(), em.near_field_m, [em], ext)
        else:
            g.coefficient = np.maximum(g.coefficient, c)
            g.near_field_m = max(g.near_field_m, em.near_field_m)
            g.members.append(em)
    counts = np.bincount([g.transmitter for g in groups.values()], minlength=len(names))
    # transmitters with one antenna first: their sum is one matrix product over a contiguous block
    ordered = sorted(groups.values(), key=lambda g: counts[g.transmitter] > 1)
    return names, ordered


_F32 = np.float32
_umath_clip = getattr(np._core.umath, "clip", None) if hasattr(np, "_core") else None
if _umath_clip is None:                    # numpy < 2: the public function (slower by its Python wrapper)
    _umath_clip = np.clip
#: Relative margin added to the single-precision tilted-beam kernel so that its rounding (at most 5e-6
#: relative, tested) never understates the pattern function.
_BEAM_F32_MARGIN = 2e-5
#: Further relative margin of the tilted beam per unit of its vertical exponent's half q/2: cos^2 of the
#: elevation is a float32 ratio good to a few ulps (3e-7), whose logarithm is multiplied by q/2 (over 1,000
#: for a 3 deg beam); 1e-6 per unit covers it (tested down to 3 deg beamwidths).
_BEAM_F32_MARGIN_PER_Q = 1e-6
#: And per unit of the deepest lobe that still counts, ln(1 / back-lobe floor) (12.7 at 55 dB front-to-back):
#: the exponent p ln((1 + cos az)/2) of a narrow beam (p over 4,000 at 3 deg) carries the float32 rounding of
#: its factors into the gain (tested down to 3 deg beamwidths and 60 dB).
_BEAM_F32_MARGIN_PER_LN = 2e-6


#: Relative lift of every kernel value, for the single-precision arithmetic of one evaluation: a few dozen
#: roundings of 2^-24 (6e-8) at most, the largest found 5e-7 below the float64 formula (isotropic sources,
#: dipoles and quarter-wave verticals at random positions, tilts and scales; tests/test_site.py). The beams and
#: pattern tables add their own margins for their pattern; this covers the rest of every path.
_KERNEL_F32_LIFT = 2e-6


def _kernel_lift(n_groups: int) -> float:
    """The relative lift of a sum of ``n_groups`` kernel values: :data:`_KERNEL_F32_LIFT` plus one float32
    rounding per term summed and one for the coefficient's own rounding to float32."""
    return _KERNEL_F32_LIFT + (n_groups + 1) * 2.0 ** -24


def _tilted_down_floor_lift(front_to_back_db: float) -> float:
    """Relative lift of the tilted beam's downward floor (1/2) (u/R)^2, applied where it governs.

    u, the up component in the antenna frame, is the float32 sum of two rounded products (horizontal part
    times -sin tilt, height difference times cos tilt), which cancel near the antenna's plane: its absolute
    error is within about 4.3 x 2^-24 R. The floor governs only where (1/2) (u/R)^2 exceeds the back-lobe
    floor, i.e. |u/R| > sqrt(2 floor), so its relative error there is within 2 x 4.3 x 2^-24 / sqrt(2 floor)
    plus a few roundings; 16 x 2^-24 / sqrt(2 floor) covers it (6.7e-4 = 0.003 dB at 60 dB front-to-back,
    1.3e-5 at 25 dB). Found by the hypothesis property in tests/test_site.py: at 60 dB the floor just below the
    antenna's plane fell 6.4e-5 below the float64 pattern, past the kernel's margin.
    """
    return 16.0 * 2.0 ** -24 / math.sqrt(2.0 * 10.0 ** (-front_to_back_db / 10.0))


#: Relative margin of the untilted beam (see :func:`_untilted_beam_margin`), a constant part ...
_UNTILTED_BEAM_F32_MARGIN = 1e-6
#: ... and one per unit of the exponent's size where the lobe counts, ln(1 / back-lobe floor).
_UNTILTED_BEAM_F32_MARGIN_PER_LN = 1e-6
#: Largest q/2 for which the untilted beam takes ln(1 + x) without compensation (see its evaluator).
_PLAIN_LOG_MAX_HQ = 4.0


def _untilted_beam_margin(front_to_back_db: float) -> float:
    """The untilted beam's relative lift, ``1e-6 (1 + ln(1 / back-lobe floor))``: 5e-6 at 18 dB front-to-back,
    1.5e-5 (0.00006 dB) at 60 dB, whatever the beamwidths. It covers the float32 rounding, in units
    u = 2^-24 = 6e-8 (numpy's float32 log is within 4 ulps, its exp within 2.52, both documented; 3.05 and
    2.54 measured here):

    - the exponent t = A - (q/2) log1p(x) <= 0 is a sum of two terms <= 0 (no cancellation): A rounded
      once (u |A|); x = dz^2 / rho^2 within 3u relatively, which moves log1p(x) by at most 3u of itself
      (x / (1 + x) <= log1p(x)); the compensated logarithm within 2 x 4 + 1 u of itself; q/2 and its
      product 2u; the sum u: |dt| <= 15u |t| < 1e-6 |t|, a relative change of the lobe of 1e-6 |t|.
      Where |t| exceeds L = ln(1 / floor) the floor governs and the computed lobe stays below
      floor (1 + 1e-6 L); so 1e-6 L covers every point;
    - exp 5u, k and the lift 3u, 1 / R^2 3u (the downward floor 4u): 11u; with the plain logarithm
      (q/2 <= :data:`_PLAIN_LOG_MAX_HQ`) rounding 1 + x adds up to u q/2 <= 4u absolutely to
      log1p: 15u < 1e-6 in all.

    The largest rounding found in 900 random beams (3 to 350 deg wide, 3 to 179 deg tall, 3.1 to 60 dB) is
    3e-7 (1 + L), a third of this bound (tested: never below the float64 pattern, at most twice the lift
    above it).
    """
    return _UNTILTED_BEAM_F32_MARGIN + _UNTILTED_BEAM_F32_MARGIN_PER_LN * front_to_back_db * math.log(10.0) / 10.0

class _TableLookup:
    """Single-precision bilinear lookup in a pattern table (the interpolation of patterns.table_gain)."""

    def __init__(self, tab) -> None:
        self.a_grid = tab.azimuth_deg
        self.a_ext = np.append(self.a_grid, self.a_grid[0] + 360.0)
        self.e_grid = tab.elevation_deg.astype(np.float64)
        self.n_az, self.n_el = self.a_grid.size, self.e_grid.size
        e_steps, a_steps = np.diff(self.e_grid), np.diff(self.a_ext)
        self.e_uniform = bool(np.allclose(e_steps, e_steps[0], rtol=1e-9, atol=0.0))
        self.a_uniform = bool(np.allclose(a_steps, a_steps[0], rtol=1e-9, atol=0.0))
        self.e0, self.de = _F32(self.e_grid[0]), _F32(e_steps[0])
        self.a0, self.da = _F32(self.a_grid[0]), _F32(a_steps[0])
        # the four corners of every cell side by side: one gather per point and height
        g = tab._gain_lin.astype(_F32)
        i1 = (np.arange(self.n_az) + 1) % self.n_az
        self.corners = np.ascontiguousarray(np.stack([g[:-1], g[:-1][:, i1], g[1:], g[1:][:, i1]], axis=-1)
                                            .reshape(-1, 4))

    def azimuth_cells(self, az_deg):
        """Cell index (the cell spans i and i + 1 mod n) and weight for bearings ``az_deg`` in (-180, 180] [deg]."""
        if self.a_uniform:
            xa = (az_deg - self.a0) / self.da
            fl = np.floor(xa)
            ta = xa - fl                           # exact in float32 (|xa| < 2^24)
            i = fl.astype(np.intp)
            i %= self.n_az
            return i, ta.astype(_F32, copy=False)
        az = np.mod(np.asarray(az_deg, dtype=np.float64), 360.0)
        az = np.where(az < self.a_grid[0], az + 360.0, az)
        i = np.clip(np.searchsorted(self.a_ext, az, side="right") - 1, 0, self.n_az - 1)
        ta = ((az - self.a_ext[i]) / (self.a_ext[i + 1] - self.a_ext[i])).astype(_F32)
        return i, ta

    def gain(self, i, ta, el_deg):
        """Linear gain at the azimuth cells (i, ta) and elevations ``el_deg`` [deg] (cells i and i + 1)."""
        if self.e_uniform:
            xe = (el_deg - self.e0) / self.de
            jf = np.floor(xe)
            np.maximum(jf, _F32(0.0), out=jf)
            np.minimum(jf, _F32(self.n_el - 2), out=jf)
            te = xe - jf                          # exact in float32; clamped to [0, 1] below
            np.maximum(te, _F32(0.0), out=te)
            np.minimum(te, _F32(1.0), out=te)
            row = jf.astype(np.intp)
        else:
            e_grid = self.e_grid
            j = np.clip(np.searchsorted(e_grid, el_deg, side="right") - 1, 0, self.n_el - 2)
            te = np.clip((el_deg - e_grid[j]) / (e_grid[j + 1] - e_grid[j]), 0.0, 1.0).astype(_F32)
            row = j.astype(np.intp)
        row *= self.n_az
        row += i
        c = np.take(self.corners, row, axis=0)
        lo = c[:, 1] - c[:, 0]
        lo *= ta
        lo += c[:, 0]
        hi = c[:, 3] - c[:, 2]
        hi *= ta
        hi += c[:, 2]
        hi -= lo
        hi *= te
        lo += hi
        return lo


#: Weight rounding allowed for in :class:`_UniformTable`, in cell units per float32 spacing of the
#: largest cell coordinate, beyond the angle error: scaling an angle into cells and adding the offset
#: round by at most one spacing (tested); the bound allows 4.
_TABLE_WEIGHT_SPACINGS = 4.0
#: Relative rounding of the float32 interpolation and of G / (4 pi R^2) allowed for (a few float32
#: ulps, 6e-8 each).
_TABLE_F32_REL = 2e-6
#: Rational function ``v (a0 + a1 v^2 + a2 v^4) / (1 + b1 v^2 + b2 v^4)`` for arctan(v) on [-1, 1]
#: (a least-maximum-error fit made for this kernel; its largest error is 1.9e-7 rad, tested), as
#: ``(a0, a1, a2, b1, b2)``, evaluated in partial fractions (:func:`_atan_terms`, eight numpy
#: operations) through the half-angle identity ``atan2(y, x) = 2 atan(y / (sqrt(x^2 + y^2) + x))``
#: (x >= 0), whose argument lies in [-1, 1]: the angles of :class:`_Angles` where numpy's float32
#: arctan is not vectorised (see there).
_ATAN_RATIONAL = (0.9999975269110996, 0.6559232704922369, 0.04055477459232964, 0.9891876806615268,
                  0.17083158360938025)
#: Bound of the angle error of :class:`_Angles` in float32 [rad]: numpy's vectorised float32 arctan and
#: arctan2 are within 4 ulps (numpy pull request 19478, the SIMD versions from SVML; 1.0 and 3.2 ulps,
#: 1.2e-7 and 3.2e-7 rad, found here), with the rounding of their float32 arguments; the rational
#: function through the half-angle identity twice its fit's 1.9e-7 plus the rounding of the argument and
#: the arithmetic (largest found in 2e7 random directions 8.0e-7). Both are tested within half the bound.
_TABLE_ANGLE_ERR_RAD = 2e-6
#: Added to a squared horizontal distance [m^2] before its square root so that a point at the antenna's
#: centre or on its up axis gets a direction (elevation 0 at the centre, the pole on the axis; the
#: azimuth of north, or of the main beam when tilted) instead of 0 / 0. It moves no angle by more than
#: 1e-6 rad at a point more than 1e-12 m off that axis; nearer, the elevation is within 1e-12 rad of the
#: pole, where the azimuth weighs nothing to float32 precision.
_TINY_M2 = 1e-30


def _atan_terms(scale: float) -> tuple:
    """``scale`` x :data:`_ATAN_RATIONAL` in partial fractions, ``(A, alpha, -r1, beta, -r2)`` in float32:
    ``scale arctan(v) = v (A + alpha / (v^2 - r1) + beta / (v^2 - r2))``; the denominator's roots r1, r2
    are real and below -1 (the terms are all positive on [0, 1]: no cancellation)."""
    a0, a1, a2, b1, b2 = _ATAN_RATIONAL
    disc = math.sqrt(b1 * b1 - 4.0 * b2)
    r1, r2 = (-b1 - disc) / (2.0 * b2), (-b1 + disc) / (2.0 * b2)
    big = a2 / b2
    c1, c0 = a1 - big * b1, a0 - big
    alpha, beta = (c1 * r1 + c0) / (b2 * (r1 - r2)), (c1 * r2 + c0) / (b2 * (r2 - r1))
    return tuple(_F32(t) for t in (scale * big, scale * alpha, -r1, scale * beta, -r2))


def _atan_scaled(v, terms):
    """``scale arctan(v)`` for float32 ``v`` in [-1, 1] (overwritten), ``terms`` from :func:`_atan_terms`."""
    big, alpha, m1, beta, m2 = terms
    w = v * v
    t = w + m1
    np.divide(alpha, t, out=t)
    w += m2
    np.divide(beta, w, out=w)
    t += w
    t += big
    v *= t
    return v


def _simd_arctan() -> bool:
    """True when numpy runs its float32 arctan and arctan2 vectorised on this machine (numpy >= 2 says so)."""
    try:
        from numpy.lib.introspect import opt_func_info
        info = opt_func_info(func_name="^arctan2?$")
        targets = [info["arctan"]["ff"]["current"], info["arctan2"]["fff"]["current"]]
        return not any("baseline" in t for t in targets)
    except Exception:   # older numpy, or no such information: the rational function is always fast
        return False


class _Angles:
    """Float32 angles [rad] within :data:`_TABLE_ANGLE_ERR_RAD`, the cheapest way this machine has.

    numpy's float32 arctan and arctan2 are vectorised (SIMD) where the processor has AVX-512: a third to
    half a nanosecond a value, when both operands run contiguously along the last axis (a broadcast
    column, stride 0, falls back to a scalar loop two to three times slower). Elsewhere they are scalar
    calls costing several times the whole far-field formula, and :data:`_ATAN_RATIONAL` (eight numpy
    operations through the half-angle identity) takes their place. ``simd`` chooses (None: ask numpy once).
    """

    _simd_default: bool | None = None

    def __init__(self, simd: bool | None = None) -> None:
        if simd is None:
            if _Angles._simd_default is None:
                _Angles._simd_default = _simd_arctan()
            simd = _Angles._simd_default
        self.simd = bool(simd)
        self._atan2 = _atan_terms(2.0)
        self._half_pi = _F32(0.5 * math.pi)

    def atan2(self, y, x, out=None):
        """``atan2(y, x)`` in (-pi, pi] (into ``out`` where numpy's is used, else a new array; ``x`` not -0.0
        where ``y`` is 0: the angle there is 0)."""
        if self.simd:
            return np.arctan2(y, x, out=out)
        # from the nearer of the +x and -x axes: alpha = 2 atan(|y| / (r + |x|)) in [0, pi/2]
        r = x * x
        r += y * y
        r += _F32(_TINY_M2)
        np.sqrt(r, out=r)
        r += np.abs(x)
        np.divide(np.abs(y), r, out=r)
        al = _atan_scaled(r, self._atan2)
        q = self._half_pi
        # behind (x < 0): pi - alpha; then the side of y
        np.subtract(q, al, out=al)
        np.copysign(al, x, out=al)
        np.subtract(q, al, out=al)
        np.copysign(al, y, out=al)
        return al

    def atan_ratio(self, num, den):
        """``atan(num / den)`` in [-pi/2, pi/2] for ``den`` > 0 (overwrites ``num`` where it is a float32 array
        of the result's shape; otherwise a new array)."""
        full = isinstance(num, np.ndarray) and num.dtype == _F32 and num.shape == np.broadcast_shapes(
            num.shape, np.shape(den))
        if self.simd:
            t = np.divide(num, den, out=num if full else None)
            return np.arctan(t, out=t)
        # 2 atan(num / (sqrt(num^2 + den^2) + den)), the argument in [-1, 1]
        v = np.multiply(num, num)
        v = v + den * den
        np.sqrt(v, out=v)
        v += den
        np.divide(num, v, out=v)
        return _atan_scaled(v, self._atan2)


_ANGLES: _Angles | None = None


def _angles() -> _Angles:
    """The angle functions of this machine (made once)."""
    global _ANGLES
    if _ANGLES is None:
        _ANGLES = _Angles()
    return _ANGLES


def _neighbour_max(a):
    """Largest value of each cell of ``a`` (rows: elevation, columns: azimuth) and its eight neighbours."""
    b = np.maximum(a, np.maximum(np.roll(a, 1, axis=1), np.roll(a, -1, axis=1)))
    out = b.copy()
    out[1:] = np.maximum(out[1:], b[:-1])
    out[:-1] = np.maximum(out[:-1], b[1:])
    return out


class _UniformTable:
    """Bilinear lookup in a pattern table on uniform grids (elevation -90 to 90), raised by its rounding bound.

    ``cells`` holds, per cell (elevation row, azimuth column), ``(c0, c1 - c0, c2 - c0, c3 - c2 - c1 + c0)``
    of the linear gain / (4 pi) at its corners (c0, c1 along azimuth at the lower elevation, c2, c3 at the
    upper), so that the bilinear value is ``c0 + ta d01 + te (e + ta f)`` with one gather per point and
    height. The rows are padded by a constant cell below and above (the poles: an elevation rounded just
    past +-90 deg reads the pole's gain), and the columns run round the azimuth as far as needed that an
    azimuth in [-180, 180] deg needs no modulo. c0 is raised by the bound of what the float32 angles,
    weights and arithmetic can lose (see :data:`_TABLE_ANGLE_ERR_RAD`, :data:`_TABLE_WEIGHT_SPACINGS`,
    :data:`_TABLE_F32_REL`), so that the result is never below the float64 bilinear value of
    patterns.table_gain.

    Angles come in radians (float32, :class:`_Angles`): azimuth ``az`` in [-pi, pi] to the cell
    coordinate ``az / da + offset`` (:meth:`columns`), elevation ``el`` in [-pi/2, pi/2] to
    ``el / de + oe`` (:meth:`at_elevation`), the integer part of oe taken into the gather's start
    (``cells`` from row ``oe_int`` on) rather than added to every value.
    """

    @staticmethod
    def fits(tab) -> bool:
        a, e = np.asarray(tab.azimuth_deg, dtype=float), np.asarray(tab.elevation_deg, dtype=float)
        if a.size < 2 or e.size < 2 or abs(e[0] + 90.0) > 1e-9 or abs(e[-1] - 90.0) > 1e-9:
            return False
        da, de = np.diff(np.append(a, a[0] + 360.0)), np.diff(e)
        return bool(np.allclose(da, da[0], rtol=1e-9, atol=0.0) and np.allclose(de, de[0], rtol=1e-9, atol=0.0)
                    and (e.size + 1) * (3 * a.size + 8) < 2 ** 24)

    def __init__(self, tab) -> None:
        a = np.asarray(tab.azimuth_deg, dtype=float)
        n_el, n_az = tab._gain_lin.shape
        g = tab._gain_lin / _FOUR_PI
        i1 = (np.arange(n_az) + 1) % n_az
        c0, c1, c2, c3 = g[:-1], g[:-1][:, i1], g[1:], g[1:][:, i1]
        d01, e, f = c1 - c0, c2 - c0, (c3 - c2) - (c1 - c0)
        # cell coordinates: xa = az / da + offset, column c holding the cell of table azimuth c mod n_az;
        # the offset (column_offset) is brought into [n_az / 2 + 2, 3 n_az / 2 + 2), so that xa lies in
        # [2, 2 n_az + 2) for az in [-180, 180] (a column at least 1 even where rounding reaches below 2);
        # xe = el / de + oe
        self.da, self.de = 360.0 / n_az, 180.0 / (n_el - 1)
        self.n_az, self.a0 = n_az, float(a[0])
        self.oe = 90.0 / self.de + 1.0                     # + 1: the padding row below
        self.n_col = 2 * n_az + 3
        # error bound of the weights in cell units: the largest coordinate's float32 spacing times the
        # allowance, and the angle error. A weight off by w may put the point in the neighbouring cell,
        # whose slope then counts: the slopes are the largest of each cell and its eight neighbours
        # (azimuth round the circle, elevation up to the poles).
        wa = (_TABLE_WEIGHT_SPACINGS * float(np.spacing(_F32(self.n_col)))
              + _TABLE_ANGLE_ERR_RAD / math.radians(self.da))
        we = (_TABLE_WEIGHT_SPACINGS * float(np.spacing(_F32(n_el + 1)))
              + _TABLE_ANGLE_ERR_RAD / math.radians(self.de))
        cmax = np.maximum(np.maximum(c0, c1), np.maximum(c2, c3))
        lift = (wa * _neighbour_max(np.abs(d01) + np.abs(f)) + we * _neighbour_max(np.abs(e) + np.abs(f))
                + _TABLE_F32_REL * cmax)
        body = np.stack([c0 + lift, d01, e, f], axis=-1)                 # (n_el - 1, n_az, 4)
        # the padding rows: constant in elevation, the pole rows' values along azimuth
        zero = np.zeros_like(g[0])
        lo = np.stack([c0[0] + lift[0], d01[0], zero, zero], axis=-1)[None]
        hi = np.stack([c2[-1] + lift[-1], d01[-1] + f[-1], zero, zero], axis=-1)[None]
        rows = np.concatenate([lo, body, hi])                             # (n_el + 1, n_az, 4)
        cols = np.arange(self.n_col) % n_az
        self.n_rows = n_el + 1
        cells = rows[:, cols].transpose(1, 0, 2).reshape(-1, 4)     # column by column: index col n_rows + row
        # float32, rounded up in c0 (the other terms' rounding is within the lift)
        c32 = cells.astype(_F32)
        up = c32[:, 0].astype(float) < cells[:, 0]
        c32[up, 0] = np.nextafter(c32[up, 0], _F32(np.inf))
        self.cells = c32
        # radians to cells; the elevation offset's integer part taken into the gather's start (every column
        # index is at least n_rows and every row at least -oe_int, so the index stays >= 0)
        self.sa, self.se = _F32(180.0 / math.pi / self.da), _F32(180.0 / math.pi / self.de)
        self.oe_int = int(math.floor(self.oe))
        self.oe_frac = _F32(self.oe - self.oe_int)
        self.cells_from_oe = self.cells[self.oe_int:]
        self.planes = tuple(np.ascontiguousarray(self.cells_from_oe[:, k]) for k in range(4))

    def column_offset(self, less_deg: float = 0.0) -> np.float32:
        """The offset that puts azimuth ``az - less_deg`` of the table at cell coordinate ``az / da + offset``."""
        lo = 0.5 * self.n_az + 2.0
        return _F32((-(less_deg + self.a0) / self.da - lo) % self.n_az + lo)

    def columns(self, az, offset, out=None):
        """Columns (float32, times ``n_rows``; into ``out`` if given) and weights of azimuths ``az`` [rad] in
        [-pi, pi] (float32, overwritten by the weights; ``offset`` from :meth:`column_offset`)."""
        az *= self.sa
        az += offset
        col = np.floor(az, out=out)
        az -= col                                          # exact (Sterbenz)
        col *= _F32(self.n_rows)                           # exact: integers below 2^24 (see fits)
        return col, az

    def at_elevation(self, el, col, ta, out, work=None, d2=None) -> None:
        """``out`` = G / (4 pi) at elevations ``el`` [rad] in [-pi/2, pi/2] (float32, overwritten), in the
        columns ``col`` with weights ``ta`` (broadcast: heights x points against points); divided by ``d2`` if
        given (the same as dividing ``out`` afterwards). ``work``: two float32 arrays and one of indices of
        ``out``'s shape (:class:`_Scratch`), or None (new arrays).

        ``c0 + ta d01 + te (e + ta f)``, each coefficient gathered from its own plane into a contiguous array
        (four gathers of one value cost about what one of four values did, and the arithmetic then runs on
        contiguous arrays instead of every fourth value: 6 % of a tilted table's kernel). Every gather index
        lies in the table (the rows by the padding, the columns by :meth:`columns`), so the gathers clip
        instead of checking; a NaN angle gives a NaN weight, hence a NaN value."""
        if work is None:
            work = (np.empty_like(out), np.empty_like(out), np.empty(out.shape, dtype=np.intp))
        te, v, ix = work
        el *= self.se
        if self.oe_frac:
            el += self.oe_frac
        np.floor(el, out=te)
        el -= te                                           # the elevation weight (exact)
        te += col                                          # exact: integers below 2^24 (see fits)
        np.copyto(ix, te, casting="unsafe")
        c0, d01, e, f = self.planes
        f.take(ix, mode="clip", out=te)                    # te (e + ta f)
        te *= ta
        te += e.take(ix, mode="clip", out=v)
        te *= el
        d01.take(ix, mode="clip", out=el)                  # c0 + ta d01
        el *= ta
        el += c0.take(ix, mode="clip", out=v)
        if d2 is None:
            np.add(te, el, out=out)
        else:
            te += el
            np.divide(te, d2, out=out)


class _Scratch:
    """Work arrays of the pattern-table evaluators by shape (heights x points), reused from one antenna and
    block to the next within one :func:`ratio_grid` call: six float32 arrays and one of gather indices."""

    __slots__ = ("_sets",)

    def __init__(self) -> None:
        self._sets: dict = {}

    @staticmethod
    def of(tables: dict | None) -> "_Scratch":
        """The scratch of one kernel call, kept in its ``tables`` (a new one without)."""
        if tables is None:
            return _Scratch()
        sc = tables.get("scratch")
        if sc is None:
            sc = tables["scratch"] = _Scratch()
        return sc

    def get(self, shape) -> tuple:
        w = self._sets.get(shape)
        if w is None:
            if len(self._sets) > 3:                # blocks come in one or two sizes; never hold many
                self._sets.clear()
            w = tuple(np.empty(shape, dtype=_F32) for _ in range(6)) + (np.empty(shape, dtype=np.intp),)
            self._sets[shape] = w
        return w


class _Block:
    """The points of one block: flat coordinate arrays, or a block of a regular grid.

    On a grid (the points ``np.meshgrid(gx, gy)`` flattened: x runs along each row, one row per y) every
    quantity that is a sum of a term in x and a term in y is formed from the two axes, one term per
    column and one per row, and added once per point: the same floating-point operations on the same
    values as point by point, so the same bits (addition is commutative in IEEE arithmetic, and
    ``a - b`` is ``a + (-b)``), at one operation per point instead of five.

    Attributes
    ----------
    gx, gy : ndarray or None
        The block's columns and rows (float64) on a grid; None for flat points.
    size : int
        Number of points (rows x columns on a grid, row by row).
    """

    __slots__ = ("gx", "gy", "size", "_px", "_py", "_d")

    def __init__(self, px=None, py=None, gx=None, gy=None) -> None:
        self.gx, self.gy = gx, gy
        self._px, self._py = px, py
        self.size = px.size if gx is None else gx.size * gy.size
        self._d = None

    @property
    def px(self):
        if self._px is None:
            self._px = np.tile(self.gx, self.gy.size)
        return self._px

    @property
    def py(self):
        if self._py is None:
            self._py = np.repeat(self.gy, self.gx.size)
        return self._py

    def sum32(self, fx, fy):
        """``fx + fy`` per point in float32 (flat), from a term per column and one per row on a grid (float32
        arrays over the block's columns and rows), or per point otherwise."""
        if self.gx is None:
            return fx + fy
        return np.add.outer(fy, fx).reshape(-1)

    def axes32(self, x0: float, y0: float, cx: float, cy: float):
        """``(dx cx, dy cy)`` rounded to float32, per column and row on a grid (per point otherwise)."""
        dx, dy = self._offsets(x0, y0)
        return (dx * cx).astype(_F32), (dy * cy).astype(_F32)

    def window_within(self, x0: float, y0: float, lim_m2: float) -> tuple:
        """``(ny, nx, r0, r1, c0, c1)``: the block as ny rows of nx points, and the rows r0:r1 and columns c0:c1
        that hold every point with ``(px - x0)^2 + (py - y0)^2 < lim_m2`` (on a grid: the rows whose
        ``(py - y0)^2`` and the columns whose ``(px - x0)^2`` are below it, a superset; flat points: one row,
        all of them)."""
        if self.gx is None:
            return 1, self.size, 0, 1, 0, self.size
        lim = lim_m2 * (1.0 + 1e-5)
        d = self.gy - y0
        d *= d
        rows = (d < lim).nonzero()[0]
        d = self.gx - x0
        d *= d
        cols = (d < lim).nonzero()[0]
        if not rows.size or not cols.size:
            return self.gy.size, self.gx.size, 0, 0, 0, 0
        return self.gy.size, self.gx.size, int(rows[0]), int(rows[-1]) + 1, int(cols[0]), int(cols[-1]) + 1

    def points(self, idx):
        """The coordinates of the points ``idx`` (flat indices into the block)."""
        if self.gx is None:
            return self._px[idx], self._py[idx]
        return self.gx[idx % self.gx.size], self.gy[idx // self.gx.size]

    def _offsets(self, x0: float, y0: float):
        """``(px - x0, py - y0)``: per column and per row on a grid, per point otherwise (kept for the last
        centre asked for: an evaluator asks several times)."""
        d = self._d
        if d is None or d[0] != x0 or d[1] != y0:
            if self.gx is None:
                d = (x0, y0, self._px - x0, self._py - y0)
            else:
                d = (x0, y0, self.gx - x0, self.gy - y0)
            self._d = d
        return d[2], d[3]

    def offsets32(self, x0: float, y0: float):
        """``(px - x0, py - y0)`` per point in float32 (flat; -0.0 made +0.0)."""
        dx, dy = self._offsets(x0, y0)
        dx, dy = dx.astype(_F32), dy.astype(_F32)
        dx += _F32(0.0)
        dy += _F32(0.0)
        if self.gx is None:
            return dx, dy
        fx, fy = np.empty((self.gy.size, self.gx.size), dtype=_F32), np.empty((self.gy.size, self.gx.size), dtype=_F32)
        fx[...] = dx
        fy[...] = dy[:, None]
        return fx.reshape(-1), fy.reshape(-1)

    def lin(self, x0: float, y0: float, cx: float, cy: float):
        """``dx cx + dy cy`` per point (float64, flat), with ``dx = px - x0``, ``dy = py - y0``."""
        dx, dy = self._offsets(x0, y0)
        if self.gx is None:
            return dx * cx + dy * cy
        return np.add.outer(dy * cy, dx * cx).reshape(-1)

    def rho2(self, x0: float, y0: float):
        """``dx dx + dy dy`` per point (float64, flat)."""
        dx, dy = self._offsets(x0, y0)
        if self.gx is None:
            return dx * dx + dy * dy
        return np.add.outer(dy * dy, dx * dx).reshape(-1)


class _NearestPlan:
    """The constants of a structure's nearest-part distance (rfsafe.antenna.extent.structure_parts) in float32,
    made once per antenna: a block then does array operations only (:class:`_BlockNearest`)."""

    __slots__ = ("ref", "quadratic", "discs", "spheres", "columns", "slopes")

    def __init__(self, parts) -> None:
        ref, quadratic, discs, spheres = parts
        f = _F32
        self.ref = (float(ref[0]), float(ref[1]))
        self.columns = None      # a grid's columns last seen, their offsets and projections' column terms
        self.quadratic = []
        for origin, plain, clamped in quadratic:
            terms = []
            for vec, half in [(v, None) for v in plain] + list(clamped):
                vx, vy, vz = (float(t) for t in vec)
                off = -float(np.dot(origin, vec))      # extent._Linear, as NearestPart rounds them
                terms.append((vx == 0.0 and vy == 0.0, f(vx), f(vy), f(off), f(vz),
                              None if half is None else f(half)))
            self.quadratic.append(terms)
        self.discs = [(f(c[0]), f(c[1]), f(c[2]), f(r)) for c, r in discs]
        self.spheres = [(f(c[0]), f(c[1]), f(c[2]), f(r)) for c, r in spheres]
        # the projections with a horizontal part, as (k, 1) columns: vx, vy, off
        flat = [t for terms in self.quadratic for t in terms if not t[0]]
        self.slopes = tuple(np.array([[t[i]] for t in flat], dtype=f).reshape(-1, 1) for i in (1, 2, 3))


class _BlockNearest:
    """Squared distances from the points of a :class:`_Block` to the nearest part of a structure, in single
    precision: :class:`rfsafe.antenna.extent.NearestPart` with ``dtype=float32`` (the same operations on
    the same values in the same order, bit for bit; tested), with the per-point parts formed from the
    block's axes on a grid (a projection ``a = x vx + y vy + off`` from one term per column and one per row),
    and the per-height parts computed in place.
    """

    __slots__ = ("_quadratic", "_discs", "_spheres", "_n")

    def __init__(self, plan: _NearestPlan, blk: _Block) -> None:
        f = _F32
        n = self._n = blk.size
        projections = None
        if blk.gx is None:
            x = (np.asarray(blk.px, dtype=float) - plan.ref[0]).astype(f)
            y = (np.asarray(blk.py, dtype=float) - plan.ref[1]).astype(f)
            grid = False
        else:
            if plan.columns is None or plan.columns[0] is not blk.gx:
                x = (blk.gx - plan.ref[0]).astype(f)
                plan.columns = (blk.gx, x, x * plan.slopes[0])
            x = plan.columns[1]
            y = (blk.gy - plan.ref[1]).astype(f)
            grid = True
            if plan.slopes[0].size:
                # every projection's outer sum (y vy + x vx) + off at once: the rows' terms broadcast into
                # place, the columns' (the same for every block of rows) and the offsets added
                k = plan.slopes[0].size
                projections = np.empty((k, y.size, x.size), dtype=f)
                np.copyto(projections, (y * plan.slopes[1])[:, :, None])
                projections += plan.columns[2][:, None, :]
                projections += plan.slopes[2][:, :, None]
                projections = iter(projections.reshape(k, n))

        def per_point(ax, ay):
            """``ax + ay`` per point: an outer sum on a grid (rows of y, columns of x), flat."""
            return np.add.outer(ay, ax).reshape(-1) if grid else ax + ay

        self._quadratic = []
        for terms in plan.quadratic:
            const, per_height, cterms = None, [], []
            for vertical, vx, vy, off, c, half in terms:
                if vertical:
                    a = off                               # a scalar: the projection has no horizontal part
                elif projections is not None:
                    a = next(projections)
                else:
                    a = per_point(x * vx, y * vy)
                    a += off
                if c != 0.0:
                    (per_height if half is None else cterms).append((a, c, half))
                    continue
                e2 = np.square(a) if half is None else _clamped_square(a, half)
                if const is None:
                    const = e2
                elif isinstance(const, np.ndarray) and const.shape == (n,):
                    const += e2
                else:
                    const = const + e2
            if const is None:
                const = np.zeros(n, dtype=f)
            elif np.shape(const) != (n,):
                const = np.full(n, const, dtype=f)
            self._quadratic.append((const, per_height, cterms))
        self._discs = []
        for cx, cy, cz, r in plan.discs:
            dx, dy = x - cx, y - cy
            rho = np.sqrt(per_point(dx * dx, dy * dy))
            rho -= r
            np.maximum(rho, 0.0, out=rho)
            self._discs.append((rho * rho, cz))
        self._spheres = []
        for cx, cy, cz, r in plan.spheres:
            dx, dy = x - cx, y - cy
            self._spheres.append((per_point(dx * dx, dy * dy), cz, r))

    def squared_m2(self, z_m):
        """Squared distances [m^2] at heights ``z_m`` (float32: a scalar, or (H, 1) for every height at once)."""
        best = None
        n = self._n
        for const, terms, cterms in self._quadratic:
            d2 = const
            for a, c, half in terms + cterms:
                t = a + c * z_m
                if not isinstance(t, np.ndarray) or t.ndim == 0:   # a vertical projection at one height
                    t = np.square(t if half is None else t - np.clip(t, -half, half))
                elif half is None:
                    np.square(t, out=t)
                else:
                    t = _clamped_square(t, half)
                if d2 is not const:
                    d2 += t
                elif np.ndim(t) and t.shape[-1] == n:
                    d2 = np.add(const, t, out=t)
                else:
                    d2 = const + t
            best = d2 if best is None else np.minimum(best, d2)
        for rho2, cz in self._discs:
            d2 = np.square(z_m - cz)
            d2 = rho2 + d2
            best = d2 if best is None else np.minimum(best, d2)
        for rho2, cz, r in self._spheres:
            d = np.sqrt(rho2 + np.square(z_m - cz))
            d -= r
            np.maximum(d, 0.0, out=d)
            d *= d
            best = d if best is None else np.minimum(best, d)
        if best is not None and self._quadratic and best is self._quadratic[0][0]:
            best = best.copy()
        return best


def _clamped_square(t, half):
    """``(t - clip(t, -half, half))^2`` (as extent.NearestPart), in place in ``t`` when it is an array."""
    if not isinstance(t, np.ndarray) or t.ndim == 0:
        return np.square(t - np.clip(t, -half, half))
    m = _umath_clip(t, -half, half)
    t -= m
    np.square(t, out=t)
    return t


def _grid_axes(x, y):
    """``(gx, gy)`` if the points are ``np.meshgrid(gx, gy)`` flattened (bit for bit), else None."""
    n = x.size
    if n < 4:
        return None
    change = np.flatnonzero(y != y[0])
    nx = int(change[0]) if change.size else n
    if nx < 2 or n % nx or n // nx < 2:
        return None
    gx, gy = x[:nx], y[::nx]
    xi, yi = x.view(np.int64).reshape(-1, nx), y.view(np.int64).reshape(-1, nx)
    if not (np.array_equal(xi, np.broadcast_to(gx.view(np.int64), xi.shape))
            and (yi == gy.view(np.int64)[:, None]).all()):
        return None
    return gx.copy(), gy.copy()


def _blocks(x, y, chunk_points: int):
    """``(start, stop, _Block)`` covering the points in order, about ``chunk_points`` each (whole grid rows
    where the points form a grid, or pieces of one row when a row is longer)."""
    n = x.size
    axes = _grid_axes(x, y)
    if axes is None:
        for start in range(0, n, chunk_points):
            stop = min(n, start + chunk_points)
            yield start, stop, _Block(px=x[start:stop], py=y[start:stop])
        return
    gx, gy = axes
    nx = gx.size
    if nx <= chunk_points:
        rows = chunk_points // nx
        for r in range(0, gy.size, rows):
            r1 = min(gy.size, r + rows)
            yield r * nx, r1 * nx, _Block(gx=gx, gy=gy[r:r1])
        return
    for r in range(gy.size):
        for c in range(0, nx, chunk_points):
            c1 = min(nx, c + chunk_points)
            yield r * nx + c, r * nx + c1, _Block(gx=gx[c:c1], gy=gy[r:r + 1])


def _evaluator(g: _Group, tables: dict | None = None) -> tuple[Callable, Callable]:
    """Return ``prepare(block) -> state`` and ``at(state, dz, out, d2=None)`` computing G/(4 pi R^2) [1/m^2].

    With ``d2`` (squared distances to the nearest part of the structure [m^2]) it computes G/(4 pi d2)
    instead: the gain is still taken toward the point from the centre of radiation.

    ``state[0]`` is the squared horizontal distance [m^2] (float32), or None where nothing needs it (a
    tilted pattern table with a structure on a grid: see :func:`_nearest_part_pass`).
    Untilted antennas get closed forms that reuse the height-independent part
    of the geometry; tilted dipoles, beams and pattern tables rotate the
    direction into the antenna frame from height-independent terms; other
    tilted antennas go through the pattern's own gain function.
    The per-height arithmetic is single precision (relative rounding about
    1e-6, far below the uncertainty of any input); the closed forms agree
    with the general path to that precision (tested); the tilted beam and
    the pattern tables are raised by a stated bound of their rounding, so
    that they are never below the float64 value (tested).

    An ``at`` with the attribute ``all_heights`` takes every height at once:
    ``dz`` (H, 1), ``out`` and ``d2`` (H, P), ``d2`` always given.

    ``tables``: lookups of pattern tables already prepared, by the table's identity (emitters often
    share one table), filled as they are made.
    """
    pat = g.pattern
    kind = pat.kind
    k = _F32(10.0 ** (pat.peak_gain_dbi / 10.0) / _FOUR_PI)
    a = math.radians(g.azimuth_deg)
    sa, ca = math.sin(a), math.cos(a)
    untilted = g.tilt_deg == 0.0
    vertical_axis = kind == "quarter-wave-vertical" or g.polarisation == "vertical"

    def base(blk):
        return blk.rho2(g.x_m, g.y_m).astype(_F32)

    def fix_origin(rho2, dz, out):
        """At R = 0 the power density is infinite (flagged as near field by the caller)."""
        if dz == 0.0 and rho2.min() == 0.0:
            out[rho2 == 0.0] = np.inf

    if kind == "isotropic":
        def prepare(blk):
            return (base(blk),)

        def at(s, dz, out, d2=None):
            if d2 is not None:
                np.divide(k, d2, out=out)
                return
            np.add(s[0], _F32(dz * dz), out=out)
            with np.errstate(divide="ignore"):
                np.divide(k, out, out=out)
        return prepare, at

    if kind in ("short-dipole", "half-wave-dipole", "quarter-wave-vertical"):
        # With num = R cos(th) (component along the element axis) and den = R^2 sin^2(th):
        #   short dipole   G/R^2 = Gpk den / R^4
        #   half-wave      G/R^2 = Gpk cos^2(pi/2 cos th) / den = Gpk sin^2(pi/2 t) / den,
        #                  t = 1 - |cos th| = den / (R (R + |num|))   (no cancellation near the axis)
        # den is the sum of the squared components across the axis (never R^2 - num^2). A horizontal
        # element lies along the antenna's right axis, which a tilt does not move; a vertical element
        # (or a quarter-wave vertical) lies along the up axis, tilted with it.
        a_t = math.radians(g.tilt_deg)
        st32, ct32 = _F32(math.sin(a_t)), _F32(math.cos(a_t))

        def prepare(blk):
            rho2 = base(blk)
            if vertical_axis and untilted:
                return rho2, None, None
            if vertical_axis:
                return (rho2, blk.lin(g.x_m, g.y_m, sa, ca).astype(_F32),
                        np.square(blk.lin(g.x_m, g.y_m, ca, -sa)).astype(_F32))
            num = np.abs(blk.lin(g.x_m, g.y_m, ca, -sa)).astype(_F32)   # along the wire (the "right" axis)
            fwd = blk.lin(g.x_m, g.y_m, sa, ca).astype(_F32)             # horizontal, across the wire
            return rho2, num, fwd * fwd

        def at(s, dz, out, d2=None):
            rho2, anum, fwd2 = s
            dz2 = _F32(dz * dz)
            r2 = rho2 + dz2
            if vertical_axis and untilted:
                den, anum = rho2, _F32(abs(dz))   # R^2 sin^2 = horizontal distance^2
            elif vertical_axis:                  # anum holds the horizontal forward part, fwd2 right^2
                dz32 = _F32(dz)
                f = anum * ct32
                f += dz32 * st32
                den = f * f
                den += fwd2
                anum = anum * (-st32)
                anum += dz32 * ct32
                np.abs(anum, out=anum)
            else:
                den = fwd2 + dz2
            with np.errstate(divide="ignore", invalid="ignore"):
                if kind == "short-dipole":
                    np.multiply(r2, r2, out=out)
                    np.divide(den, out, out=out)
                else:
                    np.sqrt(r2, out=out)
                    t = out + anum
                    t *= out
                    np.divide(den, t, out=t)
                    t *= _F32(0.5 * math.pi)
                    np.sin(t, out=t)
                    t *= t
                    np.divide(t, den, out=out)
            out *= k
            if den.min() == 0.0:                  # 0/0 on the element axis: a null, unless R = 0
                zero = den == 0.0
                out[zero] = 0.0
                out[zero & (r2 == 0.0)] = np.inf
            if d2 is not None:                    # G / R^2 -> G / d^2
                out *= r2
                out /= d2
        return prepare, at

    if untilted and kind == "beam":
        # lobe = [(1 + cos az)/2]^p cos^q(el) = exp(A - (q/2) log1p(dz^2 / rho^2)) with the height-independent
        # A = p ln((1 + cos az)/2) <= 0 (float64, then rounded once). Both terms of the exponent are <= 0, so
        # its float32 error is relative to its own size, which the back-lobe floor bounds where the lobe
        # counts (see _untilted_beam_margin); the result is raised by that margin. (A = p ln(half) + (q/2)
        # ln(rho^2) less (q/2) ln(R^2) per height, as before, lost 5e-4 to float32 for a 3 deg vertical
        # beamwidth: two logarithms of thousands, magnified by q/2 over 1,000, cancelling.)
        p, q = beam_exponents(pat.beamwidth_h_deg, pat.beamwidth_v_deg)
        floor = _F32(10.0 ** (-pat.front_to_back_db / 10.0))
        m_hq = _F32(-0.5 * q)
        # without the compensation, rounding 1 + x moves ln(1 + x) by up to 2^-24 (6e-8) absolutely, the
        # exponent by q/2 times that: for q/2 <= _PLAIN_LOG_MAX_HQ (vertical beamwidths over 47 deg)
        # at most 2.4e-7, within the constant part of the margin, and the plain logarithm saves 0.7 ns a value
        compensated = 0.5 * q > _PLAIN_LOG_MAX_HQ
        k_up = _F32(float(k) * (1.0 + _untilted_beam_margin(pat.front_to_back_db)))

        def prepare(blk):
            rho2 = blk.rho2(g.x_m, g.y_m)
            rho = np.sqrt(rho2)
            fwd = blk.lin(g.x_m, g.y_m, sa, ca)
            with np.errstate(divide="ignore", invalid="ignore"):
                cos_az = np.where(rho > 0.0, fwd / rho, 1.0)
                half = 0.5 * (1.0 + cos_az)
                # near the back 1 + cos az cancels (within 1e-8 rad it rounds to 0, and a wide beam's lobe,
                # 0.09 G0 there at 359 deg, fell to the floor): (rho + f)/(2 rho) = r^2/(2 rho (rho - f)), r the
                # right component, exact there; used where half < 1e-3 (relative error of the plain form
                # below 1e-13 elsewhere), as patterns.beam_gain does behind every beam
                back = np.flatnonzero(half < 1e-3)
                if back.size:
                    rb, fb = rho[back], fwd[back]
                    rt = blk.lin(g.x_m, g.y_m, ca, -sa)[back]
                    half[back] = np.where(fb < 0.0, 0.5 * rt * rt / (rb * (rb - fb)), half[back])
                half = np.maximum(half, 0.0)
                amp = (p * np.log(half)).astype(_F32)
                inv_rho2 = (1.0 / rho2).astype(_F32)            # inf on the up axis (rho = 0)
            return rho2.astype(_F32), amp, inv_rho2

        def at(s, dz, out, d2=None):
            rho2, amp, inv_rho2 = s
            dz2 = _F32(dz * dz)
            r2 = rho2 + dz2
            with np.errstate(divide="ignore", invalid="ignore"):
                # log1p(x), x = dz^2 / rho^2 = tan^2(el), as accurate as log1p: u = 1 + x rounded and its
                # exact rounding error e = x - (u - 1) (Fast2Sum for x <= 1; for 1 < x < 2^24, u - 1 and the
                # difference (Sterbenz) are exact too; beyond, e/u < 1e-7 against ln(u) > 16), ln(1 + x) =
                # ln(u) + e/u to within (e/u)^2 / 2. x = inf (rho = 0, on the up axis) gives a lobe of 0 or
                # NaN, which fmax passes over: the floors govern there (R = 0 is fixed below)
                x = np.multiply(inv_rho2, dz2)
                if compensated:
                    u = x + _F32(1.0)
                    e = u - _F32(1.0)
                    np.subtract(x, e, out=e)
                    e /= u
                    np.log(u, out=out)
                    out += e
                else:
                    x += _F32(1.0)
                    np.log(x, out=out)
                out *= m_hq
                out += amp
                np.exp(out, out=out)
                np.fmax(out, floor, out=out)
                if dz < 0.0:                      # downward floor below the beam (patterns.beam_downward_floor)
                    np.maximum(out, _F32(DOWNWARD_FLOOR_FRACTION * dz * dz) / r2, out=out)
                out *= k_up
                out /= r2 if d2 is None else d2
            if d2 is None:
                fix_origin(rho2, dz, out)
        return prepare, at

    if kind == "beam":
        # Tilted: in the antenna frame f = forward, r = right, u = up (components of R times the unit
        # direction); lobe = [(1 + f/rho')/2]^p (rho'/R)^q with rho'^2 = f^2 + r^2, in logarithms, then the
        # back-lobe floor and, below the antenna's plane (u < 0), the downward floor 1/2 (u/R)^2
        # (patterns.beam_gain). Single precision: within 5e-6 relative of the pattern function for lobes
        # down to 30 deg (tested); the result is raised by BEAM_F32_MARGIN so that rounding never
        # understates it, far below the 0.01 dB (2.3e-3) to which any gain is declared. fmax, not maximum:
        # rho' = 0 (along the up axis) gives NaN, where the lobe is 0 and the floors govern.
        p, q = beam_exponents(pat.beamwidth_h_deg, pat.beamwidth_v_deg)
        floor = _F32(10.0 ** (-pat.front_to_back_db / 10.0))
        p32, hq = _F32(p), _F32(0.5 * q)
        k_up = _F32(float(k) * (1.0 + _BEAM_F32_MARGIN + _BEAM_F32_MARGIN_PER_Q * float(hq)
                                + _BEAM_F32_MARGIN_PER_LN * pat.front_to_back_db * math.log(10.0) / 10.0))
        a_t = math.radians(g.tilt_deg)
        st32, ct32 = _F32(math.sin(a_t)), _F32(math.cos(a_t))
        down = _F32(DOWNWARD_FLOOR_FRACTION * (1.0 + _tilted_down_floor_lift(pat.front_to_back_db)))

        def prepare(blk):
            return (base(blk), blk.lin(g.x_m, g.y_m, sa, ca).astype(_F32),
                    np.square(blk.lin(g.x_m, g.y_m, ca, -sa)).astype(_F32))

        def at(s, dz, out, d2=None):
            rho2, hor, rgt2 = s
            dz32 = _F32(dz)
            r2 = rho2 + _F32(dz * dz)
            f = hor * ct32
            f += dz32 * st32
            up = hor * (-st32)
            up += dz32 * ct32
            rp2 = f * f
            rp2 += rgt2
            with np.errstate(divide="ignore", invalid="ignore"):
                # (1 + cos az)/2 = 1 - w in front (f >= 0) and w behind, w = r^2 / (2 rho' (rho' + |f|)) in
                # [0, 1/2]: no cancellation on either side
                t = np.sqrt(rp2)
                w = np.abs(f)
                w += t
                w *= t
                w += w
                np.divide(rgt2, w, out=w)
                # ln(1 - w) as accurate as log1p (numpy's is not vectorised: 12 ns a value): u = 1 - w
                # rounded and its rounding error e = (1 - u) - w, exact (Fast2Sum, u in [1/2, 1]); then
                # ln(1 - w) = ln(u) + e/u to within (e/u)^2 / 2 < 2e-15
                u = _F32(1.0) - w
                e = _F32(1.0) - u
                e -= w
                e /= u
                t = np.log(u)
                t += e
                # behind (f < 0): ln(w), put in exactly by 0/1 weights (a masked copy costs 5 ns a value;
                # t + (ln w - t) would round, and p magnifies it); ln(0) = -inf is held at -1e30, which gives
                # the same zero lobe without 0 x inf (NaN stays NaN)
                np.log(w, out=w)
                np.maximum(w, _F32(-1e30), out=w)
                back = (f < 0.0).astype(_F32)
                w *= back
                np.subtract(_F32(1.0), back, out=back)
                t *= back
                t += w
                t *= p32
                rp2 /= r2                               # cos^2 of the elevation in the antenna frame
                np.log(rp2, out=rp2)
                rp2 *= hq
                t += rp2
                np.exp(t, out=out)
                np.fmax(out, floor, out=out)
                # the downward floor below the antenna's plane only (u < 0; u >= 0 gives 0, or 0/0 at
                # R = 0, which fmax passes over)
                np.minimum(up, _F32(0.0), out=up)
                up *= up
                up *= down                              # raised by its rounding bound (_tilted_down_floor_lift)
                up /= r2
                np.fmax(out, up, out=out)
                out *= k_up
                out /= r2 if d2 is None else d2
        return prepare, at

    if kind == "table" and ((tables is not None and id(pat.table) in tables)
                            or _UniformTable.fits(pat.table)):
        # Bilinear on the linear gain, as patterns.table_gain, in single precision, never below it
        # (_UniformTable). All heights at once (``at.all_heights``: dz (H, 1), out and d2 (H, P)): the
        # per-call overhead of the few numpy operations per height is as large as their work. The angles
        # (_Angles, within the lift): untilted, the azimuth atan2(east, north) of the point and its column
        # and weight are found once per point, and per height only the elevation atan(dz / rho), one
        # gather and the interpolation. Tilted, the direction is rotated into the antenna frame from the
        # height-independent forward and right parts, as the tilted beam does: azimuth atan2(right,
        # forward), elevation atan(up / rho') with rho' the length of the horizontal part in that frame.
        look = None if tables is None else tables.get(id(pat.table))
        if look is None:
            look = _UniformTable(pat.table)
            if tables is not None:
                tables[id(pat.table)] = look          # the groups keep the table alive meanwhile
        angles = _angles()
        a_t = math.radians(g.tilt_deg)
        st32, ct32 = _F32(math.sin(a_t)), _F32(math.cos(a_t))
        tiny = _F32(_TINY_M2)

        # per point in float32 from float32 terms per column and row (on a grid one addition per point): a
        # rounding or two more than the float64 sums rounded once, moving no angle by more than 2e-7 rad
        # and no squared distance by more than 2 ulps, both within the lift (_TABLE_ANGLE_ERR_RAD,
        # _TABLE_F32_REL)
        def rho2_32(blk):
            return blk.sum32(*_squares32(blk, g.x_m, g.y_m))

        scratch = _Scratch.of(tables)
        if untilted:
            off = look.column_offset(g.azimuth_deg)

            def prepare(blk):
                # the bearing from north (dx, dy: +0.0 at the centre, never -0.0) less the antenna's azimuth
                rho2 = rho2_32(blk)
                dx, dy = blk.offsets32(g.x_m, g.y_m)
                rho = rho2 + tiny
                np.sqrt(rho, out=rho)
                return (rho2, rho, *look.columns(angles.atan2(dx, dy), off))

            def at(s, dz, out, d2):
                rho2, rho, col, ta = s
                look.at_elevation(angles.atan_ratio(dz.astype(_F32), rho), col, ta, out, scratch.get(out.shape)[4:], d2)
            at.all_heights = True
            return prepare, at

        off = look.column_offset()
        turn = [None, None, None]           # dz (H, 1) last seen and its tilted parts dz sin, dz cos (float32)
        columns = [None, None]              # the grid's columns last seen and their four terms (4, nx)

        def axis_terms(d, c_rgt, c_hor, plus_zero):
            """The four float32 terms of one axis, as below: d^2, right part, forward part (cos and -sin of
            the tilt), (4, n)."""
            t = np.empty((4, d.size), dtype=_F32)
            np.multiply(d, d, out=t[0], casting="same_kind")       # float64 products rounded once
            np.multiply(d, c_rgt, out=t[1], casting="same_kind")
            np.multiply(d, c_hor, out=t[2], casting="same_kind")
            if plus_zero:
                t[2] += _F32(0.0)
            np.multiply(t[2], -st32, out=t[3])
            t[2] *= ct32
            return t

        def prepare(blk):
            if blk.gx is not None:
                # on a grid the four per-point terms in one pass: the rows' terms broadcast into place and the
                # columns' (the same for every block of rows) added, the sums below in the same roundings
                dx, dy = blk._offsets(g.x_m, g.y_m)
                if columns[0] is not blk.gx:
                    columns[:] = blk.gx, axis_terms(dx, ca, sa, True)
                rows = axis_terms(dy, -sa, ca, False)
                k = 1 if g.extent is not None else 0   # with a structure nothing needs rho^2
                both = np.empty((4 - k, dy.size, dx.size), dtype=_F32)
                np.copyto(both, rows[k:, :, None])
                both += columns[1][k:, None, :]
                rgt, hor_c, hor_s = both[-3:].reshape(3, -1)
                rho2 = None if k else both[0].reshape(-1)
                rgt2 = rgt * rgt
                rgt2 += tiny
                return rho2, rgt, rgt2, hor_c, hor_s
            rho2 = rho2_32(blk)
            rgt = blk.sum32(*blk.axes32(g.x_m, g.y_m, ca, -sa))
            hx, hy = blk.axes32(g.x_m, g.y_m, sa, ca)
            hx += _F32(0.0)               # no -0.0 in hor_c (cos of the tilt > 0; see below)
            hor_c = blk.sum32(hx * ct32, hy * ct32)
            hor_s = blk.sum32(hx * (-st32), hy * (-st32))
            rgt2 = rgt * rgt
            rgt2 += tiny
            return rho2, rgt, rgt2, hor_c, hor_s

        def at(s, dz, out, d2):
            rho2, rgt, rgt2, hor_c, hor_s = s
            if turn[0] is not dz:
                dz32 = dz.astype(_F32)
                turn[:] = dz, dz32 * st32, dz32 * ct32
            w = scratch.get(out.shape)
            fwd = np.add(hor_c, turn[1], out=w[0])         # not -0.0: the azimuth of the up axis is 0
            col, ta = look.columns(angles.atan2(rgt, fwd, out=w[1]), off, out=w[2])
            up = np.add(hor_s, turn[2], out=w[3])
            fwd *= fwd                                      # rho'^2 + tiny
            fwd += rgt2
            np.sqrt(fwd, out=fwd)
            if angles.simd:                                 # atan(up / rho'), in place (see _Angles.atan_ratio)
                np.divide(up, fwd, out=up)
                el = np.arctan(up, out=up)
            else:
                el = angles.atan_ratio(up, fwd)
            look.at_elevation(el, col, ta, out, w[4:], d2)
        at.all_heights = True
        return prepare, at

    if kind == "table":
        # Tables on non-uniform grids (or not reaching both poles): bilinear as patterns.table_gain,
        # in single precision, the cells found by search. Untilted, the azimuth cell does not depend
        # on the height and is found once per point; tilted, both cells are found per height.
        look = _TableLookup(pat.table)
        if untilted:
            def prepare(blk):
                rho2 = base(blk)
                fwd = blk.lin(g.x_m, g.y_m, sa, ca).astype(_F32)
                rgt = blk.lin(g.x_m, g.y_m, ca, -sa).astype(_F32)
                with np.errstate(divide="ignore"):   # at rho = 0: +-90 deg, or 0 at dz = 0 (as arctan2)
                    inv_rho = np.where(rho2 > 0.0, _F32(1.0) / np.sqrt(rho2), _F32(1e30))
                return (rho2, inv_rho, *look.azimuth_cells(np.degrees(np.arctan2(rgt, fwd))))

            def at(s, dz, out, d2=None):
                rho2, inv_rho, i, ta = s
                el = np.arctan(_F32(dz) * inv_rho)
                el *= _F32(180.0 / math.pi)
                g_lin = look.gain(i, ta, el)
                if d2 is None:
                    np.add(rho2, _F32(dz * dz), out=out)
                    out *= _F32(_FOUR_PI)
                else:
                    np.multiply(d2, _F32(_FOUR_PI), out=out)
                with np.errstate(divide="ignore"):
                    np.divide(g_lin, out, out=out)
            return prepare, at

        a_t = math.radians(g.tilt_deg)
        st32, ct32 = _F32(math.sin(a_t)), _F32(math.cos(a_t))

        def prepare(blk):
            rho2 = base(blk)
            rgt = blk.lin(g.x_m, g.y_m, ca, -sa).astype(_F32)
            return rho2, blk.lin(g.x_m, g.y_m, sa, ca).astype(_F32), rgt, rgt * rgt

        def at(s, dz, out, d2=None):
            rho2, hor, rgt, rgt2 = s
            dz32 = _F32(dz)
            fwd = hor * ct32
            fwd += dz32 * st32
            up = hor * (-st32)
            up += dz32 * ct32
            i, ta = look.azimuth_cells(np.degrees(np.arctan2(rgt, fwd)))
            flat = fwd * fwd
            flat += rgt2
            np.sqrt(flat, out=flat)
            el = np.arctan2(up, flat, out=up)
            el *= _F32(180.0 / math.pi)
            g_lin = look.gain(i, ta, el)
            if d2 is None:
                np.add(rho2, dz32 * dz32, out=out)
                out *= _F32(_FOUR_PI)
            else:
                np.multiply(d2, _F32(_FOUR_PI), out=out)
            with np.errstate(divide="ignore"):
                np.divide(g_lin, out, out=out)
        return prepare, at

    # General path (tilted antennas): the horizontal components of the direction are found once
    # per point; per height only the vertical part, then the pattern's own gain. Double precision:
    # the dipole shapes lose digits near the element axis in single precision.
    a_t = math.radians(g.tilt_deg)
    st, ct = math.sin(a_t), math.cos(a_t)

    def prepare(blk):
        return blk.rho2(g.x_m, g.y_m), blk.lin(g.x_m, g.y_m, sa, ca), blk.lin(g.x_m, g.y_m, ca, -sa)

    def at(s, dz, out, d2=None):
        rho2, hor, rgt = s
        r2 = rho2 + dz * dz
        with np.errstate(divide="ignore", invalid="ignore"):
            inv = 1.0 / np.sqrt(r2)
            zero = ~np.isfinite(inv)
            inv[zero] = 0.0
            f = (hor * ct + dz * st) * inv
            f[zero] = 1.0                      # no direction at R = 0: the main beam (flagged there)
            rt = rgt * inv
            u = (dz * ct - hor * st) * inv
            d = AntennaDirection(f, rt, u, rt if g.polarisation == "horizontal" else u)
            np.divide(pat.gain(d), _FOUR_PI * (r2 if d2 is None else d2), out=out, casting="unsafe")
    return prepare, at


def _squares32(blk: _Block, x0: float, y0: float):
    """``(dx^2, dy^2)`` rounded to float32, per column and row on a grid (per point otherwise)."""
    dx, dy = blk._offsets(x0, y0)
    return (dx * dx).astype(_F32), (dy * dy).astype(_F32)


def _nearest_part_pass(grp: _Group, state, at, blk: _Block, heights, geo, near) -> None:
    """``G / (4 pi d^2)`` of one group at every height into ``geo`` (H, P); its near-field flags into ``near``.

    d is the distance to the nearest part of the structure (R from the centre of radiation without one).
    Points within the near-field distance of the structure at some height (or within
    MIN_FAR_FIELD_DIST_M of it) get the peak gain and ``max(d, MIN_FAR_FIELD_DIST_M)`` at every height
    instead, as a station's places do. Only points within that distance plus the structure's reach of
    the centre can be so close (triangle inequality): the others skip the test.
    """
    part = grp.nearest_part(blk)
    rho2 = state[0]
    all_heights = getattr(at, "all_heights", False)
    cols = grp.height_columns(heights)
    if all_heights:                     # the evaluator takes every height at once, with d^2 (H, P)
        d2s = rho2 + cols[1] if part is None else part.squared_m2(cols[0])
        if d2s.shape != (len(heights), blk.size):
            d2s = np.broadcast_to(d2s, (len(heights), blk.size))
    else:
        d2s = ([rho2 + _F32((h - grp.height_m) ** 2) for h in heights] if part is None   # as the evaluators round R^2
               else [part.squared_m2(_F32(h)) for h in heights])
    lim, nf2, thr2, k_peak = grp.near_limits(heights)
    idx = None
    if lim > 0.0:
        # the candidates' least squared distance over the heights (on a grid, over the window of rows and
        # columns that holds any; flat points as one row)
        ny, nx, r0, r1, c0, c1 = blk.window_within(grp.x_m, grp.y_m, lim)
        if r0 < r1 and c0 < c1:
            def window(a):
                return a.reshape(-1, ny, nx)[..., r0:r1, c0:c1]
            # without rho^2 (a tilted pattern table with a structure) every point of the window is a
            # candidate: a distance to the structure below the threshold puts the point within reach +
            # threshold anyway, so the test of rho^2 only saves work (were rounding to break that, a point
            # would get the peak gain: never less)
            inside = None if rho2 is None else window(rho2)[0] < lim
            if inside is None or inside.any():
                dmin = (np.min(window(d2s), axis=0) if all_heights
                        else np.minimum.reduce([window(d2)[0] for d2 in d2s]))
                close = dmin < thr2
                if inside is not None:
                    close &= inside
                ri, ci = close.nonzero()
                idx = (ri + r0) * nx + (ci + c0)
                if nf2 == thr2:                   # the same points (a near-field distance of 1 cm or more)
                    near[idx] = True
                else:
                    near_nf = dmin < nf2
                    if inside is not None:
                        near_nf &= inside
                    ri, ci = near_nf.nonzero()
                    near[(ri + r0) * nx + (ci + c0)] = True
    near_d2 = None
    if part is not None and idx is not None and idx.size:
        # the peak-gain points lie next to the structure, where float32 projections lose the digits a
        # distance of a few centimetres needs (1e-5 relative): their distances again in float64
        p64 = NearestPart(grp.extent, *blk.points(idx), parts=grp.parts)
        near_d2 = [p64.squared_m2(h) for h in heights]
    # (the caller ignores division by zero and invalid operations: R = 0 gives inf, replaced here)
    if all_heights:
        at(state, cols[2], geo, d2s)
        if idx is None or not idx.size:
            return
    for hi, (out, h, d2) in enumerate(zip(geo, heights, d2s)):
        if not all_heights:
            at(state, h - grp.height_m, out, None if part is None else d2)
        if near_d2 is not None:
            out[idx] = float(k_peak) / np.maximum(near_d2[hi], MIN_FAR_FIELD_DIST_M ** 2)
        elif idx is not None and idx.size:
            out[idx] = k_peak / np.maximum(d2[idx], _F32(MIN_FAR_FIELD_DIST_M ** 2))


def _chunk_pass(names, groups, evaluators, blk: _Block, heights, *, per_transmitter: bool):
    """Ratios for one chunk: totals (H, 2, P) or per transmitter (2, T, H, P)."""
    n_g, n_h, n_p = len(groups), len(heights), blk.size
    n_t = len(names)
    geo = np.empty((n_h, n_g, n_p), dtype=_F32)
    near = np.zeros(n_p, dtype=bool)
    # once per block (about 2 us each time); overflow too: a point 1e-20 m beside an antenna's axis overflows
    # 1 / rho^2 (or its float32 cast) to inf, the intended value (found with the fine samples next to antennas)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        for gi, (grp, (prepare, at)) in enumerate(zip(groups, evaluators)):
            state = prepare(blk)
            _nearest_part_pass(grp, state, at, blk, heights, geo[:, gi], near)
    counts, coef, n_single, c_single, multi = _sum_plan(groups, n_t)
    if per_transmitter:
        out = np.zeros((2, n_t, n_h, n_p))
        for gi, grp in enumerate(groups):
            for e in range(2):
                np.maximum(out[e, grp.transmitter], coef[gi, e] * geo[:, gi].astype(float),
                           out=out[e, grp.transmitter])
        return out, near
    total = np.zeros((n_h, 2, n_p), dtype=_F32)
    if n_single:
        for hi in range(n_h):
            np.matmul(c_single, geo[hi, :n_single], out=total[hi])
    for idx, c_t in multi:                # every height at once (the same sums, in the same order per height)
        sub = geo[:, idx]                 # (H, groups of t, P)
        for e in range(2):
            total[:, e] += np.max(c_t[e] * sub, axis=1)
    return total, near


def _sum_plan(groups, n_t: int) -> tuple:
    """The constants of :func:`_chunk_pass`'s sums, made once per list of groups: groups per transmitter,
    coefficients (n_g, 2), the leading groups of one-antenna transmitters (see _groups) and their float32
    coefficients (2, n_single), and per other transmitter its groups and float32 coefficient columns."""
    cache = _SUM_PLANS.get(id(groups))
    if cache is not None and cache[0] is groups:
        return cache[1]
    counts = np.bincount([g.transmitter for g in groups], minlength=n_t)
    # raised by the kernel's rounding bound, so that no total is below the float64 formula (_kernel_lift)
    coef = np.array([g.coefficient for g in groups]) * (1.0 + _kernel_lift(len(groups)))   # (n_g, 2)
    n_single = int(sum(counts[g.transmitter] == 1 for g in groups))   # they come first (see _groups)
    c_single = coef[:n_single].T.astype(_F32)                          # (2, n_single)
    multi = []
    for t in range(n_t):
        if counts[t] > 1:
            idx = [gi for gi, g in enumerate(groups) if g.transmitter == t]
            multi.append((idx, [coef[idx, e][:, None].astype(_F32) for e in range(2)]))
    plan = (counts, coef, n_single, c_single, multi)
    _SUM_PLANS.clear()                    # one list of groups at a time (a kernel call)
    _SUM_PLANS[id(groups)] = (groups, plan)
    return plan


_SUM_PLANS: dict = {}


def _check_points(x_m, y_m, heights_m):
    x = np.ascontiguousarray(x_m, dtype=float).ravel()
    y = np.ascontiguousarray(y_m, dtype=float).ravel()
    if x.shape != y.shape:
        raise ValueError("x_m and y_m must have the same number of points")
    h = tuple(float(v) for v in np.atleast_1d(heights_m))
    if not h:
        raise ValueError("at least one evaluation height is needed")
    return x, y, h


def ratio_grid(emitters: Sequence[SiteEmitter], x_m, y_m, heights_m, *, chunk_points: int = 16384,
               progress: Callable[[int, int], None] | None = None) -> RatioGrid:
    """Total exposure ratio at points: worst height of the sum over transmitters of each one's worst configuration.

    .. math::

        T_e(p) = \\max_h \\sum_t \\max_{c \\in t} \\frac{P_{c,e} F_c}{S_{lim,c,e}}
                 \\frac{G_c(\\hat r)}{4 \\pi R^2}

    Parameters
    ----------
    emitters : sequence of SiteEmitter
    x_m, y_m : array_like
        Point coordinates, east and north [m] (any shape; flattened).
    heights_m : sequence of float
        Evaluation heights above ground [m]; the worst is kept.
    chunk_points : int
        Points per block; memory is about ``8 (heights x antennas + 4 heights) x chunk_points`` bytes.
        Points that form a regular grid (``np.meshgrid(gx, gy)``, flattened or not; detected bit for bit)
        are taken in blocks of whole rows (or pieces of a row longer than this), with the terms that
        depend on x alone and on y alone formed once per column and row (:class:`_Block`): the same
        results as the same points in any order.
    progress : callable, optional
        Called as ``progress(points_done, points_total)`` after every block.

    Returns
    -------
    RatioGrid

    References
    ----------
    FCC OET Bulletin 65, Edition 97-01 (1997), section 2: far-field prediction
    S = EIRP F / (4 pi R^2) (eq. 3 and its ground-reflection form, from memory),
    and section 3: multiple transmitters, sum of the fractions of the limit.
    """
    x, y, heights = _check_points(x_m, y_m, heights_m)
    names, groups = _groups(emitters)
    tables: dict = {}
    evaluators = [_evaluator(g, tables) for g in groups]
    n = x.size
    ratio = np.empty((2, n))
    worst = np.empty((2, n))
    near = np.empty(n, dtype=bool)
    h_arr = np.array(heights)
    for start, stop, blk in _blocks(x, y, chunk_points):
        total, nf = _chunk_pass(names, groups, evaluators, blk, heights, per_transmitter=False)
        best = total.max(axis=0)                                # (2, P)
        if np.isnan(best).any():
            k = np.argmax(total, axis=0)
        else:
            # argmax's first height, without its slow strided pass: the number of leading heights below the
            # best (a running mask; masked stores per height cost seven times as much)
            later = total[0] != best
            k = later.astype(np.intp)
            for h in range(1, len(heights) - 1):
                later &= total[h] != best
                k += later
        ratio[:, start:stop] = best
        worst[:, start:stop] = h_arr[k]
        near[start:stop] = nf
        if progress is not None:
            progress(stop, n)
    return RatioGrid(ratio, worst, near, n * len(groups) * len(heights))


def transmitter_ratios(emitters: Sequence[SiteEmitter], x_m, y_m, heights_m, *,
                       chunk_points: int = 4096) -> tuple[list[str], np.ndarray]:
    """Each transmitter's own ratio at points (worst configuration, worst height).

    Returns
    -------
    names : list of str
        Transmitters in first-appearance order.
    ratio : ndarray (2, T, N)
        Per environment and transmitter [1].
    """
    x, y, heights = _check_points(x_m, y_m, heights_m)
    names, groups = _groups(emitters)
    tables: dict = {}
    evaluators = [_evaluator(g, tables) for g in groups]
    out = np.empty((2, len(names), x.size), dtype=_F32)   # single precision, like the kernel
    for start, stop, blk in _blocks(x, y, chunk_points):
        per, _ = _chunk_pass(names, groups, evaluators, blk, heights, per_transmitter=True)
        out[:, :, start:stop] = per.max(axis=2)
    return names, out


def limit_equivalent_w_m2(limits, power_w: float, pep_w: float) -> float:
    """Fold one environment's limits into a plane-wave-equivalent limit for ``power_w`` [W/m^2].

    Every far-field ratio is proportional to the power density, so the worst
    basis at any point is the one with the largest ``power x ratio per W/m^2``;
    an instantaneous basis is compared with the PEP.
    """
    from rfsafe import exposure as ex

    worst = max((pep_w if lim.basis == "instantaneous" else power_w) * float(ex.ratio_at(lim, 1.0))
                for lim in limits)
    return power_w / worst


def site_pattern(ant, peak_gain_dbi: float, tables: dict, field: str):
    """The pattern used on the grid and a short note of how it was chosen."""
    from rfsafe.antenna.patterns import PATTERN_KINDS, make_pattern

    if ant.use_pattern and ant.kind in PATTERN_KINDS:
        pat = make_pattern(ant.kind, peak_gain_dbi=peak_gain_dbi, front_to_back_db=ant.front_to_back_db,
                           beamwidth_h_deg=ant.beamwidth_h_deg, beamwidth_v_deg=ant.beamwidth_v_deg,
                           table=tables.get(ant.id), field=field)
        return pat, f"{ant.kind} pattern"
    return make_pattern("isotropic", peak_gain_dbi=peak_gain_dbi), \
        f"peak gain {peak_gain_dbi:.2f} dBi in every direction (conservative)"
