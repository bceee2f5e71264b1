"""The site map: areas, stations and beam headings over the total exposure ratio, with keep-out contours.

Rendering only: every value drawn comes from a :class:`rfsafe.site.SiteResult`. The map is drawn
with matplotlib's Agg renderer at a fixed style, size and resolution, without a "Software"
stamp, so the same result gives the same PNG bytes.
"""

from __future__ import annotations

import io
import math

import numpy as np

__all__ = ["site_map_png", "KIND_STYLE", "nice_length"]

#: How each kind of area is drawn: edge colour, hatch, fill (light, so the colour field shows through).
KIND_STYLE = {
    "public": dict(edgecolor="#0b4f8a", hatch="", facecolor="none", linestyle="-"),
    "operators": dict(edgecolor="#5b2a86", hatch="//", facecolor="none", linestyle="-"),
    "no-access": dict(edgecolor="#444444", hatch="xx", facecolor="none", linestyle="--"),
}
_RATIO_RANGE = (1e-2, 1e1)
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


def site_map_png(res, *, width_in: float = 10.2, height_in: float = 6.0, dpi: int = 200) -> bytes:
    """Draw the site map of ``res`` and return PNG bytes (reproducible).

    Drawn: the total exposure ratio against the uncontrolled (public) limit as a colour field on a
    log scale; the contour ratio = 1 of both environments (solid: uncontrolled, the public's
    keep-out line; dashed: controlled, nobody inside); the site boundary; the areas with their
    labels; the stations with their labels, beam headings (arrows) and dipole wires (bars); the
    near-field reach on the ground (dotted circles); the worst point of each violation (V1, V2,
    ...); a north arrow and a scale bar.
    """
    import matplotlib
    import matplotlib.style
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.colors import LogNorm
    from matplotlib.figure import Figure
    from matplotlib.lines import Line2D
    from matplotlib.patches import Circle, FancyArrow, Patch, Polygon
    from mpl_toolkits.axes_grid1.anchored_artists import AnchoredSizeBar

    from rfsafe.site import points_in_polygon

    g = res.grid
    with matplotlib.style.context("default"), matplotlib.rc_context({
            "font.family": "DejaVu Sans", "font.size": 7.5, "hatch.linewidth": 0.6,
            "axes.linewidth": 0.6, "path.simplify": True}):
        fig = Figure(figsize=(width_in, height_in), dpi=dpi)
        FigureCanvasAgg(fig)
        ax = fig.add_axes((0.05, 0.08, 0.70, 0.86))
        cax = fig.add_axes((0.77, 0.50, 0.015, 0.42))
        lax = fig.add_axes((0.77, 0.02, 0.22, 0.40))
        lax.axis("off")

        unc = np.nan_to_num(g.ratio[1], posinf=_RATIO_RANGE[1] * 10, nan=_RATIO_RANGE[1] * 10)
        ctl = np.nan_to_num(g.ratio[0], posinf=_RATIO_RANGE[1] * 10, nan=_RATIO_RANGE[1] * 10)
        shown = np.clip(unc, _RATIO_RANGE[0], _RATIO_RANGE[1])
        mesh = ax.pcolormesh(g.x_m, g.y_m, shown, cmap="OrRd", norm=LogNorm(*_RATIO_RANGE), shading="nearest",
                             rasterized=True)
        cb = fig.colorbar(mesh, cax=cax)
        cb.set_label("total exposure ratio, uncontrolled (public) limit\n(worst height; 1 = limit)", fontsize=7)
        cb.set_ticks([0.01, 0.1, 1, 10])
        cb.set_ticklabels(["≤ 0.01", "0.1", "1", "≥ 10"])
        if (unc > 1).any():
            ax.contour(g.x_m, g.y_m, unc, levels=[1.0], colors=_KEEP_OUT, linewidths=1.6)
        if (ctl > 1).any():
            ax.contour(g.x_m, g.y_m, ctl, levels=[1.0], colors=_KEEP_OUT, linewidths=1.2, linestyles="--")

        ax.add_patch(Polygon(res.boundary, closed=True, fill=False, edgecolor="black", linewidth=1.6, zorder=3))
        xr = g.extent_m[1] - g.extent_m[0]
        stations_xy = [(t.x_m, t.y_m) for t in res.transmitters] + [(v.x_m, v.y_m) for v in res.violations]
        for area in res.areas:
            st = KIND_STYLE[area.kind]
            ax.add_patch(Polygon(area.polygon, closed=True, linewidth=1.0, zorder=3, **st))
            spot = _label_point(area.polygon, points_in_polygon, stations_xy, 0.08 * xr)
            box = dict(boxstyle="round,pad=0.2", facecolor="white", edgecolor=st["edgecolor"], linewidth=0.5,
                       alpha=0.9)
            if spot is None:   # too small to hold the label clear of its station: label it just above
                top = max(p[1] for p in area.polygon)
                cx = float(np.mean([p[0] for p in area.polygon]))
                ax.annotate(area.label, (cx, top), xytext=(0, 3), textcoords="offset points", ha="center",
                            va="bottom", fontsize=6.5, zorder=6, color=st["edgecolor"], bbox=box)
            else:
                ax.text(spot[0], spot[1], area.label, ha="center", va="center", fontsize=6.5, zorder=6,
                        color=st["edgecolor"], bbox=box)

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
            dzmin = min(abs(h - em.height_m) for h in res.heights_m)
            reach = math.sqrt(max(em.near_field_m ** 2 - dzmin ** 2, 0.0))
            if reach > 0:
                ax.add_patch(Circle((em.x_m, em.y_m), reach, fill=False, linestyle=":", linewidth=0.8,
                                    edgecolor="#555555", zorder=4))
        for t in res.transmitters:
            ax.plot([t.x_m], [t.y_m], marker="^", markersize=7, color="#1f3a5f", markeredgecolor="white",
                    markeredgewidth=0.8, zorder=8, linestyle="none")
            ax.annotate(t.transmitter, (t.x_m, t.y_m), xytext=(-4, -12), textcoords="offset points", fontsize=7,
                        ha="right",
                        fontweight="bold", color="#1f3a5f", zorder=9,
                        bbox=dict(boxstyle="round,pad=0.15", facecolor="white", edgecolor="none", alpha=0.8))
        for i, v in enumerate(res.violations):
            ax.plot([v.x_m], [v.y_m], marker="X", markersize=9, color="#b3122b", markeredgecolor="white",
                    markeredgewidth=0.8, zorder=10, linestyle="none")
            ax.annotate(f"V{i + 1}", (v.x_m, v.y_m), xytext=(6, -10), textcoords="offset points", fontsize=7.5,
                        fontweight="bold", color="#b3122b", zorder=10)

        ax.set_xlim(g.extent_m[0], g.extent_m[1])
        ax.set_ylim(g.extent_m[2], g.extent_m[3])
        ax.set_aspect("equal")
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
            Line2D([], [], marker="X", color="#b3122b", linestyle="none", markersize=7,
                   label="violation, worst point"),
        ]
        lax.legend(handles=handles, loc="lower left", fontsize=6, frameon=False, borderaxespad=0.0,
                   handlelength=2.2)
        buf = io.BytesIO()
        fig.savefig(buf, format="png", dpi=dpi, metadata={"Software": None})
    return buf.getvalue()
