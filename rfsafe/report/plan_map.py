"""The station plan: antennas to size and orientation, places, and keep-out areas, seen from above.

Rendering only: every value drawn comes from an :class:`rfsafe.results.EvaluationResult` (its
``antennas`` and ``plan``, computed by :mod:`rfsafe.site.plan`). Drawn as a reportlab drawing
(:mod:`rfsafe.report.maps`): vector lines and text over a raster of the cells, so the same result
gives the same drawing.
"""

from __future__ import annotations

import math

__all__ = ["plan_map_drawing", "KEEP_OUT_STYLE", "MAX_NUMBERED_PLACES", "numbered_places"]

#: Above this many places the plan numbers only the :data:`MAX_NUMBERED_PLACES` with the highest total
#: ratio (every place keeps its marker; the tables list them all): more numbers would cover the map.
MAX_PLACES_ALL_NUMBERED = 60
MAX_NUMBERED_PLACES = 40

#: Keep-out contours (ratio = 1): colour per level, line style per environment.
KEEP_OUT_STYLE = {
    ("head", "uncontrolled"): dict(color="#c0007a", linestyle="-", linewidth=1.6),
    ("head", "controlled"): dict(color="#c0007a", linestyle=(0, (4, 2)), linewidth=1.3),
    ("ground", "uncontrolled"): dict(color="#1f4e9c", linestyle="-", linewidth=1.4),
    ("ground", "controlled"): dict(color="#1f4e9c", linestyle=(0, (4, 2)), linewidth=1.2),
}
_LEVEL_TEXT = {"ground": "ground level", "head": "head height"}
_RANGE = (1e-2, 1e1)
_ANT = "#1f3a5f"


def _level_label(level, env, plan) -> str:
    heights = plan.heights_m[level]
    where = (f"{heights[0]:g} m" if len(heights) == 1 else f"worst {heights[0]:g}–{heights[-1]:g} m")
    top = plan.max_ratio[f"{level} {env}"]
    tail = f"keep-out, ratio = 1 (max {top:.3g})" if top > 1 else f"no keep-out (max ratio {top:.2g})"
    return f"{_LEVEL_TEXT[level]} ({where}), {env}:\n{tail}"


def numbered_places(places, min_gap_m: float = 0.0, keep_clear=()) -> list:
    """The places numbered on the plan, in declared order.

    All of them up to :data:`MAX_PLACES_ALL_NUMBERED`; else at most :data:`MAX_NUMBERED_PLACES`, taken
    in order of total ratio, highest first (the first declared among equals; a ratio that is not a
    number first of all; the first is always taken), skipping a place closer than ``min_gap_m`` to one
    already taken or to a point of ``keep_clear`` (the antennas' own labels), so that the numbers find
    room beside their markers.
    """
    if len(places) <= MAX_PLACES_ALL_NUMBERED:
        return list(places)

    def rank(i):             # a ratio that is not a number ranks first: it is not known to be low
        r = float(places[i].total_ratio)
        return (-(r if r == r else math.inf), i)

    taken: list[int] = []
    for i in sorted(range(len(places)), key=rank):
        x, y = getattr(places[i], "x_m", 0.0), getattr(places[i], "y_m", 0.0)
        if not taken or all(math.hypot(x - places[k].x_m, y - places[k].y_m) >= min_gap_m for k in taken) and all(
                math.hypot(x - cx, y - cy) >= min_gap_m for cx, cy in keep_clear):
            taken.append(i)
            if len(taken) == MAX_NUMBERED_PLACES:
                break
    return [places[i] for i in sorted(taken)]


def plan_map_drawing(res, *, place_numbers: dict, width_in: float = 7.0):
    """Draw the plan of ``res`` as a reportlab Drawing ``width_in`` wide [pt at 72 per inch].

    Parameters
    ----------
    res : EvaluationResult
        An evaluation whose ``plan`` is set.
    place_numbers : dict
        Place label -> marker label (``"P1"``...), as in the worksheet's tables.
    width_in : float
        Drawing width [in].
    """
    import numpy as np

    from rfsafe.report.maps import MapAxes, colour_bar, colour_rgb, dash_points, legend, new_map
    from rfsafe.report.near_field import _edges
    from rfsafe.report.site_map import nice_length

    plan = res.plan
    x = np.asarray(plan.x_m, dtype=float)
    y = np.asarray(plan.y_m, dtype=float)
    span_x, span_y = x[-1] - x[0], y[-1] - y[0]
    # a tall plan keeps its legend at the right; a wide one gets the width and the legend below it
    side = span_y / span_x > 0.75
    map_w = 4.2 if side else 5.0
    map_h = map_w * span_y / span_x
    if map_h > 3.7:
        map_h = 3.7
        map_w = map_h * span_x / span_y
    map_h = max(map_h, 1.6)
    below = 0.0 if side else 1.25
    bottom = 0.45 + below
    height = max(map_h + 0.3 + bottom, 2.9)
    pt = 72.0
    d = new_map(width_in * pt, height * pt)
    ax = MapAxes(d, (0.55 * pt, bottom * pt, map_w * pt, map_h * pt), xlim=(x[0], x[-1]), ylim=(y[0], y[-1]))
    shown = np.nan_to_num(np.asarray(plan.ratio[("head", "uncontrolled")], dtype=float), nan=_RANGE[1],
                          posinf=_RANGE[1])
    ax.raster(_edges(x), _edges(y), colour_rgb(np.clip(shown, *_RANGE), *_RANGE))   # cells centred on the points

    handles = []
    for (level, env), style in KEEP_OUT_STYLE.items():
        f = np.nan_to_num(np.asarray(plan.ratio[(level, env)], dtype=float), nan=1e3, posinf=1e3)
        dash = dash_points(style["linestyle"], style["linewidth"])
        if (f > 1).any() and (f < 1).any():
            for line in ax.contour_lines(x, y, f):
                ax.line(line[:, 0], line[:, 1], color=style["color"], width=style["linewidth"], dash=dash, halo=1.6)
        handles.append((("line", style["color"], style["linewidth"], dash), _level_label(level, env, plan)))

    arrow_len = 0.09 * max(span_x, span_y)
    ant_marks = []
    for a in res.antennas:
        pts = [(q[0], q[1]) for s in a.segments_m for q in s]
        flat = [s for s in a.segments_m if math.hypot(s[1][0] - s[0][0], s[1][1] - s[0][1]) > 1e-6]
        for s in flat:
            ax.line([s[0][0], s[1][0]], [s[0][1], s[1][1]], color=_ANT, width=2.4, halo=1.6, cap=1)
        if not flat:   # vertical structure or a point: a ringed dot
            ax.point(a.x_m, a.y_m, size=6.5, face=_ANT, edge="#ffffff", edge_width=1.0)
        if a.kind in ("beam", "table"):
            _heading_arrow(ax, a.x_m, a.y_m, math.radians(a.azimuth_deg), arrow_len, 0.006 * max(span_x, span_y))
        if pts:
            cx = sum(q[0] for q in pts) / len(pts)
            cy = sum(q[1] for q in pts) / len(pts)
        else:
            cx, cy = a.x_m, a.y_m
        ant_marks.append((cx, cy, a.id))

    # numbers about two label widths apart (36 pt on the map) and from the antennas' labels and the north arrow
    north = [(x[0] + 0.95 * span_x, y[0] + f * span_y) for f in (0.84, 0.9, 0.96)]    # the north arrow
    numbered = numbered_places(res.places, min_gap_m=36.0 / 72.0 * span_x / map_w,
                               keep_clear=[(cx, cy) for cx, cy, _ in ant_marks] + north)
    if len(numbered) == len(res.places):
        for pl in res.places:
            ax.point(pl.x_m, pl.y_m, shape="s" if pl.environment == "controlled" else "o", size=6)
    else:   # many places: smaller markers, the highest ratios numbered
        size = max(1.5, min(6.0, 0.6 * math.sqrt(map_w * map_h * 72.0 ** 2 / len(res.places))))
        for pl in res.places:
            ax.point(pl.x_m, pl.y_m, shape="s" if pl.environment == "controlled" else "o", size=size,
                     edge_width=min(1.1, size / 4))
    marks = [(pl.x_m, pl.y_m, place_numbers[pl.label]) for pl in numbered]
    _north_arrow(ax)
    _scale_bar(ax, nice_length(max(span_x, span_y)))
    ant_labels = [(cx, cy, f"{i}") for cx, cy, i in ant_marks]
    if len(numbered) == len(res.places):
        ax.place_labels(marks + ant_labels, colours=["#000000"] * len(marks) + [_ANT] * len(ant_marks))
    else:    # crowded: the antennas are named first, the numbers find room around them or are left off
        ax.place_labels(ant_labels + marks, colours=[_ANT] * len(ant_marks) + ["#000000"] * len(marks),
                        drop={t for _, _, t in marks})
    ax.frame_map(xlabel="x east [m]", ylabel="y north [m]")

    lx = (0.55 + map_w + 0.25) * pt
    cb_h = min(1.05, map_h - 0.45)
    colour_bar(d, lx, (bottom + map_h - cb_h) * pt, 0.11 * pt, cb_h * pt, lo=_RANGE[0], hi=_RANGE[1],
               ticks=[0.01, 0.1, 1, 10], labels=["≤ 0.01", "0.1", "1 = limit", "≥ 10"], tick_len=2.0, labelpad=3.0,
               label_lines=["total ratio, uncontrolled,", "head height"])
    handles += [
        (("line", _ANT, 2.4, None), "antenna seen from above, to its size"),
        (("marker", "o", 6.0, _ANT, "#ffffff", 1.0), "vertical antenna (or size not declared)"),
        (("arrow", _ANT), "beam heading"),
        (("marker", "o", 5.5, "#ffffff", "#000000", 1.0), "place, uncontrolled"),
        (("marker", "s", 5.5, "#ffffff", "#000000", 1.0), "place, controlled"),
    ]
    if side:
        legend(d, lx, (bottom + map_h - cb_h - 0.5) * pt + 0.02 * height * pt, handles, size=6.5, handlelength=2.6,
               labelspacing=0.55)
    else:
        legend(d, 0.05 * pt, (below - 0.05) * pt + 0.02 * height * pt, handles, ncol=3, size=6.5,
               handlelength=2.6, labelspacing=0.55, columnspacing=1.2)
    return d


def _heading_arrow(ax, x, y, azimuth_rad, length, tail_width) -> None:
    """A beam heading: a filled arrow from the antenna (head 0.3 of its length), in data units [m]."""
    from reportlab.graphics.shapes import Polygon
    from reportlab.lib import colors

    ux, uy = math.sin(azimuth_rad), math.cos(azimuth_rad)
    nx, ny = -uy, ux
    head_l, head_w = 0.3 * length, 0.3 * length
    shape = [(0, tail_width / 2), (length - head_l, tail_width / 2), (length - head_l, head_w / 2), (length, 0),
             (length - head_l, -head_w / 2), (length - head_l, -tail_width / 2), (0, -tail_width / 2)]
    pts = []
    for along, across in shape:
        pts += [ax.px(x + along * ux + across * nx), ax.py(y + along * uy + across * ny)]
    ax.d.add(Polygon(pts, fillColor=colors.HexColor(_ANT), strokeColor=colors.white, strokeWidth=0.5))
    ax._keep_clear(*[(pts[k], pts[k + 1], pts[k + 2], pts[k + 3]) for k in range(0, len(pts) - 2, 2)])


def _north_arrow(ax) -> None:
    """"N" with an arrow pointing up, near the top right corner of the map."""
    from reportlab.graphics.shapes import Circle, Line, Polygon, String
    from reportlab.lib import colors

    from rfsafe.report.common import FONT_BOLD

    X = ax.x0 + 0.95 * ax.w
    Yn, Ytip = ax.y0 + 0.84 * ax.h, ax.y0 + 0.96 * ax.h
    fs = 8.5
    ax.d.add(Circle(X, Yn, 0.62 * fs, fillColor=colors.white, strokeColor=None))
    ax.d.add(Line(X, Yn + 0.62 * fs, X, Ytip - 5, strokeColor=colors.black, strokeWidth=1.1))
    ax.d.add(Polygon([X, Ytip, X - 2.6, Ytip - 6, X + 2.6, Ytip - 6], fillColor=colors.black, strokeColor=None))
    ax.d.add(String(X, Yn - 0.36 * fs, "N", fontName=FONT_BOLD, fontSize=fs, textAnchor="middle"))
    ax._add_box((X - 0.62 * fs, Yn - 0.62 * fs, X + 0.62 * fs, Ytip))


def _scale_bar(ax, length_m: float) -> None:
    """A framed scale bar ``length_m`` long with its length below it, in the lower left corner."""
    from reportlab.graphics.shapes import Rect, String
    from reportlab.lib import colors

    from rfsafe.report.common import FONT

    fs = 6.5
    bar = ax.px(ax.xlim[0] + length_m) - ax.x0
    thick = max(0.006 * ax.h, 0.8)
    pad, border = 0.35 * fs, 0.5 * fs
    text = f"{length_m:g} m"
    w = max(bar, 0.0) + 2 * pad
    h = thick + 2 + fs + 2 * pad
    X0, Y0 = ax.x0 + border, ax.y0 + border
    ax.d.add(Rect(X0, Y0, w, h, fillColor=colors.white, strokeColor=colors.black, strokeWidth=0.8))
    ax.d.add(Rect(X0 + pad, Y0 + h - pad - thick, bar, thick, fillColor=colors.black, strokeColor=None))
    ax.d.add(String(X0 + w / 2, Y0 + pad + 0.24 * fs, text, fontName=FONT, fontSize=fs, textAnchor="middle"))
    ax._add_box((X0, Y0, X0 + w, Y0 + h))
