"""Site geometry: areas as polygons, points in polygons, edge sampling and rope-off radii."""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from rfsafe.errors import bad_value
from rfsafe.site.constants import ROPE_STEP_M

__all__ = ["Area", "points_in_polygon", "polygon_edge_points", "polygon_nearest_points", "rope_off_radius_m",
           "validate_polygon"]



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
        # an edge only a subnormal apart in y (5e-324) has an infinite slope: 0 * inf = NaN where the point
        # does not straddle it, which the mask drops; where it does, the crossing is at +-inf or a number
        with np.errstate(invalid="ignore", over="ignore"):
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


def polygon_nearest_points(polygon, x_m, y_m) -> tuple[np.ndarray, np.ndarray]:
    """The point of a polygon's boundary nearest to each given point [m] (the orthogonal projection onto each
    edge, clamped to it, the nearest of those; common practice)."""
    px = np.asarray(x_m, dtype=float).ravel()[:, None]
    py = np.asarray(y_m, dtype=float).ravel()[:, None]
    a = np.asarray(polygon, dtype=float)
    b = np.roll(a, -1, axis=0)
    ex, ey = b[:, 0] - a[:, 0], b[:, 1] - a[:, 1]                 # (E,)
    ll = ex * ex + ey * ey
    with np.errstate(divide="ignore", invalid="ignore"):
        t = ((px - a[:, 0]) * ex + (py - a[:, 1]) * ey) / ll     # (P, E); a zero-length edge gives nan
    t = np.clip(np.nan_to_num(t, nan=0.0), 0.0, 1.0)
    qx, qy = a[:, 0] + t * ex, a[:, 1] + t * ey
    k = np.argmin(np.hypot(qx - px, qy - py), axis=1)
    rows = np.arange(px.shape[0])
    return qx[rows, k], qy[rows, k]


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


