"""Maps seen from above (station plan, near-field maps), drawn as reportlab vector graphics.

A map is a colour field on a log scale (an opaque raster of its cells, upscaled so that cells stay
sharp), ratio = 1 contours (traced by contourpy, matplotlib's own contour engine, so the lines are
the ones matplotlib would draw), wires and antennas, place markers with numbers placed clear of
each other, a colour bar and a legend. Everything but the cells is vector: text is set in the
embedded DejaVu Sans and prints at its own size. Nothing here needs matplotlib, whose import alone
costs more than the rest of a worksheet.

Geometry is given in figure inches (as a matplotlib figure would be) and drawn at 72 pt per inch;
:func:`scaled` fits the finished drawing into the page. The same input gives the same drawing.
"""

from __future__ import annotations

import math

from reportlab.graphics.renderbase import renderScaledDrawing
from reportlab.graphics.renderPDF import _PDFRenderer
from reportlab.graphics.shapes import Circle, Drawing, Group, Image, Line, PolyLine, Polygon, Rect, String
from reportlab.lib import colors
from reportlab.lib.utils import ImageReader
from reportlab.pdfbase.pdfmetrics import stringWidth

from rfsafe.report.common import FONT, FONT_BOLD, register_fonts
from rfsafe.report.plots import Axes

__all__ = ["ORRD", "colour_rgb", "MapAxes", "MapDrawing", "new_map", "dash_points", "legend", "colour_bar", "scaled",
           "rich_text"]

#: The ColorBrewer 9-class OrRd sequential scheme (white through orange to dark red), as matplotlib's
#: "OrRd" colour map defines it; interpolated linearly to 256 levels as matplotlib does.
ORRD = ((1.0, 0.9686274509803922, 0.9254901960784314), (0.996078431372549, 0.9098039215686274, 0.7843137254901961),
        (0.9921568627450981, 0.8313725490196079, 0.6196078431372549),
        (0.9921568627450981, 0.7333333333333333, 0.5176470588235295),
        (0.9882352941176471, 0.5529411764705883, 0.34901960784313724),
        (0.9372549019607843, 0.396078431372549, 0.2823529411764706),
        (0.8431372549019608, 0.18823529411764706, 0.12156862745098039), (0.7019607843137254, 0.0, 0.0),
        (0.4980392156862745, 0.0, 0.0))
_LEVELS = 256
_CELL_PX = 4          # raster pixels per cell: cell edges stay sharp even where a viewer smooths images


class _Renderer(_PDFRenderer):
    """reportlab's PDF renderer, drawing images as image objects (reportlab puts a drawing's images inline in
    the page's content, which some readers cannot decode)."""

    def drawImage(self, image):
        self._canvas.drawImage(ImageReader(image.path), image.x, image.y, image.width, image.height)


class MapDrawing(Drawing):
    """A Drawing whose raster images become PDF image objects; everything else is drawn as reportlab does."""

    def draw(self, showBoundary=False):
        _Renderer().draw(renderScaledDrawing(self), self.canv, 0, 0, showBoundary=showBoundary)


def new_map(width: float, height: float) -> MapDrawing:
    """An empty map drawing [pt] whose default font is the embedded DejaVu Sans."""
    register_fonts()
    return MapDrawing(width, height, initialFontName=FONT, initialFontSize=7)


def _lut():
    import numpy as np

    anchors = np.linspace(0.0, 1.0, len(ORRD))
    at = np.linspace(0.0, 1.0, _LEVELS)
    table = np.stack([np.interp(at, anchors, [c[k] for c in ORRD]) for k in range(3)], axis=1)
    return np.round(table * 255.0).astype(np.uint8)


def colour_rgb(values, lo: float, hi: float, bad=(0x8c, 0x8c, 0x8c)):
    """RGB bytes (..., 3) of ``values`` on the OrRd scale, log10 from ``lo`` to ``hi``.

    Values below ``lo`` take the lowest colour, above ``hi`` the highest; a value that is not a
    positive number takes ``bad``. Levels are picked as matplotlib's ``LogNorm`` and colour map do.
    """
    import numpy as np

    v = np.asarray(values, dtype=float)
    ok = np.isfinite(v) & (v > 0)
    with np.errstate(divide="ignore", invalid="ignore"):
        u = (np.log10(np.where(ok, v, lo)) - math.log10(lo)) / (math.log10(hi) - math.log10(lo))
    idx = np.clip(np.floor(u * _LEVELS), 0, _LEVELS - 1).astype(int)
    out = _lut()[idx]
    out[~ok] = bad
    return out


def dash_points(linestyle, linewidth: float):
    """A matplotlib-style line style ("-" or (offset, pattern) in line widths) as a dash array [pt]."""
    if linestyle in ("-", "solid", None):
        return None
    return [round(v * linewidth, 3) for v in linestyle[1]]


def hex_colour(c):
    return c if isinstance(c, colors.Color) else colors.HexColor(c)


def rich_text(parts, x: float, y: float, *, anchor: str = "start") -> list:
    """Strings for one line of mixed sizes and baseline shifts: ``parts`` are (text, font, size, rise)."""
    width = sum(stringWidth(t, f, s) for t, f, s, _ in parts)
    x0 = x - {"end": width, "middle": width / 2}.get(anchor, 0.0)
    out = []
    for t, f, s, rise in parts:
        out.append(String(x0, y + rise, t, fontName=f, fontSize=s))
        x0 += stringWidth(t, f, s)
    return out


def _nice_ticks(lo: float, hi: float, nbins: int) -> list[float]:
    """Round ticks inside [lo, hi]: the smallest step of 1, 2, 2.5, 5 x 10^n at least (hi - lo) / nbins
    (matplotlib's default tick rule)."""
    raw = (hi - lo) / max(nbins, 1)
    mag = 10.0 ** math.floor(math.log10(raw))
    step = next(m * mag for m in (1, 2, 2.5, 5, 10) if m * mag >= raw * (1 - 1e-9))
    first, last = math.ceil(lo / step - 1e-9), math.floor(hi / step + 1e-9)
    return [round(k * step, 10) + 0.0 for k in range(first, last + 1)]


def _tick_label(v: float, step: float) -> str:
    """A tick value with as many decimals as the step needs, and a true minus sign."""
    decimals = next(k for k in range(12) if abs(step * 10 ** k - round(step * 10 ** k)) < 1e-6)
    text = f"{v:.{decimals}f}"
    if float(text) == 0:
        return text.lstrip("-")
    return "−" + text[1:] if text.startswith("-") else text


class MapAxes(Axes):
    """A plan-view map area: linear x east / y north [m] at equal scale, ticks outside, no grid.

    ``box`` is the (x, y, width, height) [pt] allotted in the drawing; the area drawn keeps the data's
    aspect and is centred in it (as matplotlib's equal aspect with an adjustable box).
    """

    font_size = 7.5
    tick_size = 6.5

    def __init__(self, drawing: Drawing, box, *, xlim, ylim):
        x, y, w, h = box
        aspect = (ylim[1] - ylim[0]) / (xlim[1] - xlim[0])
        if h / w > aspect:
            y, h = y + (h - w * aspect) / 2, w * aspect
        else:
            x, w = x + (w - h / aspect) / 2, h / aspect
        super().__init__(drawing, x, y, w, h, xlim=xlim, ylim=ylim)
        self._label_boxes: list[tuple] = []

    # ---- furniture
    def frame_map(self, *, xlabel: str = "", ylabel: str = "", tick_size: float | None = None,
                  tick_len: float = 2.5, pad: float | None = None, labelpad: float = 2.0) -> None:
        """Ticks and tick labels outside the frame (matplotlib's default tick rule), axis labels, the frame."""
        ts = tick_size or self.tick_size
        d = self.d
        pad = 3.5 * ts / 6.5 if pad is None else pad
        xt = _nice_ticks(*self.xlim, min(9, max(1, int(self.w // (ts * 3)))))
        yt = _nice_ticks(*self.ylim, min(9, max(1, int(self.h // (ts * 2)))))
        xstep = xt[1] - xt[0] if len(xt) > 1 else 1.0
        ystep = yt[1] - yt[0] if len(yt) > 1 else 1.0
        widest = 0.0
        self._segments_path([(self.px(v), self.y0, self.px(v), self.y0 - tick_len) for v in xt], colors.black, 0.6)
        self._segments_path([(self.x0, self.py(v), self.x0 - tick_len, self.py(v)) for v in yt], colors.black, 0.6)
        for v in xt:
            X = self.px(v)
            d.add(String(X, self.y0 - tick_len - pad - 0.76 * ts, _tick_label(v, xstep), fontName=FONT,
                         fontSize=ts, textAnchor="middle"))
        for v in yt:
            Y = self.py(v)
            text = _tick_label(v, ystep)
            widest = max(widest, stringWidth(text, FONT, ts))
            d.add(String(self.x0 - tick_len - pad, Y - 0.36 * ts, text, fontName=FONT, fontSize=ts, textAnchor="end"))
        d.add(Rect(self.x0, self.y0, self.w, self.h, fillColor=None, strokeColor=colors.black, strokeWidth=0.6))
        fs = self.font_size
        if xlabel:
            d.add(String(self.x0 + self.w / 2, self.y0 - tick_len - pad - 0.96 * ts - labelpad - 0.76 * fs, xlabel,
                         fontName=FONT, fontSize=fs, textAnchor="middle"))
        left = self.x0 - tick_len - pad - widest
        if ylabel:
            g = Group(String(0, 0, ylabel, fontName=FONT, fontSize=fs, textAnchor="middle"))
            g.transform = (0, 1, -1, 0, left - labelpad - 0.24 * fs, self.y0 + self.h / 2)
            d.add(g)

    def title(self, lines, *, size: float = 8.0, pad: float = 4.0) -> None:
        """Title lines left-aligned above the frame, the last one ``pad`` above it."""
        for i, text in enumerate(reversed(lines)):
            self.d.add(String(self.x0, self.y0 + self.h + pad + 0.24 * size + i * size * 1.2, text, fontName=FONT,
                              fontSize=size))

    # ---- content in data coordinates
    def raster(self, x_edges, y_edges, rgb, *, view=None) -> None:
        """Cells (``rgb[j, i]`` between ``x_edges[i:i+2]`` and ``y_edges[j:j+2]``) over the frame or ``view``
        ((x0, x1, y0, y1) [m], default the axes' limits), resampled to whole pixels per cell."""
        import numpy as np
        from PIL import Image as PILImage

        xe, ye = np.asarray(x_edges, dtype=float), np.asarray(y_edges, dtype=float)
        vx0, vx1, vy0, vy1 = view or (*self.xlim, *self.ylim)
        # whole pixels per cell along each axis (cells need not be square)
        nx = int(min(1600, max(2, round(_CELL_PX * (vx1 - vx0) / float(np.min(np.diff(xe)))))))
        ny = int(min(1600, max(2, round(_CELL_PX * (vy1 - vy0) / float(np.min(np.diff(ye)))))))
        cx = vx0 + (np.arange(nx) + 0.5) * (vx1 - vx0) / nx
        cy = vy1 - (np.arange(ny) + 0.5) * (vy1 - vy0) / ny          # image rows run from the top
        i = np.clip(np.searchsorted(xe, cx) - 1, 0, len(xe) - 2)
        j = np.clip(np.searchsorted(ye, cy) - 1, 0, len(ye) - 2)
        img = np.ascontiguousarray(rgb[j[:, None], i[None, :]], dtype=np.uint8)
        X0, X1, Y0, Y1 = self.px(vx0), self.px(vx1), self.py(vy0), self.py(vy1)
        self.d.add(Image(X0, Y0, X1 - X0, Y1 - Y0, PILImage.fromarray(img, "RGB")))

    def _page_path(self, xs, ys):
        return [(self.px(float(a)), self.py(float(b))) for a, b in zip(xs, ys)]

    def _clipped(self, pts):
        """The parts of a page polyline inside the frame (Liang-Barsky per segment, joined)."""
        from rfsafe.report.plots import _clip_span

        x0, y0, x1, y1 = self.x0, self.y0, self.x0 + self.w, self.y0 + self.h
        inside = all(x0 - 1e-6 <= p[0] <= x1 + 1e-6 and y0 - 1e-6 <= p[1] <= y1 + 1e-6 for p in pts)
        if inside:
            return [pts]
        runs, cur = [], []
        for (ax_, ay), (bx, by) in zip(pts[:-1], pts[1:]):
            dx, dy = bx - ax_, by - ay
            span = _clip_span(((-dx, ax_ - x0), (dx, x1 - ax_), (-dy, ay - y0), (dy, y1 - ay)))
            if span is None:
                if cur:
                    runs.append(cur)
                cur = []
                continue
            a = (ax_ + span[0] * dx, ay + span[0] * dy)
            b = (ax_ + span[1] * dx, ay + span[1] * dy)
            if not cur or span[0] > 0:
                if cur:
                    runs.append(cur)
                cur = [a]
            cur.append(b)
            if span[1] < 1:
                runs.append(cur)
                cur = []
        if cur:
            runs.append(cur)
        return [r for r in runs if len(r) > 1]

    def line(self, xs, ys, *, color, width: float, dash=None, halo: float = 0.0, cap: int = 0) -> None:
        """A polyline in data coordinates, clipped to the frame; ``halo`` [pt] of white beneath it. Labels
        keep clear of it."""
        for run in self._clipped(self._page_path(xs, ys)):
            flat = [round(v, 3) for p in run for v in p]
            if halo:
                self.d.add(PolyLine(flat, strokeColor=colors.white, strokeWidth=width + halo, strokeLineCap=cap,
                                    strokeLineJoin=1))
            self.d.add(PolyLine(flat, strokeColor=hex_colour(color), strokeWidth=width, strokeDashArray=dash,
                                strokeLineCap=cap, strokeLineJoin=1))
            self._keep_clear(*[(run[k][0], run[k][1], run[k + 1][0], run[k + 1][1]) for k in range(len(run) - 1)])

    def contour_lines(self, x, y, z, level: float = 1.0):
        """The ``level`` contour of ``z`` (NaN cells left out) as a list of (n, 2) arrays [m]."""
        import contourpy
        import numpy as np

        gen = contourpy.contour_generator(np.asarray(x, dtype=float), np.asarray(y, dtype=float),
                                          np.ma.masked_invalid(np.asarray(z, dtype=float)), name="mpl2014",
                                          corner_mask=True, line_type=contourpy.LineType.SeparateCode)
        out = []
        for pts, codes in zip(*gen.lines(level)):
            starts = list(np.flatnonzero(codes == 1)) + [len(pts)]     # MOVETO opens each line
            out += [np.asarray(pts[a:b]) for a, b in zip(starts[:-1], starts[1:]) if b - a > 1]
        return out

    def point(self, xv, yv, *, shape: str = "o", size: float = 6.0, face="#ffffff", edge="#000000",
              edge_width: float = 1.1) -> None:
        """A marker of ``size`` [pt] (diameter, or side of a square) at a data point; labels keep clear of it."""
        X, Y = self.px(xv), self.py(yv)
        r = size / 2
        fill = hex_colour(face) if face is not None else None
        stroke = hex_colour(edge) if edge is not None else None
        if shape == "s":
            self.d.add(Rect(X - r, Y - r, size, size, fillColor=fill, strokeColor=stroke, strokeWidth=edge_width))
        else:
            self.d.add(Circle(X, Y, r, fillColor=fill, strokeColor=stroke, strokeWidth=edge_width))
        self._add_box((X - r, Y - r, X + r, Y + r))

    def place_labels(self, marks, *, colours=None, size: float = 7.5, drop: set | None = None) -> None:
        """Label each (x, y, text) mark beside it on the first side clear of wires, contours, markers and
        earlier labels and inside the frame (else the in-frame side with the fewest conflicts).

        Labels are bold, on a white rounded backing. A text in ``drop`` that finds no spot free of the
        earlier labels is left off (on a crowded plan a number is better missing than covering another).
        """
        near = [(6, 5, "left", "bottom"), (6, -5, "left", "top"), (-6, 5, "right", "bottom"),
                (-6, -5, "right", "top"), (0, 8, "center", "bottom"), (0, -8, "center", "top")]
        offsets = near + [(dx * k, dy * k, ha, va) for k in (2, 3) for dx, dy, ha, va in near]
        pad = 0.18 * size
        asc, desc = 0.76 * size, 0.24 * size
        for k, (xv, yv, text) in enumerate(marks):
            X, Y = self.px(xv), self.py(yv)
            w = stringWidth(text, FONT_BOLD, size)
            boxes = []
            for dx, dy, ha, va in offsets:
                bx = X + dx
                left = bx if ha == "left" else (bx - w - 2 * pad if ha == "right" else bx - w / 2 - pad)
                by = Y + dy
                bottom = by if va == "bottom" else by - asc - desc - 2 * pad
                boxes.append((left, bottom, left + w + 2 * pad, bottom + asc + desc + 2 * pad))
            box = next((b for b in boxes if self._box_in_frame(_shrink(b, -3)) and self._conflicts(b, 1) == 0), None)
            if box is None:
                inside = [b for b in boxes if self._box_in_frame(_shrink(b, -3))] or boxes
                box = self._fewest_conflicts(inside)
            if drop and text in drop and any(_overlap(box, b) for b in self._label_boxes):
                continue
            colour = (colours[k] if colours else "#000000")
            self.d.add(Rect(box[0], box[1], box[2] - box[0], box[3] - box[1], rx=pad * 1.4, ry=pad * 1.4,
                            fillColor=colors.white, fillOpacity=0.85, strokeColor=None, strokeWidth=0))
            self.d.add(String(box[0] + pad, box[1] + pad + desc, text, fontName=FONT_BOLD, fontSize=size,
                              fillColor=hex_colour(colour)))
            self._add_box(box)
            self._label_boxes.append(box)


def _shrink(b, by):
    return (b[0] + by, b[1] + by, b[2] - by, b[3] - by)


def _overlap(a, b) -> bool:
    return a[0] < b[2] and b[0] < a[2] and a[1] < b[3] and b[1] < a[3]


def colour_bar(d: Drawing, x: float, y: float, w: float, h: float, *, lo: float, hi: float, ticks, labels,
               label_lines, tick_len: float = 2.5, size: float = 6.5, labelpad: float = 5.0,
               limit_line: bool = False) -> None:
    """A vertical log colour bar [pt] with ticks at ``ticks`` (values), labels on its right and a rotated
    caption (``label_lines``: strings or lists of rich-text parts) beyond them."""
    import numpy as np
    from PIL import Image as PILImage

    strip = np.ascontiguousarray(_lut()[::-1][:, None, :])      # 256 levels, the highest at the top
    d.add(Image(x, y, w, h, PILImage.fromarray(strip, "RGB")))
    d.add(Rect(x, y, w, h, fillColor=None, strokeColor=colors.black, strokeWidth=0.6))
    span = math.log10(hi) - math.log10(lo)
    widest = 0.0
    for v, text in zip(ticks, labels):
        Y = y + h * (math.log10(v) - math.log10(lo)) / span
        d.add(Line(x + w, Y, x + w + tick_len, Y, strokeColor=colors.black, strokeWidth=0.6))
        d.add(String(x + w + tick_len + 3.5 * size / 6.5, Y - 0.36 * size, text, fontName=FONT, fontSize=size))
        widest = max(widest, stringWidth(text, FONT, size))
    if limit_line and lo < 1.0 <= hi:
        Y = y + h * (0.0 - math.log10(lo)) / span
        d.add(Line(x, Y, x + w, Y, strokeColor=colors.black, strokeWidth=0.8))
    lh = size * 1.25 * 1.17
    n = len(label_lines)
    left = x + w + tick_len + 3.5 * size / 6.5 + widest + labelpad
    g = Group()
    for i, line in enumerate(label_lines):
        base = (n - 1) / 2 * lh - i * lh - 0.26 * size
        parts = [(line, FONT, size, 0.0)] if isinstance(line, str) else line
        for s in rich_text(parts, 0, base, anchor="middle"):
            g.add(s)
    g.transform = (0, 1, -1, 0, left + n * lh / 2, y + h / 2)
    d.add(g)


def legend(d: Drawing, x: float, top: float, entries, *, ncol: int = 1, size: float = 6.5,
           handlelength: float = 3.2, labelspacing: float = 0.5, columnspacing: float = 2.0) -> float:
    """Legend entries in ``ncol`` columns filled top to bottom, from (x, top) [pt]; returns its bottom.

    Each entry is (handle, text) where ``handle`` is ("line", colour, width, dash), ("marker", shape, size,
    face, edge, edge_width), ("patch", colour) or ("arrow", colour); text may hold line breaks.
    """
    n = len(entries)
    per = [n // ncol + (1 if k < n % ncol else 0) for k in range(ncol)]
    lh = size * 1.17
    hl = handlelength * size
    col_x = x
    bottom = top
    k = 0
    for count in per:
        y = top
        col_w = 0.0
        for handle, text in entries[k:k + count]:
            lines = text.split("\n")
            hgt = len(lines) * lh
            mid = y - hgt / 2
            kind = handle[0]
            hx = col_x + 0.4 * size
            if kind == "line":
                _, colour, width, dash = handle
                d.add(Line(hx, mid, hx + hl, mid, strokeColor=hex_colour(colour), strokeWidth=width,
                           strokeDashArray=dash))
            elif kind == "marker":
                _, shape, msize, face, edge, ew = handle
                cx = hx + hl / 2
                fill = hex_colour(face) if face else None
                if shape == "s":
                    d.add(Rect(cx - msize / 2, mid - msize / 2, msize, msize, fillColor=fill,
                               strokeColor=hex_colour(edge), strokeWidth=ew))
                else:
                    d.add(Circle(cx, mid, msize / 2, fillColor=fill, strokeColor=hex_colour(edge), strokeWidth=ew))
            elif kind == "patch":
                d.add(Rect(hx, mid - 0.35 * size, hl, 0.7 * size, fillColor=hex_colour(handle[1]), strokeColor=None))
            elif kind == "arrow":
                cx = hx + hl / 2
                c = hex_colour(handle[1])
                d.add(Line(cx - 4.5, mid, cx + 1.5, mid, strokeColor=c, strokeWidth=1.6))
                d.add(Polygon([cx + 4.5, mid, cx + 0.5, mid + 3, cx + 0.5, mid - 3], fillColor=c, strokeColor=None))
            tx = hx + hl + 0.8 * size
            for i, t in enumerate(lines):
                d.add(String(tx, y - (i + 1) * lh + 0.3 * size, t, fontName=FONT, fontSize=size))
                col_w = max(col_w, tx - col_x + stringWidth(t, FONT, size))
            y -= hgt + labelspacing * size
        bottom = min(bottom, y + labelspacing * size)
        col_x += col_w + columnspacing * size
        k += count
    return bottom


def scaled(d: Drawing, scale: float) -> Drawing:
    """``d`` drawn at ``scale`` (a new drawing of the scaled size), centred in the frame as an image is."""
    if scale != 1.0:
        out = new_map(d.width * scale, d.height * scale)
        g = Group(*d.contents)
        g.transform = (scale, 0, 0, scale, 0, 0)
        out.add(g)
        d = out
    d.hAlign = "CENTER"
    return d
