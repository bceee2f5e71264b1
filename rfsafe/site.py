"""Event sites: far-field exposure from several transmitters over a grid, keep-out zones and areas.

Power density from each emitter is the far-field prediction
``S = P G(direction) F / (4 pi R^2)`` with the pattern gain toward the point;
exposure ratios are ``S / S_lim`` with the plane-wave-equivalent limit of each
environment. A transmitter sends one configuration at a time, so at every
point and height each transmitter contributes its worst configuration there;
the contributions of all transmitters are summed (all may transmit at once,
conservative) and the worst evaluation height is kept.

This module is pure physics and geometry on numpy arrays: the site file, the
power chain (rfsafe.assess) and the limits are resolved by the caller.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Callable, Sequence

import numpy as np

from rfsafe.antenna.patterns import Pattern, beam_exponents, direction_in_antenna_frame
from rfsafe.errors import InputError, bad_value

__all__ = [
    "ENVIRONMENTS", "AREA_KINDS", "ROPE_STEP_M",
    "SiteEmitter", "RatioGrid", "Area",
    "ratio_grid", "transmitter_ratios", "points_in_polygon", "polygon_edge_points",
    "rope_off_radius_m", "validate_polygon", "summed_reach_m", "analyse_site",
    "SiteGrid", "TransmitterSite", "RegionSite", "Violation", "SiteAnalysis", "CHECKED_ENVIRONMENT",
    "MAX_GRID_POINTS", "SITE_CAUTIONS", "SiteStationResult", "SiteResult", "limit_equivalent_w_m2",
    "site_emitters", "assess_site",
]

#: Environments, in the order of the first axis of every ratio array.
ENVIRONMENTS = ("controlled", "uncontrolled")
#: Kinds of area on a site: who may be there while the stations transmit.
AREA_KINDS = ("public", "operators", "no-access")
#: Rope-off radii are rounded up to a multiple of this [m].
ROPE_STEP_M = 0.5

_FOUR_PI = 4.0 * math.pi


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
        Distance inside which the far-field estimate is not trusted
        (lambda/2pi, or 2D^2/lambda for an aperture) [m].
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


def _groups(emitters: Sequence[SiteEmitter]) -> tuple[list[str], list[_Group]]:
    names: list[str] = []
    index: dict[str, int] = {}
    groups: dict[tuple, _Group] = {}
    for em in emitters:
        if em.transmitter not in index:
            index[em.transmitter] = len(names)
            names.append(em.transmitter)
        key = (em.transmitter, em.x_m, em.y_m, em.height_m, em.pattern, em.azimuth_deg, em.tilt_deg,
               em.polarisation)
        c = em.ratio_coefficient_m2
        if not np.all(np.isfinite(c)) or np.any(c <= 0):
            raise ValueError(f"emitter {em.transmitter}/{em.configuration}: coefficient {c} is not finite > 0")
        g = groups.get(key)
        if g is None:
            groups[key] = _Group(index[em.transmitter], em.x_m, em.y_m, em.height_m, em.pattern,
                                 em.azimuth_deg, em.tilt_deg, em.polarisation, c.copy(), em.near_field_m, [em])
        else:
            g.coefficient = np.maximum(g.coefficient, c)
            g.near_field_m = max(g.near_field_m, em.near_field_m)
            g.members.append(em)
    counts = np.bincount([g.transmitter for g in groups.values()], minlength=len(names))
    # transmitters with one antenna first: their sum is one matrix product over a contiguous block
    ordered = sorted(groups.values(), key=lambda g: counts[g.transmitter] > 1)
    return names, ordered


_F32 = np.float32


def _evaluator(g: _Group) -> tuple[Callable, Callable]:
    """Return ``prepare(px, py) -> state`` and ``at(state, dz, out)`` computing G/(4 pi R^2) [1/m^2].

    ``state[0]`` is always the squared horizontal distance [m^2] (float32).
    Untilted antennas get closed forms that reuse the height-independent part
    of the geometry; tilted antennas and tables go through
    :func:`direction_in_antenna_frame` and the pattern's own gain function.
    The per-height arithmetic is single precision (relative rounding about
    1e-6, far below the uncertainty of any input); the closed forms agree
    with the general path to that precision (tested).
    """
    pat = g.pattern
    kind = pat.kind
    k = _F32(10.0 ** (pat.peak_gain_dbi / 10.0) / _FOUR_PI)
    a = math.radians(g.azimuth_deg)
    sa, ca = math.sin(a), math.cos(a)
    untilted = g.tilt_deg == 0.0
    vertical_axis = kind == "quarter-wave-vertical" or g.polarisation == "vertical"

    def base(px, py):
        dx = px - g.x_m
        dy = py - g.y_m
        return dx, dy, (dx * dx + dy * dy).astype(_F32)

    def fix_origin(rho2, dz, out):
        """At R = 0 the power density is infinite (flagged as near field by the caller)."""
        if dz == 0.0 and rho2.min() == 0.0:
            out[rho2 == 0.0] = np.inf

    if kind == "isotropic":
        def prepare(px, py):
            return (base(px, py)[2],)

        def at(s, dz, out):
            np.add(s[0], _F32(dz * dz), out=out)
            with np.errstate(divide="ignore"):
                np.divide(k, out, out=out)
        return prepare, at

    if untilted and kind in ("short-dipole", "half-wave-dipole", "quarter-wave-vertical"):
        # With num = R cos(th) (component along the element axis) and den = R^2 sin^2(th):
        #   short dipole   G/R^2 = Gpk den / R^4
        #   half-wave      G/R^2 = Gpk cos^2(pi/2 cos th) / den = Gpk sin^2(pi/2 t) / den,
        #                  t = 1 - |cos th| = den / (R (R + |num|))   (no cancellation near the axis)
        def prepare(px, py):
            dx, dy, rho2 = base(px, py)
            if vertical_axis:
                return rho2, None, None
            num = np.abs(dx * ca - dy * sa).astype(_F32)   # along the wire (the "right" axis)
            fwd = (dx * sa + dy * ca).astype(_F32)           # horizontal, across the wire
            return rho2, num, fwd * fwd

        def at(s, dz, out):
            rho2, anum, fwd2 = s
            dz2 = _F32(dz * dz)
            r2 = rho2 + dz2
            if vertical_axis:
                den, anum = rho2, _F32(abs(dz))   # R^2 sin^2 = horizontal distance^2
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
        return prepare, at

    if untilted and kind == "beam":
        # lobe = [(1 + cos az)/2]^p cos^q(el) = exp(A - (q/2) ln R^2) with the height-independent
        # A = p ln((1 + cos az)/2) + (q/2) ln(rho^2)
        p, q = beam_exponents(pat.beamwidth_h_deg, pat.beamwidth_v_deg)
        floor = _F32(10.0 ** (-pat.front_to_back_db / 10.0))
        hq = _F32(0.5 * q)

        def prepare(px, py):
            dx = px - g.x_m
            dy = py - g.y_m
            rho2 = dx * dx + dy * dy
            rho = np.sqrt(rho2)
            with np.errstate(divide="ignore", invalid="ignore"):
                cos_az = np.where(rho > 0.0, (dx * sa + dy * ca) / rho, 1.0)
                half = np.maximum(0.5 * (1.0 + cos_az), 0.0)    # rounding may give -1e-17 at the back
                amp = (p * np.log(half) + (0.5 * q) * np.log(rho2)).astype(_F32)
            return rho2.astype(_F32), amp

        def at(s, dz, out):
            rho2, amp = s
            r2 = rho2 + _F32(dz * dz)
            with np.errstate(divide="ignore", invalid="ignore"):
                np.log(r2, out=out)
                out *= -hq
                out += amp
                np.exp(out, out=out)
                np.maximum(out, floor, out=out)   # NaN (R = 0) propagates, fixed below
                out *= k
                out /= r2
            fix_origin(rho2, dz, out)
        return prepare, at

    def prepare(px, py):
        return base(px, py)

    def at(s, dz, out):
        dx, dy, rho2 = s
        d = direction_in_antenna_frame(dx, dy, dz, azimuth_deg=g.azimuth_deg, tilt_deg=g.tilt_deg,
                                       polarisation=g.polarisation)
        r2 = dx * dx + dy * dy + dz * dz
        with np.errstate(divide="ignore"):
            out[...] = pat.gain(d) / (_FOUR_PI * r2)
    return prepare, at


def _chunk_pass(names, groups, evaluators, px, py, heights, *, per_transmitter: bool):
    """Ratios for one chunk: totals (H, 2, P) or per transmitter (2, T, H, P)."""
    n_g, n_h, n_p = len(groups), len(heights), px.size
    n_t = len(names)
    geo = np.empty((n_h, n_g, n_p), dtype=_F32)
    near = np.zeros(n_p, dtype=bool)
    for gi, (grp, (prepare, at)) in enumerate(zip(groups, evaluators)):
        state = prepare(px, py)
        for hi, h in enumerate(heights):
            at(state, h - grp.height_m, geo[hi, gi])
        if grp.near_field_m > 0.0:
            dzmin = min(abs(h - grp.height_m) for h in heights)
            reach2 = grp.near_field_m ** 2 - dzmin * dzmin
            if reach2 > 0.0:
                near |= state[0] < reach2
    counts = np.bincount([g.transmitter for g in groups], minlength=n_t)
    coef = np.array([g.coefficient for g in groups])          # (n_g, 2)
    if per_transmitter:
        out = np.zeros((2, n_t, n_h, n_p))
        for gi, grp in enumerate(groups):
            for e in range(2):
                np.maximum(out[e, grp.transmitter], coef[gi, e] * geo[:, gi].astype(float),
                           out=out[e, grp.transmitter])
        return out, near
    n_single = int(sum(counts[g.transmitter] == 1 for g in groups))   # they come first (see _groups)
    c_single = coef[:n_single].T.astype(_F32)                          # (2, n_single)
    multi = [t for t in range(n_t) if counts[t] > 1]
    total = np.zeros((n_h, 2, n_p), dtype=_F32)
    for hi in range(n_h):
        if n_single:
            np.matmul(c_single, geo[hi, :n_single], out=total[hi])
        for t in multi:
            idx = [gi for gi, g in enumerate(groups) if g.transmitter == t]
            for e in range(2):
                total[hi, e] += np.max(coef[idx, e][:, None].astype(_F32) * geo[hi, idx], axis=0)
    return total, near


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
    evaluators = [_evaluator(g) for g in groups]
    n = x.size
    ratio = np.empty((2, n))
    worst = np.empty((2, n))
    near = np.empty(n, dtype=bool)
    h_arr = np.array(heights)
    for start in range(0, n, chunk_points):
        stop = min(n, start + chunk_points)
        total, nf = _chunk_pass(names, groups, evaluators, x[start:stop], y[start:stop], heights,
                                per_transmitter=False)
        k = np.argmax(total, axis=0)                            # (2, P)
        ratio[:, start:stop] = np.take_along_axis(total, k[None], axis=0)[0]
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
    evaluators = [_evaluator(g) for g in groups]
    out = np.empty((2, len(names), x.size), dtype=_F32)   # single precision, like the kernel
    for start in range(0, x.size, chunk_points):
        stop = min(x.size, start + chunk_points)
        per, _ = _chunk_pass(names, groups, evaluators, x[start:stop], y[start:stop], heights,
                             per_transmitter=True)
        out[:, :, start:stop] = per.max(axis=2)
    return names, out


# --------------------------------------------------------------------------- geometry

@dataclass(frozen=True)
class Area:
    """A polygon on the site with a kind (who may be there) and a label.

    ``polygon`` is a sequence of (x_m, y_m) vertices [m], not closed (the last
    vertex joins the first), in either winding; concave shapes are allowed.
    """

    label: str
    kind: str
    polygon: tuple[tuple[float, float], ...]


def validate_polygon(polygon, *, field: str) -> tuple[tuple[float, float], ...]:
    """Check a polygon: at least 3 distinct vertices, finite, non-zero area; return it as tuples.

    Raises
    ------
    InputError
        Naming ``field``.
    """
    pts = []
    for i, v in enumerate(polygon):
        if (not isinstance(v, (list, tuple)) or len(v) != 2
                or not all(isinstance(c, (int, float)) and not isinstance(c, bool) for c in v)):
            raise bad_value(f"{field}[{i}]", v, "must be a pair of numbers [x_m, y_m]")
        if not all(math.isfinite(c) for c in v):
            raise bad_value(f"{field}[{i}]", v, "must be finite numbers [x_m, y_m]")
        pts.append((float(v[0]), float(v[1])))
    if len(pts) < 3:
        raise bad_value(field, [list(p) for p in pts], "needs at least 3 vertices [[x_m, y_m], ...]")
    for i in range(len(pts)):
        if pts[i] == pts[(i + 1) % len(pts)]:
            raise bad_value(f"{field}[{(i + 1) % len(pts)}]", list(pts[(i + 1) % len(pts)]),
                            "repeats the previous vertex (the polygon closes itself; do not repeat vertex 0)")
    xs = np.array([p[0] for p in pts])
    ys = np.array([p[1] for p in pts])
    area = 0.5 * abs(np.dot(xs, np.roll(ys, -1)) - np.dot(ys, np.roll(xs, -1)))
    if not area > 0.0:
        raise bad_value(field, [list(p) for p in pts], "encloses no area (vertices on one line)")
    return tuple(pts)


def points_in_polygon(x_m, y_m, polygon) -> np.ndarray:
    """Which points lie inside a polygon (even-odd rule), vectorised over the points.

    A horizontal ray from each point crosses the polygon's edges; an odd
    number of crossings means inside. Works for concave polygons; points
    exactly on an edge may fall either way (callers also sample the edges,
    see :func:`polygon_edge_points`).

    Parameters
    ----------
    x_m, y_m : array_like
        Points [m], broadcast together.
    polygon : sequence of (x, y)
        Vertices [m].

    Returns
    -------
    ndarray of bool

    References
    ----------
    W. R. Franklin, "PNPOLY - point inclusion in polygon test" (crossing-number
    test) (common practice).
    """
    x = np.asarray(x_m, dtype=float)
    y = np.asarray(y_m, dtype=float)
    x, y = np.broadcast_arrays(x, y)
    inside = np.zeros(x.shape, dtype=bool)
    n = len(polygon)
    for i in range(n):
        x1, y1 = polygon[i]
        x2, y2 = polygon[(i + 1) % n]
        if y1 == y2:
            continue  # a horizontal edge is never crossed by a horizontal ray
        straddle = (y1 > y) != (y2 > y)
        x_cross = x1 + (y - y1) * ((x2 - x1) / (y2 - y1))
        inside ^= straddle & (x < x_cross)
    return inside


def polygon_edge_points(polygon, spacing_m: float) -> tuple[np.ndarray, np.ndarray]:
    """Points along a polygon's edges, vertices included, at most ``spacing_m`` apart [m]."""
    xs, ys = [], []
    n = len(polygon)
    for i in range(n):
        x1, y1 = polygon[i]
        x2, y2 = polygon[(i + 1) % n]
        k = max(1, math.ceil(math.hypot(x2 - x1, y2 - y1) / spacing_m))
        t = np.arange(k) / k
        xs.append(x1 + (x2 - x1) * t)
        ys.append(y1 + (y2 - y1) * t)
    return np.concatenate(xs), np.concatenate(ys)


def rope_off_radius_m(keep_out_m: float, grid_spacing_m: float) -> float:
    """Suggested rope-off radius: keep-out distance plus one grid spacing, rounded up to 0.5 m.

    The grid resolves the edge of a keep-out zone only to one spacing, so
    one spacing is added before rounding up to the next multiple of
    :data:`ROPE_STEP_M`. This is a suggestion from the far-field estimate,
    not a substitute for local rules or measurement.
    """
    if not keep_out_m > 0.0:
        return 0.0
    return math.ceil((keep_out_m + grid_spacing_m) / ROPE_STEP_M - 1e-9) * ROPE_STEP_M


# --------------------------------------------------------------------------- site analysis

#: Largest grid accepted (points); about 40 bytes of results per point are kept.
MAX_GRID_POINTS = 4_000_000
#: Region kinds in order of precedence where areas overlap (most restrictive first).
_PRECEDENCE = ("no-access", "operators", "public")
#: Which environment's limit applies to the people allowed in each region kind.
CHECKED_ENVIRONMENT = {"public": "uncontrolled", "open ground": "uncontrolled",
                       "outside the site": "uncontrolled", "operators": "controlled", "no-access": None}


@dataclass(frozen=True)
class SiteGrid:
    """The evaluation grid and the fields on it (kept out of JSON; see ``--csv``).

    ``ratio`` and ``worst_height_m`` have shape (2, ny, nx) (environments
    first); ``region`` (ny, nx) holds the index into ``region_labels``.
    """

    x_m: np.ndarray = field(repr=False)
    y_m: np.ndarray = field(repr=False)
    ratio: np.ndarray = field(repr=False)
    worst_height_m: np.ndarray = field(repr=False)
    near_field: np.ndarray = field(repr=False)
    region: np.ndarray = field(repr=False)
    region_labels: tuple[str, ...] = field(repr=False)
    spacing_m: float = 0.0
    nx: int = 0
    ny: int = 0
    extent_m: tuple[float, float, float, float] = (0.0, 0.0, 0.0, 0.0)   # x_min, x_max, y_min, y_max
    margin_m: float = 0.0
    evaluations: int = 0


@dataclass(frozen=True)
class TransmitterSite:
    """One transmitter on the site: where its keep-out zone reaches and the suggested rope-off radius."""

    transmitter: str
    x_m: float
    y_m: float
    height_m: float
    configurations: tuple[str, ...]
    near_field_m: float
    keep_out_m: dict[str, float]       # farthest grid point of the total zone where it dominates [m]
    own_keep_out_m: dict[str, float]   # farthest grid point where its own ratio alone exceeds 1 [m]
    rope_off_radius_m: float           # from the uncontrolled keep-out (see rope_off_radius_m)
    peak_gain_distance_m: dict[str, float]   # sqrt(P F G_peak / (4 pi S_lim)): 3-D bound of its own zone [m]
    flags: tuple[str, ...]


@dataclass(frozen=True)
class RegionSite:
    """An area (or the open ground, or outside the site) and the worst exposure found in it."""

    label: str
    kind: str                          # public, operators, no-access, open ground, outside the site
    checked_environment: str | None    # the limit that applies to the people allowed there
    points: int                        # grid points plus edge samples evaluated
    worst_ratio: dict[str, float]
    worst_x_m: float | None
    worst_y_m: float | None
    points_over: int                   # points above the checked limit
    dominant_transmitter: str | None   # largest own contribution at the worst point
    near_field_points: int             # points inside some emitter's near field (estimate not valid)
    verdict: str                       # "complies", "VIOLATION", "not checked" (no-access)


@dataclass(frozen=True)
class Violation:
    """A place where people allowed there would be exposed above their limit."""

    region: str
    kind: str
    environment: str
    worst_ratio: float
    x_m: float
    y_m: float
    points_over: int
    dominant_transmitter: str
    text: str


@dataclass(frozen=True)
class SiteAnalysis:
    """Everything computed for a site (no identity, no I/O)."""

    heights_m: tuple[float, ...]
    transmitters: tuple[TransmitterSite, ...]
    regions: tuple[RegionSite, ...]
    violations: tuple[Violation, ...]
    keep_out_points: dict[str, int]
    flags: tuple[str, ...]
    grid: SiteGrid


def _axis(lo: float, hi: float, spacing: float) -> np.ndarray:
    i0 = math.floor(lo / spacing + 1e-9)
    i1 = math.ceil(hi / spacing - 1e-9)
    return np.arange(i0, i1 + 1) * spacing


def summed_reach_m(emitters: Sequence[SiteEmitter]) -> float:
    """Distance beyond which even the peak-gain sum of all emitters is below every limit [m].

    At a distance of at least D from every antenna, the total ratio is at most
    ``sum_t max_c c G_peak / (4 pi D^2)``; this returns the D where that bound is 1.
    """
    names, groups = _groups(emitters)
    per_t = np.zeros((len(names), 2))
    for g in groups:
        per_t[g.transmitter] = np.maximum(per_t[g.transmitter],
                                          g.coefficient * 10.0 ** (g.pattern.peak_gain_dbi / 10.0))
    return float(math.sqrt(per_t.sum(axis=0).max() / _FOUR_PI))


def _dist_to_antennas(px, py, positions) -> np.ndarray:
    d = np.full(np.shape(px), np.inf)
    for (ax, ay) in positions:
        d = np.minimum(d, np.hypot(px - ax, py - ay))
    return d


def analyse_site(emitters: Sequence[SiteEmitter], *, boundary, areas: Sequence[Area], heights_m,
                 grid_spacing_m: float, progress: Callable[[int, int], None] | None = None,
                 field_prefix: str = "") -> SiteAnalysis:
    """Evaluate a site: grid of total ratios, keep-out zones, areas, violations, rope-off radii.

    The grid covers the site boundary plus :func:`summed_reach_m` (so no
    keep-out zone is cut off at the grid edge), at ``grid_spacing_m``.
    Ground inside the boundary that lies in no area is "open ground" and,
    like everything outside the boundary, is treated as public
    (conservative): a keep-out zone there must be roped off (declared as a
    no-access area). Where areas overlap, the most restrictive kind applies
    (no-access, then operators, then public). Checks: public ground against
    the uncontrolled limit; operators' areas against the controlled limit;
    no-access areas are not checked. Areas are checked at their grid points
    and along their edges (vertices included) at half the grid spacing.

    Parameters
    ----------
    emitters : sequence of SiteEmitter
    boundary : sequence of (x, y)
        Site boundary polygon [m].
    areas : sequence of Area
    heights_m : sequence of float
        Evaluation heights [m]; the worst is kept.
    grid_spacing_m : float
        Grid spacing [m].
    progress : callable, optional
        ``progress(done, total)`` while the grid is evaluated.
    field_prefix : str
        Prefix for field names in error messages.
    """
    heights = tuple(float(h) for h in heights_m)
    names, groups = _groups(emitters)
    positions = {t: sorted({(g.x_m, g.y_m) for g in groups if g.transmitter == i})
                 for i, t in enumerate(names)}
    reach = summed_reach_m(emitters)
    margin = max(2.0 * grid_spacing_m, math.ceil(reach / grid_spacing_m) * grid_spacing_m)
    bx = [p[0] for p in boundary] + [g.x_m for g in groups]
    by = [p[1] for p in boundary] + [g.y_m for g in groups]
    gx = _axis(min(bx) - margin, max(bx) + margin, grid_spacing_m)
    gy = _axis(min(by) - margin, max(by) + margin, grid_spacing_m)
    if gx.size * gy.size > MAX_GRID_POINTS:
        raise bad_value(f"{field_prefix}grid_spacing_m", grid_spacing_m,
                        f"gives {gx.size} x {gy.size} = {gx.size * gy.size} grid points over the site and the "
                        f"{margin:g} m margin its stations need (accepted: at most {MAX_GRID_POINTS}; "
                        "use a larger spacing)")
    xx, yy = np.meshgrid(gx, gy)
    res = ratio_grid(emitters, xx, yy, heights, progress=progress)
    ratio = res.ratio.reshape(2, gy.size, gx.size)
    near = res.near_field.reshape(gy.size, gx.size)

    # regions: 0 = outside the site, 1 = open ground, 2.. = areas (most restrictive wins)
    labels = ["outside the site", "open ground"] + [a.label for a in areas]
    kinds = ["outside the site", "open ground"] + [a.kind for a in areas]
    region = np.where(points_in_polygon(xx, yy, boundary), 1, 0).astype(np.int32)
    order = sorted(range(len(areas)), key=lambda i: -_PRECEDENCE.index(areas[i].kind))
    for i in order:  # least restrictive first, so the most restrictive is written last
        region[points_in_polygon(xx, yy, areas[i].polygon)] = 2 + i

    # keep-out points and who dominates them
    env_i = {e: k for k, e in enumerate(ENVIRONMENTS)}
    keep = {e: ratio[env_i[e]] > 1.0 for e in ENVIRONMENTS}
    any_keep = keep["controlled"] | keep["uncontrolled"]
    kx, ky = xx[any_keep], yy[any_keep]
    _, own = transmitter_ratios(emitters, kx, ky, heights) if kx.size else (names, np.zeros((2, len(names), 0)))
    flags: list[str] = []
    tx_results = []
    for t, name in enumerate(names):
        dist = _dist_to_antennas(kx, ky, positions[name])
        keep_out, own_keep = {}, {}
        for e in ENVIRONMENTS:
            ek = env_i[e]
            in_zone = keep[e][any_keep]
            dominant = in_zone & (np.argmax(own[ek], axis=0) == t) if kx.size else in_zone
            keep_out[e] = float(dist[dominant].max()) if dominant.any() else 0.0
            own_zone = own[ek, t] > 1.0 if kx.size else in_zone
            own_keep[e] = float(dist[own_zone].max()) if own_zone.any() else 0.0
        grp = [g for g in groups if g.transmitter == t]
        nf = max(g.near_field_m for g in grp)
        tflags = []
        dzmin = min(abs(h - g.height_m) for g in grp for h in heights)
        nf_reach = math.sqrt(max(nf * nf - dzmin * dzmin, 0.0))   # near field's horizontal reach at the nearest height
        if 0.0 < keep_out["uncontrolled"] <= nf_reach:
            tflags.append(f"{name}: the keep-out zone ({keep_out['uncontrolled']:.2f} m) lies inside the near "
                          f"field ({nf:.2f} m): far-field estimate; near-field analysis or measurement recommended")
        elif keep_out["uncontrolled"] > 0.0 and nf_reach > 0.0:
            tflags.append(f"{name}: the keep-out zone reaches into the near field (within {nf_reach:.2f} m of the "
                          "antenna on the ground), where the far-field estimate is not valid")
        if 0.0 < keep_out["uncontrolled"] < 3.0 * grid_spacing_m:
            tflags.append(f"{name}: the keep-out zone is less than 3 grid spacings across; "
                          "use a finer grid_spacing_m to resolve it")
        flags.extend(tflags)
        bound = np.max([g.coefficient * 10.0 ** (g.pattern.peak_gain_dbi / 10.0) for g in grp], axis=0)
        tx_results.append(TransmitterSite(
            transmitter=name, x_m=grp[0].x_m, y_m=grp[0].y_m, height_m=grp[0].height_m,
            configurations=tuple(m.configuration for g in grp for m in g.members), near_field_m=nf,
            keep_out_m=keep_out, own_keep_out_m=own_keep,
            rope_off_radius_m=rope_off_radius_m(keep_out["uncontrolled"], grid_spacing_m),
            peak_gain_distance_m={e: float(math.sqrt(bound[env_i[e]] / _FOUR_PI)) for e in ENVIRONMENTS},
            flags=tuple(tflags)))

    # regions: grid points plus edge samples of the areas
    regions = []
    violations = []
    for r, (label, kind) in enumerate(zip(labels, kinds)):
        mask = region == r
        px, py = xx[mask], yy[mask]
        pr = ratio[:, mask]
        pn = near[mask]
        if r >= 2:
            ex_, ey_ = polygon_edge_points(areas[r - 2].polygon, grid_spacing_m / 2.0)
            # an edge point strictly inside a more restrictive area belongs to that area
            keep_edge = np.ones(ex_.size, dtype=bool)
            for j, other in enumerate(areas):
                if _PRECEDENCE.index(other.kind) < _PRECEDENCE.index(kind):
                    keep_edge &= ~points_in_polygon(ex_, ey_, other.polygon)
            ex_, ey_ = ex_[keep_edge], ey_[keep_edge]
            if ex_.size:
                er = ratio_grid(emitters, ex_, ey_, heights)
                px, py = np.concatenate([px, ex_]), np.concatenate([py, ey_])
                pr = np.concatenate([pr, er.ratio], axis=1)
                pn = np.concatenate([pn, er.near_field])
        env = CHECKED_ENVIRONMENT[kind]
        worst = {e: float(pr[env_i[e]].max()) if px.size else 0.0 for e in ENVIRONMENTS}
        if px.size:
            k = int(np.argmax(pr[env_i[env or "uncontrolled"]]))
            wx, wy = float(px[k]), float(py[k])
            _, own_w = transmitter_ratios(emitters, [wx], [wy], heights)
            dom = names[int(np.argmax(own_w[env_i[env or "uncontrolled"], :, 0]))]
        else:
            wx = wy = None
            dom = None
        over = int(np.count_nonzero(pr[env_i[env]] > 1.0)) if env else 0
        verdict = "not checked" if env is None else ("VIOLATION" if over else "complies")
        regions.append(RegionSite(label=label, kind=kind, checked_environment=env, points=int(px.size),
                                  worst_ratio=worst, worst_x_m=wx, worst_y_m=wy, points_over=over,
                                  dominant_transmitter=dom, near_field_points=int(np.count_nonzero(pn)),
                                  verdict=verdict))
        if over:
            where = {"open ground": "open ground (in no declared area; treated as public)",
                     "outside the site": "outside the site boundary (treated as public)"}.get(
                kind, f"{label!r} ({kind} area)")
            how_much = (f"exposure ratio unbounded at the antenna itself, ({wx:.1f}, {wy:.1f}) m"
                        if worst[env] == math.inf else
                        f"{env} exposure ratio up to {worst[env]:.3g} at ({wx:.1f}, {wy:.1f}) m")
            violations.append(Violation(
                region=label, kind=kind, environment=env, worst_ratio=worst[env], x_m=wx, y_m=wy,
                points_over=over, dominant_transmitter=dom,
                text=f"{where}: {how_much}, {over} points above the {env} limit, mostly from {dom}"))
        if pn.any() and env is not None:
            flags.append(f"{label!r}: {int(np.count_nonzero(pn))} points lie in the near field of a station: "
                         "far-field estimate; near-field analysis or measurement recommended")
    edge = np.zeros_like(any_keep)
    edge[0, :] = edge[-1, :] = True
    edge[:, 0] = edge[:, -1] = True
    if np.any(any_keep & edge):
        flags.append("a keep-out zone reaches the edge of the evaluated grid: its full extent is not shown")
    grid = SiteGrid(x_m=gx, y_m=gy, ratio=ratio, worst_height_m=res.worst_height_m.reshape(2, gy.size, gx.size),
                    near_field=near, region=region, region_labels=tuple(labels), spacing_m=grid_spacing_m,
                    nx=int(gx.size), ny=int(gy.size), extent_m=(float(gx[0]), float(gx[-1]), float(gy[0]),
                                                                  float(gy[-1])),
                    margin_m=float(margin), evaluations=res.evaluations)
    violations.sort(key=lambda v: -v.worst_ratio)
    return SiteAnalysis(heights_m=heights, transmitters=tuple(tx_results), regions=tuple(regions),
                        violations=tuple(violations),
                        keep_out_points={e: int(np.count_nonzero(keep[e])) for e in ENVIRONMENTS},
                        flags=tuple(dict.fromkeys(flags)), grid=grid)


# --------------------------------------------------------------------------- site file evaluation

#: Cautions specific to event sites, printed after the general ones.
SITE_CAUTIONS = (
    "Rope off every keep-out zone before transmitting, with the rope at or beyond the suggested radius, "
    "and keep people out of it while any station transmits.",
    "Re-run this review whenever a station, antenna, power, band, mode or the site layout changes.",
    "Grid results are sampled at the grid spacing: small gaps between samples are not evaluated.",
)


@dataclass(frozen=True)
class SiteStationResult:
    """One station of the site file: where it came from and its configurations' power chain."""

    name: str
    description: str
    source: str                        # "inline" or the station file's path as written
    source_sha256: str | None
    x_m: float
    y_m: float
    transmitters: tuple[str, ...]      # names used on the site ("station" or "station/transmitter")
    configurations: tuple              # rfsafe.results.ConfigurationResult, antenna positions station-relative
    pattern_used: dict[str, str]       # antenna id -> how its gain toward each point is taken
    exceeded_parts: tuple[str, ...]


@dataclass(frozen=True)
class SiteResult:
    """The whole review of one site file (no I/O, no formatting)."""

    title: str
    site: str
    evaluator: str
    evaluation_date: str
    evaluation_date_source: str
    standard: str
    standard_name: str
    environment_labels: dict[str, str]
    rfsafe_version: str
    input_file: str
    input_sha256: str
    ground_reflection: str
    ground_factor: float
    heights_m: tuple[float, ...]
    grid_spacing_m: float
    grid_info: dict
    boundary: tuple[tuple[float, float], ...]
    areas: tuple[Area, ...]
    stations: tuple[SiteStationResult, ...]
    transmitters: tuple[TransmitterSite, ...]
    regions: tuple[RegionSite, ...]
    violations: tuple[Violation, ...]
    keep_out_points: dict[str, int]
    exceeded: tuple[str, ...]          # violations, then line/tuner ratings exceeded
    verdict: str                       # "COMPLIES" or "EXCEEDS"
    method_notes: tuple[str, ...]
    flags: tuple[str, ...]
    cautions: tuple[str, ...]
    emitters: tuple = field(default=(), repr=False)
    grid: SiteGrid | None = field(default=None, repr=False)

    @property
    def exit_code(self) -> int:
        return 0 if self.verdict == "COMPLIES" else 1


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


def _site_pattern(ant, peak_gain_dbi: float, tables: dict, field: str):
    """The pattern used on the grid and a short note of how it was chosen."""
    from rfsafe.antenna.patterns import PATTERN_KINDS, make_pattern

    if ant.use_pattern and ant.kind in PATTERN_KINDS:
        pat = make_pattern(ant.kind, peak_gain_dbi=peak_gain_dbi, front_to_back_db=ant.front_to_back_db,
                           beamwidth_h_deg=ant.beamwidth_h_deg, beamwidth_v_deg=ant.beamwidth_v_deg,
                           table=tables.get(ant.id), field=field)
        return pat, f"{ant.kind} pattern"
    return make_pattern("isotropic", peak_gain_dbi=peak_gain_dbi), \
        f"peak gain {peak_gain_dbi:.2f} dBi in every direction (conservative)"


def site_emitters(loaded_site) -> tuple[list[SiteEmitter], list[SiteStationResult], list[str]]:
    """Every configuration of every station, placed on the site, with its power chain from rfsafe.assess."""
    from rfsafe.assess import assess_with_emitters

    out: list[SiteEmitter] = []
    stations: list[SiteStationResult] = []
    flags: list[str] = []
    for i, (s, loaded, (source, digest)) in enumerate(zip(loaded_site.model.stations, loaded_site.stations,
                                                          loaded_site.sources)):
        prefix = f"stations[{i}]." if source == "inline" else f"stations[{i}] (file {source!r}): "
        try:
            evaluation, ems = assess_with_emitters(loaded)
        except InputError as err:
            raise InputError(f"{prefix}{err}") from None
        tx_ids = [t.id for t in loaded.model.transmitters]
        name_of = {t: (s.name if len(tx_ids) == 1 else f"{s.name}/{t}") for t in tx_ids}
        used = {}
        for em in ems:
            k = next(j for j, a in enumerate(loaded.model.antennas) if a.id == em.antenna.id)
            pat, how = _site_pattern(em.antenna, em.peak_gain_dbi, loaded.pattern_tables, f"{prefix}antennas[{k}]")
            used[em.antenna.id] = how
            cfg = next(c for c in evaluation.configurations if c.id == em.configuration)
            nf = max(cfg.near_field_distance_m, cfg.aperture_far_field_m or 0.0)
            power = tuple(em.avg_power_at_antenna_w[e] for e in ENVIRONMENTS)
            limit = tuple(limit_equivalent_w_m2(em.limits[e], em.avg_power_at_antenna_w[e], em.pep_at_antenna_w)
                          for e in ENVIRONMENTS)
            out.append(SiteEmitter(
                transmitter=name_of[em.transmitter], configuration=em.configuration,
                x_m=s.x_m + em.x_m, y_m=s.y_m + em.y_m, height_m=em.height_m, pattern=pat, freq_hz=em.freq_hz,
                power_w=power, limit_w_m2=limit, ground_factor=em.ground_factor,
                azimuth_deg=em.antenna.azimuth_deg, tilt_deg=em.antenna.tilt_deg,
                polarisation=em.antenna.polarisation, near_field_m=nf))
            if em.antenna.kind == "wire":
                flags.append(f"{s.name}: wire antenna {em.antenna.id!r} is mapped with its solver peak gain in every "
                             "direction (far field); its moment-method near-field map is in the site PDF, and rfsafe "
                             "evaluate gives its near field at declared places")
        exceeded = tuple(f"station {s.name}, configuration {c.id}: {part} exceeds its rating"
                         for c in evaluation.configurations for part in c.exceeded_parts)
        flags.extend(f"{s.name}, configuration {c.id}: {f}" for c in evaluation.configurations for f in c.flags)
        stations.append(SiteStationResult(
            name=s.name, description=s.description, source=source, source_sha256=digest, x_m=s.x_m, y_m=s.y_m,
            transmitters=tuple(name_of[t] for t in tx_ids), configurations=evaluation.configurations,
            pattern_used=used, exceeded_parts=exceeded))
    return out, stations, flags


def assess_site(loaded_site, *, today=None, progress: Callable[[int, int], None] | None = None) -> SiteResult:
    """Evaluate a loaded site file (see :func:`rfsafe.site_schema.load_site`).

    Parameters
    ----------
    loaded_site : LoadedSite
    today : datetime.date, optional
        Date printed when the file gives no evaluation date (default: today).
    progress : callable, optional
        ``progress(done, total)`` while the grid is evaluated.
    """
    import datetime as dt

    from rfsafe import __version__
    from rfsafe import exposure as ex
    from rfsafe.limits import standard_info
    from rfsafe.results import CAUTIONS

    m = loaded_site.model
    info = standard_info(m.standard)
    ems, stations, flags = site_emitters(loaded_site)
    for s, st in zip(m.stations, stations):
        for em in ems:
            if em.transmitter in st.transmitters and not points_in_polygon(em.x_m, em.y_m, loaded_site.boundary):
                flags.append(f"{s.name}: antenna of configuration {em.configuration!r} at ({em.x_m:g}, {em.y_m:g}) m "
                             "is outside the site boundary")
    analysis = analyse_site(ems, boundary=loaded_site.boundary, areas=loaded_site.areas, heights_m=m.heights_m,
                            grid_spacing_m=m.grid_spacing_m, progress=progress)
    exceeded = [v.text for v in analysis.violations] + [x for st in stations for x in st.exceeded_parts]
    gf = ex.GROUND_FACTORS[m.ground_reflection]
    if m.evaluation_date is not None:
        date, date_src = m.evaluation_date.isoformat(), "file"
    else:
        date, date_src = (today or dt.date.today()).isoformat(), "today"
    g = analysis.grid
    notes = (
        "Power chain per configuration as for a single station (rfsafe evaluate): average power = PEP x mode duty "
        "factor x the largest fill of the averaging window by the schedule, less feedline loss.",
        f"Power density from each antenna: far-field prediction S = P G F / (4 pi R^2) with the gain toward the "
        f"point (pattern where the antenna opts in with use_pattern = true, else its peak gain in every direction) "
        f"and ground reflection {m.ground_reflection} (F = {gf:g}).",
        "Each transmitter sends one configuration at a time: at every point and height its worst configuration "
        "there counts. All transmitters may transmit together: their exposure ratios are summed (conservative; "
        "simultaneous groups of station files are not used on a site).",
        f"Evaluation heights {', '.join(f'{h:g}' for h in m.heights_m)} m above ground; the worst is kept.",
        f"Grid spacing {m.grid_spacing_m:g} m over the site boundary plus a {g.margin_m:g} m margin (beyond it even "
        f"the peak-gain sum of all stations is below the limit): {g.nx} x {g.ny} points.",
        "Keep-out zones: total ratio > 1 against the uncontrolled limit (the public must be kept out) and against "
        "the controlled limit (nobody may be there).",
        "Ground in no declared area, and everything outside the site boundary, is treated as public. Where areas "
        "overlap the most restrictive kind applies (no-access, operators, public). Areas are checked at their grid "
        "points and along their edges at half the grid spacing.",
        f"Suggested rope-off radius: the farthest keep-out point attributed to the station (largest own share) plus "
        f"one grid spacing, rounded up to the next {ROPE_STEP_M:g} m.",
        "Points within lambda/2pi (or 2D^2/lambda for an aperture) of an antenna are in its near field, where the "
        "far-field estimate is not valid; they are flagged.",
        f"Standard: {info.name}; the site's standard and ground reflection apply to every station.",
    )
    return SiteResult(
        title=m.title, site=m.site, evaluator=m.evaluator, evaluation_date=date, evaluation_date_source=date_src,
        standard=m.standard, standard_name=info.name, environment_labels=dict(info.environment_labels),
        rfsafe_version=__version__, input_file=loaded_site.path.name, input_sha256=loaded_site.sha256,
        ground_reflection=m.ground_reflection, ground_factor=gf, heights_m=tuple(m.heights_m),
        grid_spacing_m=m.grid_spacing_m,
        grid_info={"nx": g.nx, "ny": g.ny, "points": g.nx * g.ny, "extent_m": list(g.extent_m),
                   "margin_m": g.margin_m, "evaluations": g.evaluations},
        boundary=loaded_site.boundary, areas=loaded_site.areas, stations=tuple(stations),
        transmitters=analysis.transmitters, regions=analysis.regions, violations=analysis.violations,
        keep_out_points=analysis.keep_out_points, exceeded=tuple(exceeded),
        verdict="COMPLIES" if not exceeded else "EXCEEDS", method_notes=notes,
        flags=tuple(dict.fromkeys(flags + list(analysis.flags))), cautions=tuple(CAUTIONS) + SITE_CAUTIONS,
        emitters=tuple(ems), grid=g)
