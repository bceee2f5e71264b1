"""The station plan: antennas to size and orientation, places, and keep-out areas, seen from above.

Rendering only: every value drawn comes from an :class:`rfsafe.results.EvaluationResult` (its
``antennas`` and ``plan``, computed by :mod:`rfsafe.site.plan`). Drawn with matplotlib's Agg
renderer at a fixed style, size and resolution, as an opaque PNG without text chunks, so the same
result gives the same bytes.
"""

from __future__ import annotations

import io
import math

__all__ = ["plan_map_png", "KEEP_OUT_STYLE", "text_boxes", "MAX_NUMBERED_PLACES", "numbered_places"]

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
_DPI = 160


def text_boxes(fig, renderer) -> list[tuple[str, tuple[float, float, float, float]]]:
    """Every visible, non-empty text of a drawn matplotlib figure with its box (x0, y0, x1, y1) [px].

    Legends and colour-bar labels are included; used by the tests that check that no two labels
    overlap.
    """
    from matplotlib.text import Text

    ticks, drawn = set(), set()           # tick labels exist for ticks that are never drawn: keep the drawn ones
    for ax in fig.axes:
        for axis in (ax.xaxis, ax.yaxis):
            for tick in axis.get_major_ticks() + axis.get_minor_ticks():
                ticks.update((id(tick.label1), id(tick.label2)))
            if ax.axison and axis.get_visible():
                for tick in axis._update_ticks():
                    drawn.update(id(lab) for lab in (tick.label1, tick.label2) if lab.get_visible())
        if not ax.axison:
            ticks.update((id(ax.xaxis.label), id(ax.yaxis.label)))
    out = []
    for t in fig.findobj(Text):
        if not t.get_visible() or not str(t.get_text()).strip() or (id(t) in ticks and id(t) not in drawn):
            continue
        b = t.get_window_extent(renderer)
        out.append((str(t.get_text()), (b.x0, b.y0, b.x1, b.y1)))
    return out


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


def _drop_overlapping_numbers(ax, renderer, numbers: set) -> None:
    """Remove place numbers whose box meets an earlier label's (antenna names and the north arrow come
    first): on a crowded plan a number that finds no free room is left off rather than covering another."""
    kept = []
    for t in list(ax.texts):
        b = t.get_window_extent(renderer)
        box = (b.x0, b.y0, b.x1, b.y1)
        if t.get_text() in numbers and any(box[0] < k[2] and k[0] < box[2] and box[1] < k[3] and k[1] < box[3]
                                           for k in kept):
            t.remove()
            continue
        kept.append(box)


def plan_map_png(res, *, place_numbers: dict, width_in: float = 7.0, dpi: int = _DPI,
                 boxes: list | None = None) -> tuple[bytes, float, float]:
    """Draw the plan of ``res``; PNG bytes, width and height [in].

    Parameters
    ----------
    res : EvaluationResult
        An evaluation whose ``plan`` is set.
    place_numbers : dict
        Place label -> marker label (``"P1"``...), as in the worksheet's tables.
    width_in : float
        Figure width [in].
    dpi : int
        Resolution [1/in].
    boxes : list, optional
        When given, receives (text, box) of every label drawn (see :func:`text_boxes`).
    """
    import matplotlib
    import matplotlib.style
    import numpy as np
    from matplotlib import patheffects
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.colors import LogNorm
    from matplotlib.figure import Figure
    from matplotlib.lines import Line2D
    from matplotlib.patches import FancyArrow
    from mpl_toolkits.axes_grid1.anchored_artists import AnchoredSizeBar
    from PIL import Image as PILImage

    from rfsafe.report.near_field import _place_labels
    from rfsafe.report.site_map import nice_length

    plan = res.plan
    x = np.asarray(plan.x_m)
    y = np.asarray(plan.y_m)
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
    with matplotlib.style.context("default"), matplotlib.rc_context({
            "font.family": "DejaVu Sans", "font.size": 7.5, "axes.linewidth": 0.6, "path.simplify": True}):
        fig = Figure(figsize=(width_in, height), dpi=dpi)
        canvas = FigureCanvasAgg(fig)
        ax = fig.add_axes((0.55 / width_in, bottom / height, map_w / width_in, map_h / height))
        lx = (0.55 + map_w + 0.25) / width_in
        cb_h = min(1.05, map_h - 0.45)
        cax = fig.add_axes((lx, (bottom + map_h - cb_h) / height, 0.11 / width_in, cb_h / height))
        if side:
            lax = fig.add_axes((lx, 0.02, 1 - lx - 0.01, (bottom + map_h - cb_h - 0.5) / height))
        else:
            lax = fig.add_axes((0.05 / width_in, 0.02, 1 - 0.1 / width_in, (below - 0.05) / height))
        lax.axis("off")

        shown = np.nan_to_num(np.asarray(plan.ratio[("head", "uncontrolled")], dtype=float),
                              nan=_RANGE[1], posinf=_RANGE[1])
        mesh = ax.pcolormesh(x, y, np.clip(shown, *_RANGE), cmap="OrRd", norm=LogNorm(*_RANGE),
                             shading="nearest", rasterized=True)
        cb = fig.colorbar(mesh, cax=cax)
        cb.set_ticks([0.01, 0.1, 1, 10], labels=["≤ 0.01", "0.1", "1 = limit", "≥ 10"])
        cb.ax.tick_params(labelsize=6.5, length=2)
        cb.ax.minorticks_off()
        cb.set_label("total ratio, uncontrolled,\nhead height", fontsize=6.5, labelpad=3)

        handles = []
        obstacles = []
        for (level, env), style in KEEP_OUT_STYLE.items():
            f = np.nan_to_num(np.asarray(plan.ratio[(level, env)], dtype=float), nan=1e3, posinf=1e3)
            if (f > 1).any() and (f < 1).any():
                cs = ax.contour(x, y, f, levels=[1.0], colors=style["color"], linewidths=style["linewidth"],
                                linestyles=[style["linestyle"]], zorder=6)
                cs.set_path_effects([patheffects.withStroke(linewidth=style["linewidth"] + 1.6,
                                                            foreground="white")])
                obstacles += [tuple(v) for path in cs.get_paths() for v in path.vertices]
            handles.append(Line2D([], [], label=_level_label(level, env, plan), **style))

        arrow_len = 0.09 * max(span_x, span_y)
        halo = [patheffects.withStroke(linewidth=4.0, foreground="white")]
        ant_marks = []
        for a in res.antennas:
            pts = [(p[0], p[1]) for s in a.segments_m for p in s]
            flat = [s for s in a.segments_m if math.hypot(s[1][0] - s[0][0], s[1][1] - s[0][1]) > 1e-6]
            for s in flat:
                ax.plot([s[0][0], s[1][0]], [s[0][1], s[1][1]], color=_ANT, linewidth=2.4, solid_capstyle="round",
                        zorder=8, path_effects=halo)
                for t in np.linspace(0, 1, 21):
                    obstacles.append((s[0][0] + t * (s[1][0] - s[0][0]), s[0][1] + t * (s[1][1] - s[0][1])))
            if not flat:   # vertical structure or a point: a ringed dot
                ax.plot([a.x_m], [a.y_m], marker="o", markersize=6.5, color=_ANT, markeredgecolor="white",
                        markeredgewidth=1.0, linestyle="none", zorder=9)
                obstacles.append((a.x_m, a.y_m))
            if a.kind in ("beam", "table"):
                t = math.radians(a.azimuth_deg)
                ax.add_patch(FancyArrow(a.x_m, a.y_m, arrow_len * math.sin(t), arrow_len * math.cos(t),
                                        width=0.006 * arrow_len / 0.09, head_width=0.3 * arrow_len,
                                        head_length=0.3 * arrow_len, length_includes_head=True,
                                        facecolor=_ANT, edgecolor="white", linewidth=0.5, zorder=9))
                for k in np.linspace(0, 1, 8):
                    obstacles.append((a.x_m + k * arrow_len * math.sin(t), a.y_m + k * arrow_len * math.cos(t)))
            if pts:
                cx = sum(p[0] for p in pts) / len(pts)
                cy = sum(p[1] for p in pts) / len(pts)
            else:
                cx, cy = a.x_m, a.y_m
            ant_marks.append((cx, cy, a.id))

        marks = []
        # numbers about two label widths apart (36 pt on the map) and from the antennas' labels and the north arrow
        north = [(x[0] + 0.95 * span_x, y[0] + f * span_y) for f in (0.84, 0.9, 0.96)]    # the north arrow
        numbered = numbered_places(res.places, min_gap_m=36.0 / 72.0 * span_x / map_w,
                                   keep_clear=[(cx, cy) for cx, cy, _ in ant_marks] + north)
        if len(numbered) == len(res.places):
            for pl in res.places:
                shape = "s" if pl.environment == "controlled" else "o"
                ax.plot([pl.x_m], [pl.y_m], marker=shape, markersize=6, markerfacecolor="white",
                        markeredgecolor="black", markeredgewidth=1.1, linestyle="none", zorder=11)
                marks.append((pl.x_m, pl.y_m, place_numbers[pl.label]))
        else:   # many places: one marker artist per environment, smaller markers, the highest ratios numbered
            size = max(1.5, min(6.0, 0.6 * math.sqrt(map_w * map_h * 72.0 ** 2 / len(res.places))))
            for env, shape in (("uncontrolled", "o"), ("controlled", "s")):
                pts = [(pl.x_m, pl.y_m) for pl in res.places if pl.environment == env]
                if pts:
                    ax.plot([q[0] for q in pts], [q[1] for q in pts], marker=shape, markersize=size,
                            markerfacecolor="white", markeredgecolor="black", markeredgewidth=min(1.1, size / 4),
                            linestyle="none", zorder=11)
            marks = [(pl.x_m, pl.y_m, place_numbers[pl.label]) for pl in numbered]
            shown = {pl.label for pl in numbered}
            obstacles += [(pl.x_m, pl.y_m) for pl in res.places if pl.label not in shown]

        ax.set_xlim(x[0], x[-1])
        ax.set_ylim(y[0], y[-1])
        ax.set_aspect("equal", adjustable="box")
        ax.set_xlabel("x east [m]", labelpad=2)
        ax.set_ylabel("y north [m]", labelpad=2)
        ax.tick_params(labelsize=6.5, length=2.5)
        ax.annotate("N", xy=(0.95, 0.96), xytext=(0.95, 0.84), xycoords="axes fraction", ha="center", va="center",
                    fontsize=8.5, fontweight="bold", zorder=13,
                    arrowprops=dict(arrowstyle="-|>", color="black", linewidth=1.1),
                    bbox=dict(boxstyle="circle,pad=0.12", facecolor="white", edgecolor="none"))
        bar = nice_length(max(span_x, span_y))
        ax.add_artist(AnchoredSizeBar(ax.transData, bar, f"{bar:g} m", loc="lower left", pad=0.35, borderpad=0.5,
                                      sep=2, frameon=True, size_vertical=0.006 * span_y,
                                      fontproperties={"size": 6.5}))
        renderer = canvas.get_renderer()
        ant_labels = [(cx, cy, f"{i}") for cx, cy, i in ant_marks]
        if len(numbered) == len(res.places):
            _place_labels(ax, marks + ant_labels, obstacles, renderer,
                          colors=["black"] * len(marks) + [_ANT] * len(ant_marks))
        else:    # crowded: the antennas are named first, the numbers find room around them
            _place_labels(ax, ant_labels + marks, obstacles, renderer,
                          colors=[_ANT] * len(ant_marks) + ["black"] * len(marks))
            _drop_overlapping_numbers(ax, renderer, {t for _, _, t in marks})

        handles += [
            Line2D([], [], color=_ANT, linewidth=2.4, label="antenna seen from above, to its size"),
            Line2D([], [], marker="o", color=_ANT, markeredgecolor="white", linestyle="none", markersize=6,
                   label="vertical antenna (or size not declared)"),
            Line2D([], [], marker=r"$\rightarrow$", color=_ANT, linestyle="none", markersize=9,
                   label="beam heading"),
            Line2D([], [], marker="o", markerfacecolor="white", markeredgecolor="black", linestyle="none",
                   markersize=5.5, label="place, uncontrolled"),
            Line2D([], [], marker="s", markerfacecolor="white", markeredgecolor="black", linestyle="none",
                   markersize=5.5, label="place, controlled"),
        ]
        lax.legend(handles=handles, loc="upper left", fontsize=6.5, frameon=False, borderaxespad=0.0,
                   handlelength=2.6, labelspacing=0.55, ncol=1 if side else 3, columnspacing=1.2)
        canvas.draw()
        if boxes is not None:
            boxes.extend(text_boxes(fig, renderer))
        rgb = np.ascontiguousarray(np.asarray(canvas.buffer_rgba())[..., :3])
    buf = io.BytesIO()
    PILImage.fromarray(rgb).save(buf, format="PNG", compress_level=3)
    return buf.getvalue(), width_in, height
