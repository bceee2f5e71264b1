"""The worksheet's figures: exposure ratio versus distance, standing-wave profile along a feedline.

Figures draw what the results carry and compute nothing new. The exposure curve of a
configuration is the far-field peak-gain envelope that the compliance distance already
summarises: under S = EIRP F / (4 pi R^2) every quantity compared with a limit (S, and E^2, H^2
through the plane-wave relation) falls as 1/R^2, so ratio(R) = (d_c / R)^2 with d_c the
compliance distance of that environment. The standing-wave profile is the line result's own
sampled |V| and |I|.
"""

from __future__ import annotations

import math

from reportlab.graphics.shapes import Circle, Drawing, Line, Rect, String
from reportlab.lib import colors
from reportlab.lib.units import mm
from reportlab.platypus import Table, TableStyle

from rfsafe.report.common import FONT, GRID
from rfsafe.report.plots import PALETTE, Axes, linear_ticks, log_range, new_drawing

__all__ = ["exposure_distance_figure", "exposure_plot_ranges", "exposure_legend", "line_profile_figure", "figure_grid",
           "figure_rows", "ENV_DASH", "ENV_SHAPE", "LEVEL_DASH"]

ENV_DASH = {"controlled": (4, 2), "uncontrolled": None}
ENV_SHAPE = {"controlled": "square", "uncontrolled": "circle"}
_MAX_DECADES_Y = 7


#: Above this many places a figure names only the :data:`LABELLED_WHEN_MANY` with the highest ratio
#: (more names would cover the figure; the caption says so).
MAX_LABELLED_MARKERS = 60
LABELLED_WHEN_MANY = 25


def _rank(ratio) -> float:
    """A ratio for ordering: one that is not a number ranks first (it is not known to be low)."""
    r = float(ratio)
    return r if r == r else math.inf


def _curve(d_c: float, r: float) -> float:
    return (d_c / r) ** 2


def exposure_plot_ranges(cfg, places) -> tuple[tuple[float, float], tuple[float, float]]:
    """Decade-aligned distance [m] and ratio ranges of a configuration's exposure figure.

    Distances cover the compliance distances, the near-field boundary and every place (at least
    two decades); ratios cover 0.01 to 10 and every place's ratio, at most seven decades.
    """
    dist = [c.dist_m for c in cfg.compliance_distances if c.dist_m > 0]
    boundary = max(cfg.near_field_distance_m, cfg.aperture_far_field_m or 0.0)
    xs, ys = dist + [boundary], [1.0]
    for pl in places:
        for x in pl.exposures:
            if x.configuration == cfg.id:
                xs.append(x.dist_m)
                if x.exposure_ratio > 0:
                    ys.append(x.exposure_ratio)
    xlim = log_range(xs)
    if xlim[1] / xlim[0] < 100:          # at least two decades so the 1/R^2 slope reads clearly
        xlim = (xlim[0], xlim[0] * 100)
    ylim = log_range(ys)
    ylim = (min(ylim[0], 0.01), max(ylim[1], 10.0))
    if ylim[1] / ylim[0] > 10 ** _MAX_DECADES_Y:
        ylim = (ylim[1] / 10 ** _MAX_DECADES_Y, ylim[1])
    return xlim, ylim


#: Horizontal-distance curves (uncontrolled limit): dash pattern per level.
LEVEL_DASH = {"ground": (0.8, 1.6), "head": (5, 1.5, 1, 1.5)}


def exposure_distance_figure(cfg, places, *, width: float, height: float, place_numbers: dict,
                             antenna_height_m: float | None = None, head_heights_m=()):
    """Exposure ratio versus distance for one configuration (log-log).

    Parameters
    ----------
    cfg : ConfigurationResult
        Supplies the compliance distances (one per environment) and the near-field boundary.
    places : sequence of PlaceResult
        Each place's exposure from this configuration is marked at its distance.
    width, height : float
        Drawing size [pt].
    place_numbers : dict
        Place label -> marker label (e.g. ``"P1"``), as used in the places table.
    antenna_height_m : float, optional
        Height of the antenna's centre of radiation [m]; when given, the uncontrolled ratio is also
        drawn against the horizontal distance from the point below the antenna, at ground level
        and at head height (worst of ``head_heights_m``), from
        :func:`rfsafe.exposure.ratio_at_horizontal_distance`.

    Returns
    -------
    (Drawing, str)
        The figure and its caption text (the compliance distances and the near-field boundary).
    """
    d = new_drawing(width, height)
    dist = {c.environment: c.dist_m for c in cfg.compliance_distances}
    boundary = max(cfg.near_field_distance_m, cfg.aperture_far_field_m or 0.0)
    points = []
    for pl in places:
        for x in pl.exposures:
            if x.configuration == cfg.id:
                points.append((x.dist_m, x.exposure_ratio, pl.environment, place_numbers[pl.label],
                               x.inside_near_field))
    xlim, ylim = exposure_plot_ranges(cfg, places)
    left, bottom, top, right = 40, 24, 14, 6
    ax = Axes(d, left, bottom, width - left - right, height - bottom - top, xlim=xlim, ylim=ylim,
              xlog=True, ylog=True)
    ax.xband(xlim[0], boundary, color=PALETTE["near_field"])
    ax.frame(xlabel="distance from the antenna R [m]", ylabel="exposure ratio (1 = limit)",
             title=f"{cfg.id}  ·  {cfg.freq_mhz:g} MHz  ·  {cfg.mode}")
    ax.hline(1.0, color=PALETTE["limit"], width=1.1)
    for env in ("controlled", "uncontrolled"):
        if env not in dist or dist[env] <= 0:
            continue
        ax.segment(xlim[0], _curve(dist[env], xlim[0]), xlim[1], _curve(dist[env], xlim[1]),
                   color=PALETTE[env], width=1.1, dash=ENV_DASH[env])
    if antenna_height_m is not None and dist.get("uncontrolled", 0) > 0:
        import numpy as np

        from rfsafe.exposure import ratio_at_horizontal_distance

        rho = np.logspace(np.log10(xlim[0]), np.log10(xlim[1]), 60)
        levels = {"ground": antenna_height_m}
        if head_heights_m:
            levels["head"] = min(abs(antenna_height_m - z) for z in head_heights_m)
        for level, dz in levels.items():
            r = np.clip(ratio_at_horizontal_distance(dist["uncontrolled"], rho, dz), ylim[0], ylim[1])
            ax.polyline(rho, r, color=PALETTE["uncontrolled"], width=0.7, dash=LEVEL_DASH[level])
    # compliance distances: a dotted line down from the limit line (values in the caption)
    for env in ("controlled", "uncontrolled"):
        if env in dist and xlim[0] <= dist[env] <= xlim[1]:
            ax.segment(dist[env], ylim[0], dist[env], 1.0, color=PALETTE[env], width=0.6, dash=(1, 1.5))
    labels = []
    for r, ratio, env, label, _nf in points:
        X, Y = ax.marker(r, ratio, shape=ENV_SHAPE[env], color=PALETTE[env])
        labels.append((X, Y, label, PALETTE[env]))
    if len(labels) > MAX_LABELLED_MARKERS:   # many places: every marker is drawn, the highest ratios named
        _name_highest(ax, [labels[i] for i in sorted(range(len(points)), key=lambda i: (-_rank(points[i][1]), i))])
    else:
        ax.point_labels(labels)
    Y1 = ax.py(1.0)
    right, left = ax.x0 + ax.w - 2, ax.x0 + 2
    ax.label([(right, Y1 + 2.5, "end"), (right, Y1 - ax.font_size - 1, "end"), (left, Y1 + 2.5, "start"),
              (left, Y1 - ax.font_size - 1, "start")], "limit (ratio = 1)", color=PALETTE["limit"], backing=True)
    parts = [f"{env} {dist[env]:.2f} m" for env in ("controlled", "uncontrolled") if env in dist]
    caption = (f"Compliance distance (dotted): {', '.join(parts)}. Shaded: inside {boundary:.2f} m "
               f"({'2D²/λ' if boundary > cfg.near_field_distance_m else 'λ/2π'}).")
    if len(points) > MAX_LABELLED_MARKERS:
        caption += (f" Named: up to {LABELLED_WHEN_MANY} of the {len(points):,} places, highest ratio first, where "
                    "a name finds free room.")
    return d, caption


def _name_highest(ax, items, size: float = 2.6) -> None:
    """Name markers in the order given, each on the first free spot beside it (the spots of
    :meth:`Axes.point_labels`); a marker without a free spot stays unnamed. At most
    :data:`LABELLED_WHEN_MANY` names, looked for among the first three times as many markers."""
    from reportlab.pdfbase.pdfmetrics import stringWidth

    from rfsafe.report.common import FONT_BOLD

    fs = ax.font_size
    named = 0
    for X, Y, text, color in items[:3 * LABELLED_WHEN_MANY]:
        w = stringWidth(text, FONT_BOLD, fs)
        for k in range(3):
            g = size + 1 + k * fs
            cands = [(X + g, Y - fs * 0.3, "start"), (X - g, Y - fs * 0.3, "end"), (X, Y + g, "middle"),
                     (X, Y - g - fs * 0.6, "middle"), (X + g * 0.8, Y + g * 0.8, "start"),
                     (X + g * 0.8, Y - g * 0.8 - fs * 0.6, "start")]
            free = None
            for cx, cy, anchor in cands:
                left = cx - w if anchor == "end" else (cx - w / 2 if anchor == "middle" else cx)
                if ax._box_is_free((left, cy - fs * 0.25, left + w, cy + fs * 0.8)):
                    free = (cx, cy, anchor)
                    break
            if free is not None:
                ax.label([free], text, color=color, bold=True)
                named += 1
                break
        if named == LABELLED_WHEN_MANY:
            return


def exposure_legend(width: float) -> Drawing:
    """One legend shared by the exposure-versus-distance figures."""
    fs = Axes.font_size
    entries = [
        ("line", PALETTE["uncontrolled"], None, "uncontrolled: peak-gain far-field envelope (d/R)², R 3-D"),
        ("line", PALETTE["controlled"], ENV_DASH["controlled"], "controlled: the same with the controlled limit"),
        ("line", PALETTE["limit"], None, "limit: exposure ratio = 1 (each environment's own limit)"),
        ("band", PALETTE["near_field"], None, "inside λ/2π (or 2D²/λ): far-field estimate not valid"),
        ("circle", PALETTE["uncontrolled"], None, "place in an uncontrolled area (gain toward it)"),
        ("square", PALETTE["controlled"], None, "place in a controlled area (gain toward it)"),
    ]
    entries += [
        ("line", PALETTE["uncontrolled"], LEVEL_DASH["ground"],
         "uncontrolled, horizontal distance from below the antenna at ground level"),
        ("line", PALETTE["uncontrolled"], LEVEL_DASH["head"], "the same at head height (worst of the body heights)"),
    ]
    h = 9.5 * len(entries) + 2
    d = new_drawing(width, h)
    for i, (kind, color, dash, label) in enumerate(entries):   # one column: one legend, read top to bottom
        x = 0
        y = h - 8 - i * 9.5
        if kind == "line":
            d.add(Line(x + 2, y + 2, x + 16, y + 2, strokeColor=color, strokeWidth=1.2, strokeDashArray=dash))
        elif kind == "square":
            d.add(Rect(x + 6.5, y - 0.4, 5, 5, fillColor=color, strokeColor=None))
        elif kind == "band":
            d.add(Rect(x + 2, y - 1, 14, 6, fillColor=color, strokeColor=GRID, strokeWidth=0.3))
        else:
            d.add(Circle(x + 9, y + 2, 2.6, fillColor=color, strokeColor=None))
        d.add(String(x + 20, y, label, fontName=FONT, fontSize=fs, fillColor=colors.black))
    return d


def line_profile_figure(cfg, *, width: float, height: float):
    """|V| and |I| (peak, at PEP) along the feedline of one configuration, with its voltage ratings.

    Voltage ratings up to 10 times the largest voltage are drawn to scale as dashed lines: the
    cable's along the whole line, each connector's over the end it sits at. A rating further away
    is named in the caption with its headroom (from the line result), so that the standing wave
    itself stays readable.

    Returns
    -------
    (Drawing, str)
        The figure and its caption text.
    """
    line = cfg.line
    d = new_drawing(width, height)
    pos = [float(v) for v in line.profile_position_m]
    volt = [float(v) for v in line.profile_voltage_v_peak]
    cur = [float(v) for v in line.profile_current_a_peak]
    length = float(line.length_m)
    xlim = (0.0, length if length > 0 else 1.0)
    v_max = float(line.line_voltage_v_peak)
    i_max = float(line.line_current_a_peak)
    # ratings that apply along the line: the cable's over its whole length, each connector at its end
    # (ratings of tuner parts are stresses of the network, not of the line, and are tabulated instead)
    spans = {"line": (0.0, xlim[1]), "connector.transmitter": (0.0, 0.12 * xlim[1]),
             "connector.antenna": (0.88 * xlim[1], xlim[1])}
    ratings = [s for s in line.part_stresses
               if s.quantity == "voltage_v_peak" and s.rating is not None and s.part in spans]
    on_scale = [s for s in ratings if s.rating <= 10 * v_max]
    off_scale = [s for s in ratings if s.rating > 10 * v_max]
    v_top = max([v_max * 1.25] + [s.rating * 1.12 for s in on_scale])
    v_top = max(v_top, linear_ticks(0, v_top)[-1])
    i_top = i_max * 1.25
    i_top = max(i_top, linear_ticks(0, i_top)[-1])

    left, right, gap, bottom, top = 40, 6, 12, 22, 14
    panel_h = (height - bottom - top - gap) / 2
    title = f"{cfg.id}  ·  {line.cable_id}, {length:g} m  ·  SWR {line.swr_at_antenna:.2f}"
    av = Axes(d, left, bottom + panel_h + gap, width - left - right, panel_h, xlim=xlim, ylim=(0, v_top))
    av.frame(xlabel="", ylabel="|V| peak [V]", title=title, xticklabels=False)
    for s in on_scale:
        av.hline(s.rating, color=PALETTE["rating"], dash=(3, 2), x_from=spans[s.part][0], x_to=spans[s.part][1])
    av.polyline(pos, volt, color=PALETTE["voltage"], width=1.2)
    vx = float(line.line_voltage_max_position_m)
    av.marker(vx, v_max, color=PALETTE["voltage"], size=2.2)
    _max_label(av, vx, v_max, f"max {v_max:.0f} V at {vx:.1f} m", PALETTE["voltage"])
    by_value: dict[float, list[str]] = {}       # one label per rating value
    for s in on_scale:
        by_value.setdefault(float(s.rating), []).append(s.part)
    fs = av.font_size
    for value, parts in by_value.items():
        names = "connectors" if sorted(parts) == ["connector.antenna", "connector.transmitter"] else " & ".join(parts)
        X1 = av.px(min(spans[n][0] for n in parts)) + 2
        X2 = av.px(max(spans[n][1] for n in parts)) - 2
        Y = av.py(value)
        cands = [(X1, Y + 2.5, "start"), (X2, Y + 2.5, "end")]
        cands += [(X, Y - k * (fs + 1.5) - fs, a) for k in range(3) for X, a in ((X1, "start"), (X2, "end"))]
        av.label(cands, f"{names} {value:.0f} V peak", color=PALETTE["rating"], backing=True)

    ai = Axes(d, left, bottom, width - left - right, panel_h, xlim=xlim, ylim=(0, i_top))
    ai.frame(xlabel="position along the line from the transmitter end [m]", ylabel="|I| peak [A]")
    ai.polyline(pos, cur, color=PALETTE["current"], width=1.2)
    ix = float(line.line_current_max_position_m)
    ai.marker(ix, i_max, color=PALETTE["current"], size=2.2)
    _max_label(ai, ix, i_max, f"max {i_max:.2f} A at {ix:.1f} m", PALETTE["current"])
    if off_scale:
        caption = "Above the scale: " + "; ".join(
            f"{s.part} rated {s.rating:.0f} V peak (headroom {s.headroom:.1f}×)" for s in off_scale) + "."
    elif not ratings:
        caption = "No voltage rating is known for this line or its connectors."
    else:
        caption = ""
    return d, caption


def _max_label(ax, xv, yv, text, color):
    """Label a maximum beside its marker, on the side with room."""
    X, Y = ax.px(xv), ax.py(yv)
    fs = ax.font_size
    ax.label([(X + 4, Y + 3.5, "start"), (X - 4, Y + 3.5, "end"), (X + 4, Y - fs - 2, "start"),
              (X - 4, Y - fs - 2, "end"), (X, Y + 4, "middle"), (X, Y - fs - 3, "middle")],
             text, color=color, bold=True, backing=True)


def figure_rows(drawings, width: float, *, columns: int = 2) -> list:
    """Like :func:`figure_grid`, one table per row, so that a page can end between rows and a heading
    is kept with the first row only."""
    return [figure_grid(drawings[i:i + columns], width, columns=columns) for i in range(0, len(drawings), columns)]


def figure_grid(drawings, width: float, *, columns: int = 2) -> Table:
    """Drawings (or lists of flowables, e.g. a drawing and its caption) in rows of ``columns``."""
    rows = [list(drawings[i:i + columns]) for i in range(0, len(drawings), columns)]
    if rows and len(rows[-1]) < columns:
        rows[-1] += [""] * (columns - len(rows[-1]))
    t = Table(rows, colWidths=[width / columns] * columns, hAlign="LEFT")
    t.setStyle(TableStyle([("FONTNAME", (0, 0), (-1, -1), FONT), ("VALIGN", (0, 0), (-1, -1), "TOP"), ("LEFTPADDING", (0, 0), (-1, -1), 0),
                           ("RIGHTPADDING", (0, 0), (-1, -1), 2 * mm), ("TOPPADDING", (0, 0), (-1, -1), 0),
                           ("BOTTOMPADDING", (0, 0), (-1, -1), 3 * mm)]))
    return t
