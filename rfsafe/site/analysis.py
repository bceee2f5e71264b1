"""Site analysis: the evaluation grid, regions with precedence, keep-out zones, violations."""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Callable, ClassVar, Sequence

import numpy as np

from rfsafe.bounds import MAX_GRID_POINTS
from rfsafe.errors import bad_value
from rfsafe.site.constants import _FOUR_PI, ENVIRONMENTS
from rfsafe.site.geometry import (
    Area,
    points_in_polygon,
    polygon_edge_points,
    polygon_nearest_points,
    rope_off_radius_m,
)
from rfsafe.site.grid import SiteEmitter, _groups, ratio_grid, transmitter_ratios

__all__ = ["summed_reach_m", "analyse_site", "region_samples", "SiteGrid", "TransmitterSite", "RegionSite",
           "Violation", "SiteAnalysis", "CHECKED_ENVIRONMENT", "MAX_GRID_POINTS"]


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
    keep_out_m: dict[str, float]       # farthest sample of the total zone where it dominates [m]
    own_keep_out_m: dict[str, float]   # farthest sample where its own ratio alone exceeds 1 [m]
    rope_off_radius_m: float           # from the uncontrolled keep-out (see rope_off_radius_m)
    peak_gain_distance_m: dict[str, float]   # sqrt(P F G_peak / (4 pi S_lim)) + reach: 3-D bound of its own zone [m]
    flags: tuple[str, ...]


@dataclass(frozen=True)
class RegionSite:
    """An area (or the open ground, or outside the site) and the worst exposure found in it."""

    label: str
    kind: str                          # public, operators, no-access, open ground, outside the site
    checked_environment: str | None    # the limit that applies to the people allowed there
    points: int                        # grid points, fine samples and edge samples evaluated
    worst_ratio: dict[str, float]
    worst_x_m: float | None
    worst_y_m: float | None
    points_over: int                   # points above the checked limit
    dominant_transmitter: str | None   # largest own contribution at the worst point
    near_field_points: int             # points inside some emitter's near field (estimate not valid)
    verdict: str                       # "complies", "VIOLATION", "not checked" (no-access)

    #: Why a field has no finite value (the JSON writer puts it in ``<field>_note``).
    NONFINITE_NOTES: ClassVar[dict] = {
        "worst_ratio": "a sample lies at an antenna's centre of radiation, where the far-field estimate "
                       "has no finite value: nobody may stand there (near-field analysis needed)",
    }


@dataclass(frozen=True)
class Violation:
    """A place where people allowed there would be exposed above their limit."""

    region: str
    kind: str
    environment: str
    worst_ratio: float
    x_m: float
    y_m: float

    #: Why a field has no finite value (the JSON writer puts it in ``<field>_note``).
    NONFINITE_NOTES: ClassVar[dict] = {
        "worst_ratio": "a sample lies at an antenna's centre of radiation, where the far-field estimate "
                       "has no finite value: nobody may stand there (near-field analysis needed)",
    }
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


def _axis_range(lo: float, hi: float, spacing: float) -> tuple[int, int]:
    """First and last grid index (multiples of ``spacing``) covering [lo, hi], without allocating."""
    return math.floor(lo / spacing + 1e-9), math.ceil(hi / spacing - 1e-9)


def _axis(lo: float, hi: float, spacing: float) -> np.ndarray:
    i0, i1 = _axis_range(lo, hi, spacing)
    return np.arange(i0, i1 + 1) * spacing


def summed_reach_m(emitters: Sequence[SiteEmitter]) -> float:
    """Distance beyond which even the peak-gain sum of all emitters is below every limit [m].

    At a distance of at least D from every part of every antenna, the total ratio is at most
    ``sum_t max_c c G_peak / (4 pi D^2)``; this returns the D where that bound is 1, plus the largest
    reach of an antenna's structure from its declared position (the grid is laid out around the
    declared positions).
    """
    names, groups = _groups(emitters)
    per_t = np.zeros((len(names), 2))
    for g in groups:
        per_t[g.transmitter] = np.maximum(per_t[g.transmitter],
                                          g.coefficient * 10.0 ** (g.pattern.peak_gain_dbi / 10.0))
    reach = max((g.reach_m for g in groups), default=0.0)
    return float(math.sqrt(per_t.sum(axis=0).max() / _FOUR_PI)) + reach


def _near_field_ground_reach_m(g, heights) -> float:
    """Horizontal distance from the declared position within which the ground (at the evaluation heights)
    may lie within the near-field distance of some part of the antenna [m]; 0 if nowhere.

    Every part lies within ``reach_m`` of the declared position (triangle inequality), so this bounds it.
    """
    dz = max(min(abs(h - g.height_m) for h in heights) - g.reach_m, 0.0)
    if g.near_field_m <= dz:
        return 0.0
    return g.reach_m + math.sqrt(g.near_field_m ** 2 - dz * dz)


#: Fine samples around each antenna, in addition to the grid: a square lattice of spacing LOCAL_FRACTION of the
#: grid spacing (coarser only for a large structure: at most LOCAL_MAX_STEPS steps each way) over the ground
#: within LOCAL_SPACINGS grid spacings of the antenna's structure, plus the antenna's own position. Next to an
#: antenna the ratio falls as 1/R^2 from its nearest part and the grid misses its peak: a 1 W isotropic source
#: at 146 MHz (uncontrolled peak-gain distance 0.40 m, F = 4) in the middle of a 1 m cell of a public lawn left
#: no grid point above the limit, and the lawn was reported as complying (found and fixed here;
#: tests/test_site.py). The lattice is fixed on the site (multiples of its spacing), so moving an antenna or
#: changing its power moves no sample: the remedies' re-evaluations change continuously.
LOCAL_SPACINGS = 4.0
LOCAL_FRACTION = 0.125
LOCAL_MAX_STEPS = 48
#: Samples along the main-beam bearing of every directional antenna (a beam; a pattern table at the bearings of
#: its largest gain per elevation, at most AXIS_MAX_BEARINGS), from the antenna to the edge of the grid, AXIS_FRACTION
#: of the grid spacing apart (at most AXIS_MAX_STEPS per ray), and where each ray crosses an area's edge. A beam
#: narrower than the grid's angular step at a distance fell between its points: 3-element-like beams of 1.4-5.6
#: deg pointed at a public lawn 15 m away, 1.3 times the limit on their axis, were reported as complying (worst
#: grid or edge sample 0.53-0.99 of the limit; found and fixed here, tests/test_site.py).
AXIS_FRACTION = 1.0 / 32.0
AXIS_MAX_STEPS = 20_000
AXIS_MAX_BEARINGS = 16
#: ... and at most this many bearing samples in all (a site of many directional antennas gets coarser rays).
AXIS_MAX_TOTAL = 200_000


def _bearings(g) -> list[float]:
    """Compass bearings [deg] of the main beam of a directional antenna (none for the other kinds)."""
    pat = g.pattern
    if pat.kind == "beam":
        return [float(g.azimuth_deg)]
    if pat.kind == "table":
        tab = pat.table
        rows = np.asarray(tab._gain_lin)
        j = np.argmax(rows, axis=1)                       # the largest gain's azimuth at each elevation
        order = np.argsort(-rows[np.arange(rows.shape[0]), j])
        out = []
        for k in order:
            b = float(g.azimuth_deg + tab.azimuth_deg[j[k]])
            if b not in out:
                out.append(b)
            if len(out) == AXIS_MAX_BEARINGS:
                break
        return out
    return []


def _rays(groups, extent) -> list[tuple[float, float, float, float, float]]:
    """(x0, y0, ux, uy, length) of each directional antenna's bearing rays to the edge of ``extent`` (x_min,
    x_max, y_min, y_max) [m]."""
    x_lo, x_hi, y_lo, y_hi = extent
    out = []
    for key in sorted({(g.x_m, g.y_m, b) for g in groups for b in _bearings(g)}):
        x0, y0, b = key
        ux, uy = math.sin(math.radians(b)), math.cos(math.radians(b))
        ts = [t for t in ((x_hi - x0) / ux if ux > 0 else None, (x_lo - x0) / ux if ux < 0 else None,
                          (y_hi - y0) / uy if uy > 0 else None, (y_lo - y0) / uy if uy < 0 else None)
              if t is not None and t > 0.0]
        if ts:
            out.append((x0, y0, ux, uy, min(ts)))
    return out


def _local_points(groups, grid_spacing_m: float, extent) -> tuple[np.ndarray, np.ndarray]:
    """The fine samples around each antenna (see :data:`LOCAL_SPACINGS`) and along the bearing of each
    directional one (:data:`AXIS_FRACTION`) to the edge of ``extent`` (the grid's), ground coordinates [m]."""
    xs, ys = [], []
    rays = _rays(groups, extent)
    most = min(AXIS_MAX_STEPS, AXIS_MAX_TOTAL // max(len(rays), 1))
    for x0, y0, ux, uy, length in rays:
        step = max(AXIS_FRACTION * grid_spacing_m, length / most)
        t = np.arange(1, math.floor(length / step) + 1) * step
        xs.append(x0 + ux * t)
        ys.append(y0 + uy * t)
    for key in sorted({(g.x_m, g.y_m, g.reach_m) for g in groups}):
        x0, y0, reach = key
        radius = reach + LOCAL_SPACINGS * grid_spacing_m
        step = max(LOCAL_FRACTION * grid_spacing_m, radius / LOCAL_MAX_STEPS)
        i0, i1 = math.ceil((x0 - radius) / step), math.floor((x0 + radius) / step)
        j0, j1 = math.ceil((y0 - radius) / step), math.floor((y0 + radius) / step)
        gx, gy = np.meshgrid(np.arange(i0, i1 + 1) * step, np.arange(j0, j1 + 1) * step)
        xs += [gx.ravel(), [x0]]
        ys += [gy.ravel(), [y0]]
    if not xs:
        return np.zeros(0), np.zeros(0)
    return np.concatenate(xs).astype(float), np.concatenate(ys).astype(float)


def _ray_crossings(polygon, rays) -> tuple[np.ndarray, np.ndarray]:
    """Where the rays (see :func:`_rays`) cross the polygon's edges [m]."""
    a = np.asarray(polygon, dtype=float)
    b = np.roll(a, -1, axis=0)
    xs, ys = [], []
    for x0, y0, ux, uy, length in rays:
        ex, ey = b[:, 0] - a[:, 0], b[:, 1] - a[:, 1]
        den = ux * ey - uy * ex                          # ray direction x edge direction
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):   # a nearly parallel edge: no hit
            t = ((a[:, 0] - x0) * ey - (a[:, 1] - y0) * ex) / den    # along the ray
            v = ((a[:, 0] - x0) * uy - (a[:, 1] - y0) * ux) / den    # along the edge
        hit = (den != 0.0) & (t >= 0.0) & (t <= length) & (v >= 0.0) & (v <= 1.0)
        xs.append(a[hit, 0] + v[hit] * ex[hit])
        ys.append(a[hit, 1] + v[hit] * ey[hit])
    if not xs:
        return np.zeros(0), np.zeros(0)
    return np.concatenate(xs), np.concatenate(ys)


#: Offset [m] of the eight points around an edge sample whose regions it counts for (see :func:`_edge_samples`).
_EDGE_SIDE_M = 1e-6


def _edge_samples(areas, antenna_xy, spacing_m: float, rays, boundary, order):
    """Samples on every area's edges and the regions each counts for.

    Each area's edges at half the grid spacing, each edge's point nearest an antenna position (where ground
    beside the antenna is most exposed) and where a directional antenna's bearing crosses an edge. An edge
    sample counts for every region it borders: the regions of the point and of the eight points
    :data:`_EDGE_SIDE_M` beside it (along the axes and the diagonals, for edges and corners), so that the
    ground just outside a rope is checked at the rope itself (the ratio is continuous there) and not only at
    the next grid point, up to a spacing farther out (which understated it by up to (1 + s / (sqrt(2) R))^2,
    3.6 % for a 10 m rope on a 0.25 m grid). Returns x, y [m] and a boolean (regions, points) table.
    """
    xs, ys = [], []
    for area in areas:
        ex_, ey_ = polygon_edge_points(area.polygon, spacing_m / 2.0)
        xs.append(ex_)
        ys.append(ey_)
        if len(antenna_xy):
            nx_, ny_ = polygon_nearest_points(area.polygon, [p[0] for p in antenna_xy], [p[1] for p in antenna_xy])
            xs.append(nx_)
            ys.append(ny_)
        if rays:
            cx_, cy_ = _ray_crossings(area.polygon, rays)
            xs.append(cx_)
            ys.append(cy_)
    x = np.concatenate(xs) if xs else np.zeros(0)
    y = np.concatenate(ys) if ys else np.zeros(0)
    member = np.zeros((2 + len(areas), x.size), dtype=bool)
    cols = np.arange(x.size)
    d = _EDGE_SIDE_M
    for dx, dy in ((0.0, 0.0), (d, 0.0), (-d, 0.0), (0.0, d), (0.0, -d), (d, d), (d, -d), (-d, d), (-d, -d)):
        member[_regions_of(x + dx, y + dy, boundary, areas, order), cols] = True
    return x, y, member


def _precedence_order(areas) -> list[int]:
    """Area indices, least restrictive first (see :func:`_regions_of`)."""
    return sorted(range(len(areas)), key=lambda i: -_PRECEDENCE.index(areas[i].kind))


def region_samples(emitters: Sequence[SiteEmitter], grid: "SiteGrid", boundary, areas, label: str):
    """The points [m] at which :func:`analyse_site` checks a region, for these emitters: its grid points, the
    fine samples around every antenna and along every beam's bearing (:data:`LOCAL_SPACINGS`,
    :data:`AXIS_FRACTION`) that fall in it, and the samples on the areas' edges that border it
    (:func:`_edge_samples`). The remedies check a changed site on the same."""
    _, groups = _groups(emitters)
    r = grid.region_labels.index(label)
    order = _precedence_order(areas)
    xx, yy = np.meshgrid(grid.x_m, grid.y_m)
    mask = grid.region == r
    lx, ly = _local_points(groups, grid.spacing_m, grid.extent_m)
    lmask = _regions_of(lx, ly, boundary, areas, order) == r
    ex_, ey_, member = _edge_samples(areas, sorted({(g.x_m, g.y_m) for g in groups}), grid.spacing_m,
                                     _rays(groups, grid.extent_m), boundary, order)
    return (np.concatenate([xx[mask], lx[lmask], ex_[member[r]]]),
            np.concatenate([yy[mask], ly[lmask], ey_[member[r]]]))


def _regions_of(x, y, boundary, areas, order) -> np.ndarray:
    """Region index of points: 0 outside the site, 1 open ground, 2 + i area i (the most restrictive where
    areas overlap: ``order`` lists the areas least restrictive first)."""
    region = np.where(points_in_polygon(x, y, boundary), 1, 0).astype(np.int32)
    for i in order:  # least restrictive first, so the most restrictive is written last
        region[points_in_polygon(x, y, areas[i].polygon)] = 2 + i
    return region


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
    no-access areas are not checked. Regions are checked at their grid points, at fine samples next to
    every antenna and along every beam's bearing, and at samples on the areas' edges that border them
    (:func:`_local_points`, :func:`_edge_samples`).

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
    bx = [p[0] for p in boundary] + [g.x_m for g in groups]
    by = [p[1] for p in boundary] + [g.y_m for g in groups]
    margin = max(2.0 * grid_spacing_m, math.ceil(reach / grid_spacing_m) * grid_spacing_m)
    # count the points before allocating them: a tiny spacing or a huge margin must be refused, not
    # attempted (math on Python floats: no overflow, no allocation)
    nx = (lambda r: r[1] - r[0] + 1)(_axis_range(min(bx) - margin, max(bx) + margin, grid_spacing_m))
    ny = (lambda r: r[1] - r[0] + 1)(_axis_range(min(by) - margin, max(by) + margin, grid_spacing_m))
    if nx * ny > MAX_GRID_POINTS:
        raise bad_value(f"{field_prefix}grid_spacing_m", grid_spacing_m,
                        f"gives {nx} x {ny} = {nx * ny} grid points over the site and the "
                        f"{margin:g} m margin its stations need (accepted: at most {MAX_GRID_POINTS:,}; "
                        "use a larger spacing)")
    for i, a in enumerate(areas):  # edges are sampled at half the spacing: count those points too
        n_edge = sum(math.ceil(math.dist(a.polygon[j - 1], a.polygon[j]) / (grid_spacing_m / 2.0))
                     for j in range(len(a.polygon)))
        if n_edge > MAX_GRID_POINTS:
            raise bad_value(f"{field_prefix}areas[{i}].polygon", [list(p) for p in a.polygon],
                            f"has edges {n_edge:,} half grid spacings long (accepted: at most "
                            f"{MAX_GRID_POINTS:,}; use a larger grid_spacing_m or a smaller area)")
    gx = _axis(min(bx) - margin, max(bx) + margin, grid_spacing_m)
    gy = _axis(min(by) - margin, max(by) + margin, grid_spacing_m)
    xx, yy = np.meshgrid(gx, gy)
    res = ratio_grid(emitters, xx, yy, heights, progress=progress)
    ratio = res.ratio.reshape(2, gy.size, gx.size)
    near = res.near_field.reshape(gy.size, gx.size)

    # regions: 0 = outside the site, 1 = open ground, 2.. = areas (most restrictive wins)
    labels = ["outside the site", "open ground"] + [a.label for a in areas]
    kinds = ["outside the site", "open ground"] + [a.kind for a in areas]
    order = _precedence_order(areas)
    region = _regions_of(xx, yy, boundary, areas, order)
    # the fine samples next to each antenna (LOCAL_SPACINGS), with their regions
    extent = (float(gx[0]), float(gx[-1]), float(gy[0]), float(gy[-1]))
    lx, ly = _local_points(groups, grid_spacing_m, extent)
    local = ratio_grid(emitters, lx, ly, heights)
    lregion = _regions_of(lx, ly, boundary, areas, order)

    # keep-out points (grid and fine samples) and who dominates them
    env_i = {e: k for k, e in enumerate(ENVIRONMENTS)}
    keep = {e: ratio[env_i[e]] > 1.0 for e in ENVIRONMENTS}
    lkeep = {e: local.ratio[env_i[e]] > 1.0 for e in ENVIRONMENTS}
    any_keep = keep["controlled"] | keep["uncontrolled"]
    l_any = lkeep["controlled"] | lkeep["uncontrolled"]
    kx, ky = np.concatenate([xx[any_keep], lx[l_any]]), np.concatenate([yy[any_keep], ly[l_any]])
    zone = {e: np.concatenate([keep[e][any_keep], lkeep[e][l_any]]) for e in ENVIRONMENTS}
    _, own = transmitter_ratios(emitters, kx, ky, heights) if kx.size else (names, np.zeros((2, len(names), 0)))
    flags: list[str] = []
    tx_results = []
    for t, name in enumerate(names):
        dist = _dist_to_antennas(kx, ky, positions[name])
        keep_out, own_keep = {}, {}
        for e in ENVIRONMENTS:
            ek = env_i[e]
            in_zone = zone[e]
            dominant = in_zone & (np.argmax(own[ek], axis=0) == t) if kx.size else in_zone
            keep_out[e] = float(dist[dominant].max()) if dominant.any() else 0.0
            own_zone = own[ek, t] > 1.0 if kx.size else in_zone
            own_keep[e] = float(dist[own_zone].max()) if own_zone.any() else 0.0
        grp = [g for g in groups if g.transmitter == t]
        nf = max(g.near_field_m for g in grp)
        tflags = []
        # horizontal reach from the declared position of the ground within the near field of any part of
        # the antenna (triangle inequality: every part lies within reach_m of the declared position)
        nf_reach = max(_near_field_ground_reach_m(g, heights) for g in grp)
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
        # from the declared position: the compliance distance from the nearest part plus the structure's reach
        bound = np.max([np.sqrt(g.coefficient * 10.0 ** (g.pattern.peak_gain_dbi / 10.0) / _FOUR_PI) + g.reach_m
                        for g in grp], axis=0)
        tx_results.append(TransmitterSite(
            transmitter=name, x_m=grp[0].x_m, y_m=grp[0].y_m, height_m=grp[0].height_m,
            configurations=tuple(m.configuration for g in grp for m in g.members), near_field_m=nf,
            keep_out_m=keep_out, own_keep_out_m=own_keep,
            rope_off_radius_m=rope_off_radius_m(keep_out["uncontrolled"], grid_spacing_m),
            peak_gain_distance_m={e: float(bound[env_i[e]]) for e in ENVIRONMENTS},
            flags=tuple(tflags)))

    # regions: grid points and the fine samples in them, plus the samples on every area's edge that border
    # them (_edge_samples)
    antenna_xy = sorted({(g.x_m, g.y_m) for g in groups})
    ex_, ey_, member = _edge_samples(areas, antenna_xy, grid_spacing_m, _rays(groups, extent), boundary, order)
    edge_res = ratio_grid(emitters, ex_, ey_, heights) if ex_.size else None
    regions = []
    violations = []
    for r, (label, kind) in enumerate(zip(labels, kinds)):
        mask = region == r
        lmask = lregion == r
        px, py = np.concatenate([xx[mask], lx[lmask]]), np.concatenate([yy[mask], ly[lmask]])
        pr = np.concatenate([ratio[:, mask], local.ratio[:, lmask]], axis=1)
        pn = np.concatenate([near[mask], local.near_field[lmask]])
        if edge_res is not None and member[r].any():
            m_e = member[r]
            px, py = np.concatenate([px, ex_[m_e]]), np.concatenate([py, ey_[m_e]])
            pr = np.concatenate([pr, edge_res.ratio[:, m_e]], axis=1)
            pn = np.concatenate([pn, edge_res.near_field[m_e]])
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


