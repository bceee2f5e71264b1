"""The site map: areas, stations and beam headings over the total exposure ratio, with keep-out contours.

Rendering only: every value drawn comes from a :class:`rfsafe.site.SiteResult`. The map is drawn
with matplotlib's Agg renderer at a fixed style, size and resolution, without a "Software"
stamp, so the same result gives the same PNG bytes.
"""

from __future__ import annotations

import io
import math

import numpy as np

__all__ = ["site_map_png", "KIND_STYLE", "nice_length", "text_boxes"]

#: How each kind of area is drawn: edge colour, hatch, fill (light, so the colour field shows through).
KIND_STYLE = {
    "public": dict(edgecolor="#0b4f8a", hatch="", facecolor="none", linestyle="-"),
    "operators": dict(edgecolor="#5b2a86", hatch="//", facecolor="none", linestyle="-"),
    "no-access": dict(edgecolor="#444444", hatch="xx", facecolor="none", linestyle="--"),
}
_RATIO_RANGE = (1e-2, 1e1)
_ROPE = "#2e7d32"            # suggested rope-off circles: green, apart from the keep-out contours
_KEEP_OUT = "#c0007a"        # keep-out contours: magenta, apart from the red-orange colour field  # colour scale limits (ratios outside are drawn at the ends)


def nice_length(span: float) -> float:
    """A round scale-bar length (1, 2 or 5 x 10^k) of about a fifth of ``span`` [m]."""
    target = span / 5.0
    k = 10.0 ** math.floor(math.log10(target))
    return max(m * k for m in (1, 2, 5) if m * k <= target)


def _label_point(polygon, inside_test, avoid=(), clearance: float = 0.0):
    """Where to put an area's label: the sample inside the (possibly concave) polygon farthest from its
    edges and at least ``clearance`` from the points ``avoid`` (station markers); ``None`` if there is none."""
    xs = np.array([p[0] for p in polygon])
    ys = np.array([p[1] for p in polygon])
    gx, gy = np.meshgrid(np.linspace(xs.min(), xs.max(), 41), np.linspace(ys.min(), ys.max(), 41))
    gx, gy = gx.ravel(), gy.ravel()
    keep = inside_test(gx, gy, polygon)
    for ax_, ay_ in avoid:
        keep &= np.hypot(gx - ax_, gy - ay_) >= clearance
    if not keep.any():
        return None
    gx, gy = gx[keep], gy[keep]
    best = np.full(gx.shape, np.inf)
    n = len(polygon)
    for i in range(n):
        (x1, y1), (x2, y2) = polygon[i], polygon[(i + 1) % n]
        dx, dy = x2 - x1, y2 - y1
        t = np.clip(((gx - x1) * dx + (gy - y1) * dy) / (dx * dx + dy * dy), 0.0, 1.0)
        best = np.minimum(best, np.hypot(gx - (x1 + t * dx), gy - (y1 + t * dy)))
    k = int(np.argmax(best))
    return float(gx[k]), float(gy[k])


def _labels(ax, renderer, res, markers_xy):
    """Station names, violation numbers and area labels, each at the first candidate spot whose box stays
    inside the map and clear of every marker and of the labels already placed."""
    axbox = ax.get_window_extent(renderer)
    marks = [ax.transData.transform([(x, y)])[0] for x, y in markers_xy]
    taken = []

    def clear(box):
        inside = box.x0 >= axbox.x0 and box.x1 <= axbox.x1 and box.y0 >= axbox.y0 and box.y1 <= axbox.y1
        return inside and not any(box.x0 - 5 <= mx <= box.x1 + 5 and box.y0 - 5 <= my <= box.y1 + 5
                                  for mx, my in marks) and not any(box.overlaps(b) for b in taken)

    def place(text, xy, offsets, **kw):
        best = None
        for dx, dy, ha, va in offsets:
            t = ax.annotate(text, xy, xytext=(dx, dy), textcoords="offset points", ha=ha, va=va, **kw)
            box = t.get_window_extent(renderer).expanded(1.06, 1.15)
            if clear(box):
                if best is not None:
                    best[0].remove()
                best = (t, box)
                break
            if best is None:
                best = (t, box)
            else:
                t.remove()
        taken.append(best[1])

    around = [(8, 6, "left", "bottom"), (-8, 6, "right", "bottom"), (8, -8, "left", "top"), (-8, -8, "right", "top"),
              (0, 10, "center", "bottom"), (0, -11, "center", "top"), (14, 0, "left", "center"),
              (-14, 0, "right", "center"), (0, 22, "center", "bottom"), (0, -24, "center", "top")]
    halo = dict(boxstyle="round,pad=0.15", facecolor="white", edgecolor="none", alpha=0.85)
    for t in res.transmitters:
        place(t.transmitter, (t.x_m, t.y_m), around, fontsize=7.5, fontweight="bold", color="#1f3a5f", zorder=12,
              bbox=halo)
    for i, v in enumerate(res.violations):
        place(f"V{i + 1}", (v.x_m, v.y_m), around, fontsize=8, fontweight="bold", color="#b3122b", zorder=12,
              bbox=halo)
    for area in res.areas:
        st = KIND_STYLE[area.kind]
        spot = _label_point(area.polygon, _inside, markers_xy, 0.0) or area.polygon[0]
        top, bottom = max(p[1] for p in area.polygon), min(p[1] for p in area.polygon)
        left, right = min(p[0] for p in area.polygon), max(p[0] for p in area.polygon)
        cx = float(np.mean([p[0] for p in area.polygon]))
        cy = float(np.mean([p[1] for p in area.polygon]))
        box = dict(boxstyle="round,pad=0.2", facecolor="white", edgecolor=st["edgecolor"], linewidth=0.5, alpha=0.9)
        cands = [(0, 0, "center", "center")] + [(dx, dy, ha, va) for dx, dy, ha, va in around]
        best = None
        outside = (((cx, top), [(0, 3, "center", "bottom"), (0, 14, "center", "bottom")]),
                   ((cx, bottom), [(0, -3, "center", "top"), (0, -14, "center", "top")]),
                   ((right, cy), [(3, 0, "left", "center")]), ((left, cy), [(-3, 0, "right", "center")]))
        for xy, offs in ((spot, cands),) + outside:
            t = None
            for dx, dy, ha, va in offs:
                t = ax.annotate(area.label, xy, xytext=(dx, dy), textcoords="offset points", ha=ha, va=va,
                                fontsize=7, zorder=6, color=st["edgecolor"], bbox=box)
                b = t.get_window_extent(renderer).expanded(1.04, 1.1)
                if clear(b):
                    best = (t, b)
                    break
                t.remove()
            if best is not None:
                break
        if best is None:   # nothing clear: the area's own point
            t = ax.annotate(area.label, spot, ha="center", va="center", fontsize=7, zorder=6, color=st["edgecolor"],
                            bbox=box)
            best = (t, t.get_window_extent(renderer))
        taken.append(best[1])


def _inside(x, y, polygon):
    from rfsafe.site import points_in_polygon

    return points_in_polygon(x, y, polygon)


def site_map_png(res, *, width_in: float = 10.2, height_in: float = 6.0, dpi: int = 200,
                 boxes: list | None = None) -> bytes:
    """Draw the site map of ``res`` and return PNG bytes (reproducible).

    Drawn: the total exposure ratio against the uncontrolled (public) limit as a colour field on a
    log scale; the contour ratio = 1 of both environments (solid: uncontrolled, the public's
    keep-out line; dashed: controlled, nobody inside); the site boundary; the areas with their
    labels; the stations with their labels, beam headings (arrows) and dipole wires (bars); the
    ground within the near field of the nearest part of an antenna (dotted outlines); the suggested
    rope-off circles; the worst point of each violation (V1, V2, ...; an open ring that leaves the antenna and the contours
    visible); a north arrow and a scale bar. ``boxes``, when given, receives (text, box) of every
    label drawn (for the tests that check that no two labels overlap).
    """
    import matplotlib
    import matplotlib.style
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.colors import LogNorm
    from matplotlib.figure import Figure
    from matplotlib.lines import Line2D
    from matplotlib.patches import Circle, FancyArrow, Patch, Polygon
    from mpl_toolkits.axes_grid1.anchored_artists import AnchoredSizeBar


    g = res.grid
    with matplotlib.style.context("default"), matplotlib.rc_context({
            "font.family": "DejaVu Sans", "font.size": 7.5, "hatch.linewidth": 0.6,
            "axes.linewidth": 0.6, "path.simplify": True}):
        fig = Figure(figsize=(width_in, height_in), dpi=dpi)
        FigureCanvasAgg(fig)
        lw = min(1.95 / width_in, 0.3)          # legend column: about 2 in, whatever the map's size
        ax = fig.add_axes((0.07, 0.09, 0.93 - lw - 0.07, 0.86))
        cax = fig.add_axes((0.95 - lw, 0.66, 0.018, 0.28))
        lax = fig.add_axes((0.95 - lw, 0.01, lw, 0.58))
        lax.axis("off")

        unc = np.nan_to_num(g.ratio[1], posinf=_RATIO_RANGE[1] * 10, nan=_RATIO_RANGE[1] * 10)
        ctl = np.nan_to_num(g.ratio[0], posinf=_RATIO_RANGE[1] * 10, nan=_RATIO_RANGE[1] * 10)
        shown = np.clip(unc, _RATIO_RANGE[0], _RATIO_RANGE[1])
        mesh = ax.pcolormesh(g.x_m, g.y_m, shown, cmap="OrRd", norm=LogNorm(*_RATIO_RANGE), shading="nearest",
                             rasterized=True)
        cb = fig.colorbar(mesh, cax=cax)
        cb.set_label("total exposure ratio,\nuncontrolled (public) limit\n(worst height; 1 = limit)", fontsize=7.5)
        cb.set_ticks([0.01, 0.1, 1, 10])
        cb.set_ticklabels(["≤ 0.01", "0.1", "1", "≥ 10"])
        if (unc > 1).any():
            ax.contour(g.x_m, g.y_m, unc, levels=[1.0], colors=_KEEP_OUT, linewidths=1.6)
        if (ctl > 1).any():
            ax.contour(g.x_m, g.y_m, ctl, levels=[1.0], colors=_KEEP_OUT, linewidths=1.2, linestyles="--")

        if g.near_field.any():   # ground within the near field of the nearest part of some antenna (as evaluated)
            ax.contour(g.x_m, g.y_m, g.near_field.astype(np.float32), levels=[0.5], colors="#555555",
                       linewidths=0.8, linestyles=":", zorder=4)
        ax.add_patch(Polygon(res.boundary, closed=True, fill=False, edgecolor="black", linewidth=1.6, zorder=3))
        xr = g.extent_m[1] - g.extent_m[0]
        stations_xy = [(t.x_m, t.y_m) for t in res.transmitters] + [(v.x_m, v.y_m) for v in res.violations]
        for area in res.areas:
            ax.add_patch(Polygon(area.polygon, closed=True, linewidth=1.0, zorder=3, **KIND_STYLE[area.kind]))

        arrow_len = 0.09 * xr
        drawn = set()
        for em in res.emitters:
            key = (em.x_m, em.y_m, em.pattern.kind, em.azimuth_deg, em.polarisation)
            if key in drawn:
                continue
            drawn.add(key)
            a = math.radians(em.azimuth_deg)
            if em.pattern.kind in ("beam", "table"):
                ax.add_patch(FancyArrow(em.x_m, em.y_m, arrow_len * math.sin(a), arrow_len * math.cos(a),
                                        width=0.004 * xr, head_width=0.016 * xr, head_length=0.02 * xr,
                                        length_includes_head=True, facecolor="#1f3a5f", edgecolor="white",
                                        linewidth=0.6, zorder=9))
            elif em.pattern.kind in ("half-wave-dipole", "short-dipole") and em.polarisation == "horizontal":
                half = 0.025 * xr
                ax.plot([em.x_m - half * math.cos(a), em.x_m + half * math.cos(a)],
                        [em.y_m + half * math.sin(a), em.y_m - half * math.sin(a)], color="#1f3a5f",
                        linewidth=2.0, solid_capstyle="butt", zorder=7)
        for t in res.transmitters:
            if t.rope_off_radius_m:
                ax.add_patch(Circle((t.x_m, t.y_m), t.rope_off_radius_m, fill=False, linestyle=(0, (6, 2)),
                                    linewidth=1.1, edgecolor=_ROPE, zorder=5))
            ax.plot([t.x_m], [t.y_m], marker="^", markersize=7, color="#1f3a5f", markeredgecolor="white",
                    markeredgewidth=0.8, zorder=11, linestyle="none")
        for v in res.violations:   # an open ring around the worst point: the antenna and contours stay visible
            ax.plot([v.x_m], [v.y_m], marker="o", markersize=11, markerfacecolor="none", markeredgecolor="#b3122b",
                    markeredgewidth=1.6, zorder=10, linestyle="none")
        # the final limits and aspect first: the labels are placed in the pixels they are drawn at
        ax.set_xlim(g.extent_m[0], g.extent_m[1])
        ax.set_ylim(g.extent_m[2], g.extent_m[3])
        ax.set_aspect("equal")
        ax.apply_aspect()
        renderer = fig.canvas.get_renderer()
        _labels(ax, renderer, res, stations_xy)
        ax.set_xlabel("x east [m]")
        ax.set_ylabel("y north [m]")
        ax.tick_params(labelsize=6.5)

        # north arrow (y is north) and scale bar
        ax.annotate("N", xy=(0.965, 0.95), xytext=(0.965, 0.83), xycoords="axes fraction", ha="center",
                    va="center", fontsize=9, fontweight="bold", zorder=11,
                    arrowprops=dict(arrowstyle="-|>", color="black", linewidth=1.2),
                    bbox=dict(boxstyle="circle,pad=0.15", facecolor="white", edgecolor="none"))
        bar = nice_length(xr)
        ax.add_artist(AnchoredSizeBar(ax.transData, bar, f"{bar:g} m", loc="lower left", pad=0.4,
                                      borderpad=0.6, sep=3, frameon=True, size_vertical=0.006 * xr,
                                      fontproperties={"size": 7}))

        handles = [
            Line2D([], [], color=_KEEP_OUT, linewidth=1.6, label="ratio = 1, uncontrolled:\npublic kept out inside"),
            Line2D([], [], color=_KEEP_OUT, linewidth=1.2, linestyle="--",
                   label="ratio = 1, controlled:\nnobody inside"),
            Line2D([], [], color="black", linewidth=1.6, label="site boundary"),
        ]
        for kind, st in KIND_STYLE.items():
            handles.append(Patch(label=f"{kind} area", linewidth=1.0, **st))
        handles += [
            Line2D([], [], marker="^", color="#1f3a5f", linestyle="none", markersize=6, label="station (antenna)"),
            Line2D([], [], color="#1f3a5f", linewidth=2, label="beam heading (arrow) /\ndipole wire (bar)"),
            Line2D([], [], color="#555555", linestyle=":", label="near field on the ground\n(far field not valid)"),
            Line2D([], [], color=_ROPE, linestyle=(0, (6, 2)), linewidth=1.1, label="suggested rope-off circle"),
            Line2D([], [], marker="o", markerfacecolor="none", markeredgecolor="#b3122b", markeredgewidth=1.4,
                   linestyle="none", markersize=8, label="violation V1, V2 ...:\nworst point (ring)"),
        ]
        lax.legend(handles=handles, loc="lower left", fontsize=7.5, frameon=False, borderaxespad=0.0,
                   handlelength=2.2, labelspacing=0.45)
        fig.canvas.draw()
        if boxes is not None:
            boxes.extend(text_boxes(fig, fig.canvas.get_renderer()))
        buf = io.BytesIO()
        fig.savefig(buf, format="png", dpi=dpi, metadata={"Software": None})
    return buf.getvalue()


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
