"""Near-field results of wire antennas in the station worksheet: maps and the near/far comparison.

Rendering only: every value drawn or printed comes from an :class:`rfsafe.results.EvaluationResult`
(the :class:`~rfsafe.results.NearFieldMap` of each wire-antenna configuration and the
``far_field_ratio`` / ``near_field_ratio`` pair of each place evaluated with the moment method).
The only arithmetic is presentation: the larger of the E and H ratios for the colour field, its
logarithm for the colour scale, and the difference 10 log10(near / far) in dB.

The map is drawn with matplotlib's Agg renderer at a fixed style, size and resolution, without a
"Software" stamp, so the same result gives the same PNG bytes (and the same PDF).
"""

from __future__ import annotations

import io
import math
from xml.sax.saxutils import escape

from reportlab.lib.units import mm
from reportlab.platypus import Image, KeepTogether

from rfsafe.report.common import data_table, margin_text, num, p, ratio_text, section_heading
from rfsafe.report.plots import decade_label

__all__ = ["NEAR_FIELD_METHOD", "has_near_field_maps", "comparison_exposures", "near_field_map_png",
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
_WIRE_COLOR = "#2b2b2b"
_FIG_W_IN = 7.0               # 178 mm: the worksheet frame is 180 mm wide, so text prints at its own size
_MAP_MAX_W_IN = 5.1
_MAP_MAX_H_IN = 3.4
_DPI = 160
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


def _place_labels(ax, marks, obstacle_xy, renderer, colors=None):
    """Label each place marker on the side where the text stays in the axes and covers the fewest wire and
    contour points, other markers and labels (``colors``: one text colour per mark, default black)."""
    import numpy as np

    axbox = ax.get_window_extent(renderer)
    obstacles = ax.transData.transform(np.asarray(obstacle_xy)) if obstacle_xy else np.empty((0, 2))
    from rfsafe.report.plots import _BucketIndex

    # markers sorted by x (a box finds its markers by two binary searches) and placed labels in a
    # bucket index: P labels cost about P box tests, not P^2
    taken = ax.transData.transform(np.array([(x, y) for x, y, _ in marks], dtype=float).reshape(-1, 2))
    order = np.argsort(taken[:, 0], kind="stable")
    taken_x, taken_y = taken[order, 0], taken[order, 1]
    taken_boxes: list[tuple[float, float, float, float]] = []
    box_index = _BucketIndex()
    near = [(6, 5, "left", "bottom"), (6, -5, "left", "top"), (-6, 5, "right", "bottom"),
            (-6, -5, "right", "top"), (0, 8, "center", "bottom"), (0, -8, "center", "top")]
    # then farther out, so that a crowded marker still finds a free spot close by
    offsets = near + [(dx * k, dy * k, ha, va) for k in (2, 3) for dx, dy, ha, va in near]
    px_per_pt = ax.figure.dpi / 72.0

    def annotate(k, x, y, text, dx, dy, ha, va):
        return ax.annotate(text, (x, y), xytext=(dx, dy), textcoords="offset points", ha=ha, va=va, fontsize=7.5,
                           fontweight="bold", color=colors[k] if colors else "black",
                           zorder=12, bbox=dict(boxstyle="round,pad=0.18", facecolor="white", edgecolor="none",
                                                alpha=0.85))

    for k, (x, y, text) in enumerate(marks):
        best = None
        made = {}     # (ha, va) -> (annotation, dx, dy, box): farther offsets of one alignment are translations
        for dx, dy, ha, va in offsets:
            if (ha, va) not in made:
                t = annotate(k, x, y, text, dx, dy, ha, va)
                made[(ha, va)] = (t, dx, dy, t.get_window_extent(renderer).expanded(1.04, 1.1))
                box = made[(ha, va)][3]
            else:
                _, dx0, dy0, box0 = made[(ha, va)]
                box = box0.translated((dx - dx0) * px_per_pt, (dy - dy0) * px_per_pt)
            pad = 3
            inside = (box.x0 >= axbox.x0 + pad and box.x1 <= axbox.x1 - pad and box.y0 >= axbox.y0 + pad
                      and box.y1 <= axbox.y1 - pad)
            hits = int(np.count_nonzero((obstacles[:, 0] >= box.x0) & (obstacles[:, 0] <= box.x1)
                                        & (obstacles[:, 1] >= box.y0) & (obstacles[:, 1] <= box.y1)))
            bx0, by0, bx1, by1 = box.extents
            lo, hi = np.searchsorted(taken_x, bx0, "left"), np.searchsorted(taken_x, bx1, "right")
            ys = taken_y[lo:hi]
            hits += int(np.count_nonzero((ys >= by0) & (ys <= by1)))
            hits += sum(1 for i in box_index.near(bx0, by0, bx1, by1)
                        if bx0 <= taken_boxes[i][2] and taken_boxes[i][0] <= bx1
                        and by0 <= taken_boxes[i][3] and taken_boxes[i][1] <= by1)
            score = (0 if inside else 1, hits)
            if best is None or score < best[0]:
                best = (score, (dx, dy, ha, va), box)
            if score == (0, 0):
                break
        dx, dy, ha, va = best[1]
        keep = made[(ha, va)][0] if made[(ha, va)][1:3] == (dx, dy) else None
        for t, *_ in made.values():
            if t is not keep:
                t.remove()
        if keep is None:
            annotate(k, x, y, text, dx, dy, ha, va)
        box_index.add(len(taken_boxes), *best[2].extents)
        taken_boxes.append(tuple(best[2].extents))


def _inset(ax, small, x, y, xe, ye, field, cmap, norm, fields, wire_xy, m, places, span_x, obstacles):
    """A zoomed view of the small contours in the corner of the map that hides the fewest features."""
    import numpy as np

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
    ins = ax.inset_axes((corner[0], corner[1], size, size))
    ins.pcolormesh(xe, ye, field, cmap=cmap, norm=norm, shading="flat", rasterized=True)
    for (q, env), style in CONTOUR_STYLE.items():
        f = fields[(q, env)]
        fin = f[np.isfinite(f)]
        if fin.size and float(fin.min()) < 1.0 < float(fin.max()):
            ins.contour(x, y, np.ma.masked_invalid(f), levels=[1.0], colors=style["color"],
                        linewidths=style["linewidth"], linestyles=[style["linestyle"]], zorder=6)
    for path in m.wire_paths_m:
        xs = [pt[0] for pt in path]
        ys = [pt[1] for pt in path]
        ins.plot(xs, ys, color=_WIRE_COLOR, linewidth=2.0, marker="o" if len(set(zip(xs, ys))) == 1 else None,
                 markersize=5, zorder=8)
    for pl in places:
        ins.plot([pl.x_m], [pl.y_m], marker="s" if pl.environment == "controlled" else "o", markersize=5,
                 markerfacecolor="white", markeredgecolor="black", linestyle="none", zorder=9)
    ins.set_xlim(cx - half, cx + half)
    ins.set_ylim(cy - half, cy + half)
    ins.set_aspect("equal", adjustable="box")
    ins.tick_params(labelsize=5.5, length=2, pad=1)
    ins.set_title(f"zoom ×{span_x / (2 * half):.0f}", fontsize=6, pad=2)
    ax.indicate_inset_zoom(ins, edgecolor="black", linewidth=0.8)


def near_field_map_png(cfg, places, *, place_numbers: dict, dpi: int = _DPI,
                       boxes: list | None = None) -> tuple[bytes, float, float]:
    """Draw the near-field map of one wire-antenna configuration; PNG bytes and its size [in].

    Drawn: the larger of the E and H exposure ratios against the uncontrolled limit as a colour
    field on a log scale (colour bar labelled, 1 = limit marked); the contours ratio = 1 of E and
    of H for both environments (four line styles, in the legend); cells left out because they
    touch a conductor (grey); each wire in plan view (a vertical wire is a dot); the declared
    places inside the map area (circle: uncontrolled, square: controlled) with their numbers and
    labels. Axes in metres, x east, y north, equal aspect.

    Parameters
    ----------
    cfg : ConfigurationResult
        A configuration whose ``near_field_map`` is set.
    places : sequence of PlaceResult
        Declared places; those inside the map area are marked.
    place_numbers : dict
        Place label -> marker number (``"P1"``...), as in the worksheet's tables.
    dpi : int
        Resolution of the PNG [1/in].
    boxes : list, optional
        When given, receives (text, box) of every label drawn (see :func:`rfsafe.report.plan_map.text_boxes`).

    Returns
    -------
    (bytes, float, float)
        PNG bytes, figure width and height [in].
    """
    import matplotlib
    import matplotlib.style
    import numpy as np
    from matplotlib import patheffects
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.colors import LogNorm
    from matplotlib.figure import Figure
    from matplotlib.lines import Line2D
    from matplotlib.patches import Patch
    from PIL import Image as PILImage

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

    with matplotlib.style.context("default"), matplotlib.rc_context({
            "font.family": "DejaVu Sans", "font.size": 7.5, "axes.linewidth": 0.6, "path.simplify": True,
            "mathtext.fontset": "dejavusans"}):
        fig = Figure(figsize=(width, height), dpi=dpi)
        canvas = FigureCanvasAgg(fig)
        ax = fig.add_axes((left / width, (legend_h + below_map) / height, map_w / width, map_h / height))
        cb_x = left + map_w + 0.14
        cax = fig.add_axes((cb_x / width, (legend_h + below_map) / height, 0.12 / width, map_h / height))

        cmap = matplotlib.colormaps["OrRd"].with_extremes(bad=_EXCLUDED_COLOR)
        field = np.ma.masked_invalid(np.clip(shown, lo, hi))
        mesh = ax.pcolormesh(xe, ye, field, cmap=cmap, norm=LogNorm(lo, hi), shading="flat", rasterized=True)
        cb = fig.colorbar(mesh, cax=cax)
        decades = list(range(round(math.log10(lo)), round(math.log10(hi)) + 1))
        finite = shown[np.isfinite(shown)]
        labels = []
        for k in decades:
            text = "1 = limit" if k == 0 else decade_label(k)
            if k == decades[0] and finite.size and float(finite.min()) < lo:
                text = "≤ " + text
            labels.append(text)
        cb.set_ticks([10.0 ** k for k in decades], labels=labels)
        cb.ax.tick_params(labelsize=6.5, length=2.5)
        cb.ax.minorticks_off()
        cb.ax.axhline(1.0, color="black", linewidth=0.8)
        cb.set_label("larger of $(E/E_\\mathrm{lim})^2$ and $(H/H_\\mathrm{lim})^2$\n"
                     f"against the uncontrolled limit\nworst of heights {m.heights_m[0]:g}–{m.heights_m[-1]:g} m",
                     fontsize=6.5, linespacing=1.25, labelpad=5)

        handles = []
        contour_xy = []
        extents = []             # each drawn contour's (x0, y0, x1, y1) [m]
        for (q, env), style in CONTOUR_STYLE.items():
            f = fields[(q, env)]
            fin = f[np.isfinite(f)]
            if fin.size and float(fin.min()) < 1.0 < float(fin.max()):
                cs = ax.contour(x, y, np.ma.masked_invalid(f), levels=[1.0], colors=style["color"],
                                linewidths=style["linewidth"], linestyles=[style["linestyle"]], zorder=6)
                cs.set_path_effects([patheffects.withStroke(linewidth=style["linewidth"] + 1.8,
                                                            foreground="white")])
                pts = [tuple(v) for path in cs.get_paths() for v in path.vertices]
                contour_xy += pts
                if pts:
                    a = np.asarray(pts)
                    extents.append((a[:, 0].min(), a[:, 1].min(), a[:, 0].max(), a[:, 1].max()))
            max_ratio = (m.max_e_ratio if q == "e" else m.max_h_ratio)[env]
            handles.append(Line2D([], [], label=_contour_label(q, env, f, max_ratio), **style))

        wire_xy = []
        halo = [patheffects.withStroke(linewidth=3.8, foreground="white")]
        vertical_drawn = False
        for path in m.wire_paths_m:
            xs = [pt[0] for pt in path]
            ys = [pt[1] for pt in path]
            if max(xs) - min(xs) < 1e-9 and max(ys) - min(ys) < 1e-9:
                ax.plot(xs[:1], ys[:1], marker="o", markersize=6.5, color=_WIRE_COLOR, markeredgecolor="white",
                        markeredgewidth=1.0, linestyle="none", zorder=8)
                vertical_drawn = True
                wire_xy.append((xs[0], ys[0]))
                continue
            ax.plot(xs, ys, color=_WIRE_COLOR, linewidth=2.2, solid_capstyle="round", zorder=8, path_effects=halo)
            for (x1, y1), (x2, y2) in zip(path[:-1], path[1:]):
                for t in np.linspace(0.0, 1.0, 41):
                    wire_xy.append((x1 + t * (x2 - x1), y1 + t * (y2 - y1)))

        marks = []
        for pl in _places_in_map(m, places):
            shape = "s" if pl.environment == "controlled" else "o"
            ax.plot([pl.x_m], [pl.y_m], marker=shape, markersize=6, markerfacecolor="white",
                    markeredgecolor="black", markeredgewidth=1.1, linestyle="none", zorder=11)
            marks.append((pl.x_m, pl.y_m, place_numbers[pl.label]))   # names in the caption

        ax.set_xlim(xe[0], xe[-1])
        ax.set_ylim(ye[0], ye[-1])
        ax.set_aspect("equal", adjustable="box")
        ax.set_xlabel("x east [m]", labelpad=2)
        ax.set_ylabel("y north [m]", labelpad=2)
        ax.tick_params(labelsize=6.5, length=2.5)
        ax.set_title(f"{cfg.id}  ·  {m.antenna}  ·  {cfg.freq_mhz:g} MHz  ·  {cfg.mode}\n{m.plane}",
                     fontsize=8, loc="left", pad=4)
        # a limit contour smaller than a few millimetres on paper gets a zoomed inset
        printed_in_per_m = map_w / span_x * min(1.0, _FRAME_W_PT / (width * 72.0), _MAP_MAX_PRINT_H / (height * 72.0))
        small = [e for e in extents if max(e[2] - e[0], e[3] - e[1]) * printed_in_per_m * 25.4 < INSET_BELOW_MM]
        if small:
            _inset(ax, small, x, y, xe, ye, field, cmap, LogNorm(lo, hi), fields, wire_xy, m, places, span_x,
                   obstacles=wire_xy + contour_xy + [(mk[0], mk[1]) for mk in marks])
        _place_labels(ax, marks, wire_xy + contour_xy, canvas.get_renderer())

        handles.append(Line2D([], [], color=_WIRE_COLOR, linewidth=2.2,
                              label="wire seen from above" + (" (dot: vertical wire)" if vertical_drawn else "")))
        handles.append(Line2D([], [], marker="o", markersize=5.5, markerfacecolor="white", markeredgecolor="black",
                              linestyle="none", label="place, uncontrolled (square: controlled)"))
        handles.append(Patch(facecolor=_EXCLUDED_COLOR, edgecolor="none",
                             label=f"left out: touches a conductor ({m.excluded_points} cell"
                             f"{'' if m.excluded_points == 1 else 's'})"))
        fig.legend(handles=handles, loc="lower left", bbox_to_anchor=(0.01, 0.005), ncol=2,
                   fontsize=6.5, frameon=False, handlelength=3.2, columnspacing=1.6, borderaxespad=0.2)
        canvas.draw()
        if boxes is not None:
            from rfsafe.report.plan_map import text_boxes

            boxes.extend(text_boxes(fig, canvas.get_renderer()))
        rgb = np.ascontiguousarray(np.asarray(canvas.buffer_rgba())[..., :3])
    # an opaque RGB PNG written by PIL without text chunks: no transparency mask for the PDF to carry
    # (a third of the build time), and no time stamp or version, so the bytes depend on the drawing only
    buf = io.BytesIO()
    PILImage.fromarray(rgb).save(buf, format="PNG", compress_level=3)
    return buf.getvalue(), width, height


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
        png, w_in, h_in = near_field_map_png(c, res.places, place_numbers=numbers)
        scale = min(1.0, width / (w_in * 72.0), _MAP_MAX_PRINT_H / (h_in * 72.0))   # two maps to a page
        img = Image(io.BytesIO(png), width=w_in * 72.0 * scale, height=h_in * 72.0 * scale)
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
