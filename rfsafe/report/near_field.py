"""Near-field results of wire antennas in the station worksheet: maps and the near/far comparison.

Rendering only: every value drawn or printed comes from an :class:`rfsafe.results.EvaluationResult`
(the :class:`~rfsafe.results.NearFieldMap` of each wire-antenna configuration and the
``far_field_ratio`` / ``near_field_ratio`` pair of each place evaluated with the moment method).
The only arithmetic is presentation: the larger of the E and H ratios for the colour field, its
logarithm for the colour scale, and the difference 10 log10(near / far) in dB.

The map is a reportlab drawing (:mod:`rfsafe.report.maps`): vector lines and text over a raster of
the cells, so the same result gives the same drawing (and the same PDF).
"""

from __future__ import annotations

import math

from reportlab.graphics.shapes import Line, Rect, String
from reportlab.lib import colors
from reportlab.lib.units import mm
from reportlab.platypus import KeepTogether

from rfsafe.report.common import FONT, data_table, escape, margin_text, num, p, ratio_text, section_heading
from rfsafe.report.maps import dash_points, scaled
from rfsafe.report.plots import decade_label

__all__ = ["NEAR_FIELD_METHOD", "has_near_field_maps", "comparison_exposures", "near_field_map_drawing",
           "near_field_map_section", "near_field_comparison_section", "CONTOUR_STYLE", "MAX_DECADES",
           "INSET_BELOW_MM"]

NEAR_FIELD_METHOD = "near-field (moment method)"
ENVIRONMENTS = ("uncontrolled", "controlled")
#: Ratio = 1 contours: one colour per field quantity, one line style per environment (white halo beneath).
CONTOUR_STYLE = {
    ("e", "uncontrolled"): dict(color="#1f4e9c", linestyle="-", linewidth=1.6),
    ("e", "controlled"): dict(color="#1f4e9c", linestyle=(0, (1.2, 1.6)), linewidth=1.4),
    ("h", "uncontrolled"): dict(color="#111111", linestyle=(0, (5, 2.5)), linewidth=1.6),
    ("h", "controlled"): dict(color="#111111", linestyle=(0, (6, 2, 1.2, 2)), linewidth=1.2),
}
#: Widest colour scale [decades]; ratios further below are drawn in the lowest colour.
MAX_DECADES = 6
_EXCLUDED_COLOR = "#8c8c8c"
_EXCLUDED_RGB = (0x8c, 0x8c, 0x8c)
_WIRE_COLOR = "#2b2b2b"
_FIG_W_IN = 7.0               # 178 mm: the worksheet frame is 180 mm wide, so text prints at its own size
_MAP_MAX_W_IN = 5.1
_MAP_MAX_H_IN = 3.4
_MAP_MAX_PRINT_H = 98 * 2.8346   # printed height of a map with its legend [pt] (98 mm)
_FRAME_W_PT = 180 * 2.8346       # the worksheet frame's width [pt]
#: A limit contour smaller than this on paper [mm] gets a zoomed inset.
INSET_BELOW_MM = 6.0


def has_near_field_maps(res) -> bool:
    """Whether any configuration of ``res`` carries a near-field map."""
    return any(c.near_field_map is not None for c in res.configurations)


def comparison_exposures(res) -> list:
    """(place, exposure) pairs evaluated with the moment method, carrying both ratios, in place order."""
    return [(pl, x) for pl in res.places for x in pl.exposures
            if x.far_field_ratio is not None and x.near_field_ratio is not None]


def _difference_db(near: float, far: float) -> str:
    """10 log10(near / far), signed with one decimal (power-like ratios: 10 log)."""
    if not (far > 0 and near > 0 and math.isfinite(far) and math.isfinite(near)):
        return "–"
    return margin_text(10.0 * math.log10(near / far))


def _governs(x) -> str:
    if x.exposure_ratio == x.near_field_ratio:
        return "near-field result"
    if x.exposure_ratio == x.far_field_ratio:
        return "far-field estimate"
    return "neither (see section 4.2)"


def near_field_comparison_section(res, width: float, numbers: dict, number: str) -> list:
    """Sub-section ``number`` of the places: far-field estimate beside the moment-method result.

    Empty when no place was evaluated with the moment method.
    """
    pairs = comparison_exposures(res)
    if not pairs:
        return []
    boundary = {c.id: max(c.near_field_distance_m, c.aperture_far_field_m or 0.0) for c in res.configurations}
    rows = []
    for pl, x in pairs:
        rows.append([f"{numbers[pl.label]} {pl.label}", x.configuration, f"{x.dist_m:.2f}",
                     f"{boundary[x.configuration]:.2f}", ratio_text(x.far_field_ratio),
                     ratio_text(x.near_field_ratio), _difference_db(x.near_field_ratio, x.far_field_ratio),
                     _governs(x), x.method])
    out = [section_heading(number, "Near-field result beside the far-field estimate", level=1),
           p("Places inside the near-field boundary of a wire antenna (λ/2π, or 2D²/λ where the antenna is larger): "
             "the far-field formula is not valid there, so rfsafe also "
             "solves the antenna with the method of moments and evaluates the fields at the place's body "
             "heights (worst height). The near-field result governs inside that boundary. Difference = "
             "10 log10(near-field ratio / far-field ratio): positive where the far-field estimate understated "
             "the exposure.", "small")]
    out.append(data_table(["place", "configuration", "distance m", "boundary m", "far-field ratio",
                           "near-field ratio", "difference dB", "governs", "method"], rows,
                          [29 * mm, 22 * mm, 13 * mm, 11 * mm, 14 * mm, 15 * mm, 14 * mm, 25 * mm,
                           width - 143 * mm], align="llrrrrrll"))
    return out


# ------------------------------------------------------------------ map
def _edges(c):
    """Cell edges of a grid of cell centres (the colour field covers the whole grid extent)."""
    import numpy as np

    c = np.asarray(c, dtype=float)
    if c.size == 1:
        return np.array([c[0] - 0.5, c[0] + 0.5])
    mid = (c[:-1] + c[1:]) / 2
    return np.concatenate([[c[0] - (mid[0] - c[0])], mid, [c[-1] + (c[-1] - mid[-1])]])


def _places_in_map(m, places) -> list:
    """The places whose (x, y) lies inside the map's drawn area."""
    xe, ye = _edges(m.x_m), _edges(m.y_m)
    return [pl for pl in places if xe[0] <= pl.x_m <= xe[-1] and ye[0] <= pl.y_m <= ye[-1]]


def _colour_range(values) -> tuple[float, float]:
    """Decade-aligned colour-scale range: holds the largest ratio and 1 (the limit), at most MAX_DECADES."""
    import numpy as np

    v = values[np.isfinite(values) & (values > 0)]
    top = max(float(v.max()), 1.0) if v.size else 1.0
    hi = 10.0 ** math.ceil(math.log10(top) - 1e-9)
    lo = 10.0 ** math.floor(math.log10(float(v.min())) + 1e-9) if v.size else hi / 100.0
    lo = min(max(lo, hi / 10.0 ** MAX_DECADES), hi / 100.0)
    return lo, hi


def _contour_label(quantity: str, env: str, field, max_ratio: float) -> str:
    import numpy as np

    name = f"{quantity.upper()} = {env} limit"
    finite = field[np.isfinite(field)]
    if finite.size and float(finite.min()) > 1.0:
        return f"{name}: exceeded over the whole map"
    if max_ratio <= 1.0:
        return f"{name}: not reached (max ratio {num(max_ratio)})"
    return f"{name} (max ratio {num(max_ratio)})"


def _inset(ax, small, x, y, xe, ye, rgb, fields, m, places, span_x, obstacles):
    """A zoomed view of the small contours in the corner of the map that hides the fewest features."""
    import numpy as np

    from rfsafe.report.maps import MapAxes

    x0 = min(e[0] for e in small)
    y0 = min(e[1] for e in small)
    x1 = max(e[2] for e in small)
    y1 = max(e[3] for e in small)
    cell = float(np.median(np.diff(x))) if len(x) > 1 else 1.0
    half = max(x1 - x0, y1 - y0, 4 * cell) * 0.8
    cx, cy = (x0 + x1) / 2, (y0 + y1) / 2
    size = 0.34
    top = 1 - size - 0.07          # room for the inset's title inside the map
    corners = {(1 - size - 0.02, top): "upper right", (0.02, top): "upper left",
               (1 - size - 0.02, 0.06): "lower right", (0.1, 0.06): "lower left"}
    obs = np.asarray(obstacles, dtype=float) if obstacles else np.empty((0, 2))
    u = (obs[:, 0] - xe[0]) / (xe[-1] - xe[0]) if obs.size else obs
    v = (obs[:, 1] - ye[0]) / (ye[-1] - ye[0]) if obs.size else obs

    def hidden(corner):
        if not obs.size:
            return 0
        return int(np.count_nonzero((u >= corner[0]) & (u <= corner[0] + size) & (v >= corner[1])
                                    & (v <= corner[1] + size)))

    corner = min(corners, key=hidden)
    box = (ax.x0 + corner[0] * ax.w, ax.y0 + corner[1] * ax.h, size * ax.w, size * ax.h)
    view = (cx - half, cx + half, cy - half, cy + half)
    ins = MapAxes(ax.d, box, xlim=view[:2], ylim=view[2:])
    ax._add_box((ins.x0 - 14, ins.y0 - 10, ins.x0 + ins.w + 2, ins.y0 + ins.h + 10))   # labels stay off it
    ins.raster(xe, ye, rgb, view=view)
    for (q, env), style in CONTOUR_STYLE.items():
        f = fields[(q, env)]
        fin = f[np.isfinite(f)]
        if fin.size and float(fin.min()) < 1.0 < float(fin.max()):
            for line in ins.contour_lines(x, y, f):
                ins.line(line[:, 0], line[:, 1], color=style["color"], width=style["linewidth"],
                         dash=dash_points(style["linestyle"], style["linewidth"]))
    for path in m.wire_paths_m:
        xs = [pt[0] for pt in path]
        ys = [pt[1] for pt in path]
        if len(set(zip(xs, ys))) == 1:
            ins.point(xs[0], ys[0], size=5, face=_WIRE_COLOR, edge=None, edge_width=0)
        else:
            ins.line(xs, ys, color=_WIRE_COLOR, width=2.0)
    for pl in places:
        if view[0] <= pl.x_m <= view[1] and view[2] <= pl.y_m <= view[3]:
            ins.point(pl.x_m, pl.y_m, shape="s" if pl.environment == "controlled" else "o", size=5, edge_width=1.0)
    ins.frame_map(tick_size=5.5, tick_len=2, pad=1)
    ins.d.add(String(ins.x0 + ins.w / 2, ins.y0 + ins.h + 2 + 0.24 * 6, f"zoom ×{span_x / (2 * half):.0f}",
                     fontName=FONT, fontSize=6, textAnchor="middle"))
    # the zoomed window on the map, joined to the inset at the two corners facing each other
    rx0, ry0, rx1, ry1 = ax.px(view[0]), ax.py(view[2]), ax.px(view[1]), ax.py(view[3])
    ax.d.add(Rect(rx0, ry0, rx1 - rx0, ry1 - ry0, fillColor=None, strokeColor=colors.black, strokeWidth=0.8))
    pairs = [((rx, ry), (ix, iy)) for (rx, ry), (ix, iy) in zip(
        [(rx0, ry0), (rx1, ry0), (rx0, ry1), (rx1, ry1)],
        [(ins.x0, ins.y0), (ins.x0 + ins.w, ins.y0), (ins.x0, ins.y0 + ins.h), (ins.x0 + ins.w, ins.y0 + ins.h)])]
    for (a, b) in sorted(pairs, key=lambda pr: math.dist(*pr))[:2]:
        ax.d.add(Line(*a, *b, strokeColor=colors.black, strokeWidth=0.8))


def near_field_map_drawing(cfg, places, *, place_numbers: dict):
    """Draw the near-field map of one wire-antenna configuration; a reportlab Drawing [pt].

    Drawn: the larger of the E and H exposure ratios against the uncontrolled limit as a colour
    field on a log scale (colour bar labelled, 1 = limit marked); the contours ratio = 1 of E and
    of H for both environments (four line styles, in the legend); cells left out because they
    touch a conductor (grey); each wire in plan view (a vertical wire is a dot); the declared
    places inside the map area (circle: uncontrolled, square: controlled) with their numbers.
    Axes in metres, x east, y north, equal aspect. The drawing is 7 in wide (text at its own
    size); :func:`near_field_map_section` scales it to the page.

    Parameters
    ----------
    cfg : ConfigurationResult
        A configuration whose ``near_field_map`` is set.
    places : sequence of PlaceResult
        Declared places; those inside the map area are marked.
    place_numbers : dict
        Place label -> marker number (``"P1"``...), as in the worksheet's tables.
    """
    import numpy as np

    from rfsafe.report.maps import MapAxes, colour_bar, colour_rgb, legend, new_map

    m = cfg.near_field_map
    x = np.asarray(m.x_m, dtype=float)
    y = np.asarray(m.y_m, dtype=float)
    fields = {(q, env): np.asarray((m.e_ratio if q == "e" else m.h_ratio)[env], dtype=float)
              for q in ("e", "h") for env in ENVIRONMENTS}
    shown = np.fmax(fields[("e", "uncontrolled")], fields[("h", "uncontrolled")])   # NaN only where both are
    lo, hi = _colour_range(shown)

    xe, ye = _edges(x), _edges(y)
    span_x, span_y = xe[-1] - xe[0], ye[-1] - ye[0]
    map_w = _MAP_MAX_W_IN
    map_h = map_w * span_y / span_x
    if map_h > _MAP_MAX_H_IN:
        map_h = _MAP_MAX_H_IN
        map_w = map_h * span_x / span_y
    map_h = max(map_h, 1.2)
    left, top, below_map, legend_h = 0.62, 0.44, 0.36, 0.66
    height = top + map_h + below_map + legend_h
    width = _FIG_W_IN
    d = new_map(width * 72.0, height * 72.0)
    base = (legend_h + below_map) * 72.0
    ax = MapAxes(d, (left * 72.0, base, map_w * 72.0, map_h * 72.0), xlim=(xe[0], xe[-1]), ylim=(ye[0], ye[-1]))
    rgb = colour_rgb(np.clip(shown, lo, hi), lo, hi, bad=_EXCLUDED_RGB)
    ax.raster(xe, ye, rgb)

    handles = []
    contour_xy = []
    extents = []             # each drawn contour's (x0, y0, x1, y1) [m]
    for (q, env), style in CONTOUR_STYLE.items():
        f = fields[(q, env)]
        fin = f[np.isfinite(f)]
        dash = dash_points(style["linestyle"], style["linewidth"])
        if fin.size and float(fin.min()) < 1.0 < float(fin.max()):
            lines = ax.contour_lines(x, y, f)
            for line in lines:
                ax.line(line[:, 0], line[:, 1], color=style["color"], width=style["linewidth"], dash=dash, halo=1.8)
                contour_xy += [tuple(v) for v in line]
            if lines:
                a = np.concatenate(lines)
                extents.append((a[:, 0].min(), a[:, 1].min(), a[:, 0].max(), a[:, 1].max()))
        max_ratio = (m.max_e_ratio if q == "e" else m.max_h_ratio)[env]
        handles.append((("line", style["color"], style["linewidth"], dash), _contour_label(q, env, f, max_ratio)))

    wire_xy = []
    vertical_drawn = False
    for path in m.wire_paths_m:
        xs = [pt[0] for pt in path]
        ys = [pt[1] for pt in path]
        if max(xs) - min(xs) < 1e-9 and max(ys) - min(ys) < 1e-9:
            ax.point(xs[0], ys[0], size=6.5, face=_WIRE_COLOR, edge="#ffffff", edge_width=1.0)
            vertical_drawn = True
            wire_xy.append((xs[0], ys[0]))
            continue
        ax.line(xs, ys, color=_WIRE_COLOR, width=2.2, halo=1.6, cap=1)
        for (x1, y1), (x2, y2) in zip(path[:-1], path[1:]):
            for t in np.linspace(0.0, 1.0, 41):
                wire_xy.append((x1 + t * (x2 - x1), y1 + t * (y2 - y1)))

    marks = []
    for pl in _places_in_map(m, places):
        ax.point(pl.x_m, pl.y_m, shape="s" if pl.environment == "controlled" else "o", size=6)
        marks.append((pl.x_m, pl.y_m, place_numbers[pl.label]))   # names in the caption

    ax.title([f"{cfg.id}  ·  {m.antenna}  ·  {cfg.freq_mhz:g} MHz  ·  {cfg.mode}", m.plane])
    # a limit contour smaller than a few millimetres on paper gets a zoomed inset
    printed_in_per_m = map_w / span_x * min(1.0, _FRAME_W_PT / (width * 72.0), _MAP_MAX_PRINT_H / (height * 72.0))
    small = [e for e in extents if max(e[2] - e[0], e[3] - e[1]) * printed_in_per_m * 25.4 < INSET_BELOW_MM]
    if small:
        _inset(ax, small, x, y, xe, ye, rgb, fields, m, places, span_x,
               obstacles=wire_xy + contour_xy + [(mk[0], mk[1]) for mk in marks])
    ax.place_labels(marks)
    ax.frame_map(xlabel="x east [m]", ylabel="y north [m]")

    decades = list(range(round(math.log10(lo)), round(math.log10(hi)) + 1))
    finite = shown[np.isfinite(shown)]
    labels = []
    for k in decades:
        text = "1 = limit" if k == 0 else decade_label(k)
        if k == decades[0] and finite.size and float(finite.min()) < lo:
            text = "≤ " + text
        labels.append(text)
    sub = [("lim", FONT, 4.6, -1.4)]
    colour_bar(d, (left + map_w + 0.14) * 72.0, base, 0.12 * 72.0, map_h * 72.0, lo=lo, hi=hi,
               ticks=[10.0 ** k for k in decades], labels=labels, limit_line=True, label_lines=[
                   [("larger of (E/E", FONT, 6.5, 0.0), *sub, (")² and (H/H", FONT, 6.5, 0.0), *sub,
                    (")²", FONT, 6.5, 0.0)],
                   "against the uncontrolled limit", f"worst of heights {m.heights_m[0]:g}–{m.heights_m[-1]:g} m"])

    handles.append((("line", _WIRE_COLOR, 2.2, None),
                    "wire seen from above" + (" (dot: vertical wire)" if vertical_drawn else "")))
    handles.append((("marker", "o", 5.5, "#ffffff", "#000000", 1.0), "place, uncontrolled (square: controlled)"))
    handles.append((("patch", _EXCLUDED_COLOR), f"left out: touches a conductor ({m.excluded_points} cell"
                    f"{'' if m.excluded_points == 1 else 's'})"))
    legend(d, 0.01 * width * 72.0 + 2.6, legend_h * 72.0 - 3.0, handles, ncol=2, size=6.5, handlelength=3.2,
           columnspacing=1.6)
    return d


def near_field_map_section(res, width: float, numbers: dict, number: str, note=None) -> list:
    """Figure sub-section ``number``: one near-field map per configuration that carries one.

    The heading, its introduction (and ``note``, a flowable, when given) are kept on the page of the
    first map. Empty when no configuration carries a near-field map.
    """
    cfgs = [c for c in res.configurations if c.near_field_map is not None]
    if not cfgs:
        return []
    out = [section_heading(number, "Near-field maps of the wire antennas", level=1),
           p("Exposure ratios from the moment-method solution of each wire antenna on a horizontal grid around "
             "it, each grid point taking the worst of the body heights named in the caption. Colour: the larger "
             "of the E and H ratios against the uncontrolled limit; lines: where E or H reaches the uncontrolled "
             "or the controlled limit. Places are numbered as in section 4.", "small")]
    for c in cfgs:
        m = c.near_field_map
        drawing = near_field_map_drawing(c, res.places, place_numbers=numbers)
        img = scaled(drawing, min(1.0, width / drawing.width, _MAP_MAX_PRINT_H / drawing.height))   # two maps a page
        n_cells = len(m.x_m) * len(m.y_m)
        marked = [f"{numbers[pl.label]} {escape(pl.label)}" for pl in _places_in_map(m, res.places)]
        xe, ye = _edges(m.x_m), _edges(m.y_m)
        caption = (f"Near-field map of {escape(c.id)} ({escape(m.antenna)}, {c.freq_mhz:g} MHz): "
                   f"{len(m.x_m)} × {len(m.y_m)} cells over x {xe[0]:.1f} to {xe[-1]:.1f} m, "
                   f"y {ye[0]:.1f} to {ye[-1]:.1f} m; {escape(m.plane)}. Largest ratio in the map: "
                   f"E {ratio_text(m.max_e_ratio['uncontrolled'])}, H {ratio_text(m.max_h_ratio['uncontrolled'])} "
                   f"(uncontrolled); E {ratio_text(m.max_e_ratio['controlled'])}, "
                   f"H {ratio_text(m.max_h_ratio['controlled'])} (controlled). "
                   f"{m.excluded_points} of {n_cells} cells left out because they touch a conductor "
                   f"(grey; thin-wire fields do not hold there). "
                   + (f"Places marked: {'; '.join(marked)}." if marked else "No declared place lies in the map area."))
        out.append([img, p(caption, "caption", markup=True)])
    head = out[:2] + ([note] if note is not None else [])
    maps = out[2:]
    return [KeepTogether(head + maps[0])] + [KeepTogether(m) for m in maps[1:]]
