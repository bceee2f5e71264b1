"""Vector plots for rfsafe documents, drawn with reportlab.graphics (fast, byte-reproducible).

:class:`Axes` maps data to drawing coordinates on linear or logarithmic scales, draws the frame,
grid and tick labels (decade labels on log scales), and offers line, marker, band and text
primitives. Lines are clipped to the plot area in the scale's own space, so a straight line in
log-log coordinates needs only its two ends.
"""

from __future__ import annotations

import math

from reportlab.graphics.shapes import Circle, Drawing, Group, Line, Path, PolyLine, Polygon, Rect, String
from reportlab.lib import colors
from reportlab.pdfbase.pdfmetrics import stringWidth

from rfsafe.report.common import FONT, FONT_BOLD, GRID, register_fonts

__all__ = ["Axes", "new_drawing", "decade_label", "log_range", "linear_ticks", "PALETTE", "simplified"]

#: Line colours (distinguishable in grey print too, with the dash patterns used beside them).
PALETTE = {
    "controlled": colors.HexColor("#7a3e9d"),
    "uncontrolled": colors.HexColor("#0b6e99"),
    "limit": colors.HexColor("#b3122b"),
    "voltage": colors.HexColor("#0b6e99"),
    "current": colors.HexColor("#c2571a"),
    "rating": colors.HexColor("#b3122b"),
    "rating2": colors.HexColor("#7a3e9d"),
    "near_field": colors.HexColor("#e6e6e6"),
    "text": colors.HexColor("#222222"),
}

_SUPERSCRIPT = str.maketrans("-0123456789", "⁻⁰¹²³⁴⁵⁶⁷⁸⁹")


def new_drawing(width: float, height: float) -> Drawing:
    """A Drawing whose default font is the embedded DejaVu Sans (reportlab's default is Helvetica)."""
    register_fonts()
    return Drawing(width, height, initialFontName=FONT, initialFontSize=7)


def decade_label(exponent: int) -> str:
    """Label of the decade 10^exponent: plain between 0.001 and 10000, else 10 with superscript."""
    if -3 <= exponent <= 4:
        return f"{10.0 ** exponent:.{max(0, -exponent)}f}"
    return "10" + str(exponent).translate(_SUPERSCRIPT)


def log_range(values, *, pad: float = 1.0, min_decades: int = 1) -> tuple[float, float]:
    """Decade-aligned range holding every positive finite value, widened by ``pad`` decades' fraction.

    Returns (low, high) as powers of ten.
    """
    vals = [float(v) for v in values if v is not None and math.isfinite(float(v)) and float(v) > 0]
    if not vals:
        raise ValueError("log_range needs at least one positive finite value")
    lo = math.floor(math.log10(min(vals)) - 1e-9 - (pad - 1.0))
    hi = math.ceil(math.log10(max(vals)) + 1e-9 + (pad - 1.0))
    if hi - lo < min_decades:
        hi = lo + min_decades
    return 10.0 ** lo, 10.0 ** hi


def linear_ticks(lo: float, hi: float, target: int = 5) -> list[float]:
    """Round tick values (1, 2, 2.5, 5 x 10^n steps) covering [lo, hi]."""
    span = hi - lo
    if span <= 0:
        return [lo]
    raw = span / target
    mag = 10 ** math.floor(math.log10(raw))
    step = min((m * mag for m in (1, 2, 2.5, 5, 10)), key=lambda s: abs(s - raw))
    first = math.ceil(lo / step - 1e-9) * step
    ticks = []
    v = first
    while v <= hi + step * 1e-9:
        ticks.append(round(v, 12))
        v += step
    return ticks


def _tick_text(v: float) -> str:
    if v == 0:
        return "0"
    return f"{v:g}"


class Axes:
    """A plot area inside a Drawing, with linear or log10 scales on x and y.

    Parameters
    ----------
    drawing : Drawing
        Target drawing.
    x, y, width, height : float
        Plot-area rectangle inside the drawing [pt] (ticks and labels are drawn outside it).
    xlim, ylim : tuple of float
        Data ranges; positive for a log scale.
    xlog, ylog : bool
        Logarithmic scales.
    """

    font_size = 6.5

    def __init__(self, drawing: Drawing, x: float, y: float, width: float, height: float, *,
                 xlim, ylim, xlog: bool = False, ylog: bool = False):
        register_fonts()
        self.d = drawing
        self.x0, self.y0, self.w, self.h = x, y, width, height
        self.xlog, self.ylog = xlog, ylog
        self.xlim = tuple(float(v) for v in xlim)
        self.ylim = tuple(float(v) for v in ylim)
        for lim, is_log, name in ((self.xlim, xlog, "x"), (self.ylim, ylog, "y")):
            if not (lim[1] > lim[0]) or (is_log and lim[0] <= 0):
                raise ValueError(f"bad {name} range {lim} for a {'log' if is_log else 'linear'} axis")
        self._boxes: list[tuple] = []        # markers and labels already placed [pt]
        self._segments: list[tuple] = []     # drawn curves labels must not cover [pt]
        # bucket indexes of both, so that placing P labels costs about P, not P^2, box tests
        self._box_index = _BucketIndex()
        self._segment_index = _BucketIndex()

    # ---- mapping
    def _u(self, v, lim, is_log):
        if is_log:
            return (math.log10(v) - math.log10(lim[0])) / (math.log10(lim[1]) - math.log10(lim[0]))
        return (v - lim[0]) / (lim[1] - lim[0])

    def px(self, v: float) -> float:
        return self.x0 + self.w * self._u(v, self.xlim, self.xlog)

    def py(self, v: float) -> float:
        return self.y0 + self.h * self._u(v, self.ylim, self.ylog)

    def inside(self, xv: float, yv: float) -> bool:
        return (self.xlim[0] <= xv <= self.xlim[1]) and (self.ylim[0] <= yv <= self.ylim[1])

    # ---- furniture
    def frame(self, *, xlabel: str, ylabel: str, title: str | None = None, xticklabels: bool = True):
        """Grid, ticks, tick labels, axis labels and the frame."""
        fs = self.font_size
        grid_minor = colors.HexColor("#ececec")
        for axis in ("x", "y"):
            is_log = self.xlog if axis == "x" else self.ylog
            lim = self.xlim if axis == "x" else self.ylim
            if is_log:
                lo, hi = math.floor(math.log10(lim[0]) + 1e-9), math.ceil(math.log10(lim[1]) - 1e-9)
                n_dec = hi - lo
                major = [10.0 ** k for k in range(lo, hi + 1)]
                minor = [m * 10.0 ** k for k in range(lo, hi) for m in range(2, 10)] if n_dec <= 6 else []
                labels = {10.0 ** k: decade_label(k) for k in range(lo, hi + 1)}
            else:
                major = linear_ticks(*lim)
                minor = []
                labels = {v: _tick_text(v) for v in major}
            # each kind of line as one path: the same strokes, far fewer drawing operations
            grid, ticks = [], []
            for v in minor:
                if axis == "x":
                    X = self.px(v)
                    grid.append((X, self.y0, X, self.y0 + self.h))
                else:
                    Y = self.py(v)
                    grid.append((self.x0, Y, self.x0 + self.w, Y))
            self._segments_path(grid, grid_minor, 0.3)
            grid = []
            for v in major:
                if axis == "x":
                    X = self.px(v)
                    grid.append((X, self.y0, X, self.y0 + self.h))
                    ticks.append((X, self.y0 - 2, X, self.y0))
                else:
                    Y = self.py(v)
                    grid.append((self.x0, Y, self.x0 + self.w, Y))
                    ticks.append((self.x0 - 2, Y, self.x0, Y))
            self._segments_path(grid, GRID, 0.4)
            self._segments_path(ticks, colors.black, 0.5)
            for v in major:
                if axis == "x" and xticklabels:
                    self.d.add(String(self.px(v), self.y0 - 2 - fs, labels[v], fontName=FONT, fontSize=fs,
                                      textAnchor="middle"))
                elif axis == "y":
                    self.d.add(String(self.x0 - 3, self.py(v) - fs * 0.35, labels[v], fontName=FONT, fontSize=fs,
                                      textAnchor="end"))
        self.d.add(Rect(self.x0, self.y0, self.w, self.h, fillColor=None, strokeColor=colors.black,
                        strokeWidth=0.6))
        if xlabel:
            self.d.add(String(self.x0 + self.w / 2, self.y0 - 2 * fs - 4, xlabel, fontName=FONT,
                              fontSize=fs + 0.5, textAnchor="middle"))
        g = String(0, 0, ylabel, fontName=FONT, fontSize=fs + 0.5, textAnchor="middle")
        grp = Group(g)
        grp.transform = (0, 1, -1, 0, self.x0 - self._ylabel_offset(), self.y0 + self.h / 2)
        self.d.add(grp)
        if title:   # as large as fits the drawing's width (never runs off the figure)
            size = fs + 1.5
            while size > 5 and self.x0 + stringWidth(title, FONT_BOLD, size) > self.d.width:
                size -= 0.25
            self.d.add(String(self.x0, self.y0 + self.h + 4, title, fontName=FONT_BOLD, fontSize=size))

    def _segments_path(self, segments, color, width: float) -> None:
        """Straight segments (x1, y1, x2, y2) [pt] stroked alike, as one path."""
        if not segments:
            return
        path = Path(fillColor=None, strokeColor=color, strokeWidth=width)
        for x1, y1, x2, y2 in segments:
            path.moveTo(x1, y1)
            path.lineTo(x2, y2)
        self.d.add(path)

    def _ylabel_offset(self) -> float:
        """Distance of the rotated y label from the frame: clear of the widest tick label."""
        fs = self.font_size
        if self.ylog:
            lo, hi = math.floor(math.log10(self.ylim[0]) + 1e-9), math.ceil(math.log10(self.ylim[1]) - 1e-9)
            texts = [decade_label(k) for k in range(lo, hi + 1)]
        else:
            texts = [_tick_text(v) for v in linear_ticks(*self.ylim)]
        return 3 + max(stringWidth(t, FONT, fs) for t in texts) + fs * 0.9

    # ---- content
    def _to_unit(self, xv, yv):
        return self._u(xv, self.xlim, self.xlog), self._u(yv, self.ylim, self.ylog)

    def _keep_clear(self, *segments):
        """Register drawn page-coordinate segments that labels must not cover."""
        for seg in segments:
            self._segment_index.add(len(self._segments), min(seg[0], seg[2]), min(seg[1], seg[3]),
                                    max(seg[0], seg[2]), max(seg[1], seg[3]))
            self._segments.append(seg)

    def _box_in_frame(self, box) -> bool:
        x1, y1, x2, y2 = box
        return x1 >= self.x0 and x2 <= self.x0 + self.w and y1 >= self.y0 and y2 <= self.y0 + self.h

    def _conflicts(self, box, stop_at: float = math.inf) -> int:
        """Markers, labels and curves the box meets; counting stops once it reaches ``stop_at``."""
        x1, y1, x2, y2 = box
        boxes, segments = self._boxes, self._segments
        n = 0
        for i in self._box_index.near(x1, y1, x2, y2):
            if not (x2 <= boxes[i][0] or x1 >= boxes[i][2] or y2 <= boxes[i][1] or y1 >= boxes[i][3]):
                n += 1
                if n >= stop_at:
                    return n
        for i in self._segment_index.near(x1, y1, x2, y2):
            if _segment_hits_box(segments[i], box):
                n += 1
                if n >= stop_at:
                    return n
        return n

    def _fewest_conflicts(self, boxes):
        """The first box with the fewest conflicts (later boxes are counted only up to the best so far)."""
        best, best_n = None, math.inf
        for b in boxes:
            n = self._conflicts(b, stop_at=best_n)
            if n < best_n:
                best, best_n = b, n
                if n == 0:
                    break
        return best

    def _add_box(self, box) -> None:
        self._box_index.add(len(self._boxes), *box)
        self._boxes.append(box)

    def _box_is_free(self, box) -> bool:
        return self._box_in_frame(box) and self._conflicts(box, stop_at=1) == 0

    def segment(self, x1, y1, x2, y2, *, color, width=1.0, dash=None):
        """A straight segment in scale space (straight on the page), clipped to the plot area."""
        u1, v1 = self._to_unit(x1, y1)
        u2, v2 = self._to_unit(x2, y2)
        du, dv = u2 - u1, v2 - v1
        span = _clip_span(((-du, u1), (du, 1 - u1), (-dv, v1), (dv, 1 - v1)))
        if span is None:
            return
        t0, t1 = span
        a = (self.x0 + self.w * (u1 + t0 * du), self.y0 + self.h * (v1 + t0 * dv))
        b = (self.x0 + self.w * (u1 + t1 * du), self.y0 + self.h * (v1 + t1 * dv))
        self.d.add(Line(*a, *b, strokeColor=color, strokeWidth=width, strokeDashArray=dash))
        self._keep_clear((*a, *b))

    def polyline(self, xs, ys, *, color, width=1.0, dash=None):
        """A sampled curve (data expected inside the limits; points outside are clamped to the frame)."""
        page = [(min(max(self.px(float(xv)), self.x0), self.x0 + self.w),
                 min(max(self.py(float(yv)), self.y0), self.y0 + self.h)) for xv, yv in zip(xs, ys)]
        pts = [round(v, 3) for q in simplified(page) for v in q]
        self.d.add(PolyLine(pts, strokeColor=color, strokeWidth=width, strokeDashArray=dash))
        self._keep_clear(*[(pts[i], pts[i + 1], pts[i + 2], pts[i + 3]) for i in range(0, len(pts) - 2, 2)])

    def hline(self, yv, *, color, width=0.9, dash=None, x_from=None, x_to=None):
        """A horizontal line at ``yv`` (optionally only between two x values)."""
        if not (self.ylim[0] <= yv <= self.ylim[1]):
            return
        Y = self.py(yv)
        X1 = self.x0 if x_from is None else self.px(max(x_from, self.xlim[0]))
        X2 = self.x0 + self.w if x_to is None else self.px(min(x_to, self.xlim[1]))
        self.d.add(Line(X1, Y, X2, Y, strokeColor=color, strokeWidth=width, strokeDashArray=dash))
        self._keep_clear((X1, Y, X2, Y))

    def xband(self, x_from, x_to, *, color):
        """A shaded vertical band between two x values (clipped)."""
        a = max(x_from, self.xlim[0])
        b = min(x_to, self.xlim[1])
        if b <= a:
            return
        X1, X2 = self.px(a), self.px(b)
        self.d.add(Rect(X1, self.y0, X2 - X1, self.h, fillColor=color, strokeColor=None, strokeWidth=0))

    def marker(self, xv, yv, *, shape="circle", color, size=2.6):
        """A marker; an off-range marker is drawn on the frame edge as a triangle pointing outward so
        that it is not silently lost. Returns its page position."""
        X, Y = self.px(min(max(xv, self.xlim[0]), self.xlim[1])), self.py(min(max(yv, self.ylim[0]), self.ylim[1]))
        if self.inside(xv, yv):
            if shape == "square":
                self.d.add(Rect(X - size, Y - size, 2 * size, 2 * size, fillColor=color, strokeColor=colors.white,
                                strokeWidth=0.4))
            else:
                self.d.add(Circle(X, Y, size, fillColor=color, strokeColor=colors.white, strokeWidth=0.4))
        else:
            s = size * 1.3
            down = yv < self.ylim[0]
            pts = [X - s, Y + (s if down else -s), X + s, Y + (s if down else -s), X, Y]
            self.d.add(Polygon(pts, fillColor=color, strokeColor=None))
        self._add_box((X - size, Y - size, X + size, Y + size))
        return X, Y

    def label(self, candidates, text, *, color=None, bold=False, backing=False):
        """Text at the first candidate position clear of curves, markers and earlier labels.

        ``candidates`` are (X, Y, anchor) page positions of the text baseline ("start", "end" or
        "middle"); when none is clear the first is used. ``backing`` puts a white box behind the
        text. Returns the box used.
        """
        fs = self.font_size
        font = FONT_BOLD if bold else FONT
        w = stringWidth(text, font, fs)
        boxes = []
        for X, Y, anchor in candidates:
            left = X - w if anchor == "end" else (X - w / 2 if anchor == "middle" else X)
            boxes.append((left, Y - fs * 0.25, left + w, Y + fs * 0.8))
        box = next((b for b in boxes if self._box_is_free(b)), None)
        if box is None:          # nothing clear: the in-frame candidate with the fewest conflicts
            inside = [b for b in boxes if self._box_in_frame(b)] or boxes
            box = self._fewest_conflicts(inside)
        if backing:
            self.d.add(Rect(box[0] - 0.8, box[1], box[2] - box[0] + 1.6, box[3] - box[1],
                            fillColor=colors.white, strokeColor=None))
        self.d.add(String(box[0], box[1] + fs * 0.25, text, fontName=font, fontSize=fs,
                          fillColor=color or PALETTE["text"]))
        self._add_box(box)
        return box

    def point_labels(self, items, *, size=2.6):
        """Labels beside markers: each tries right, left, above and below its marker (then further
        out) and takes the first place clear of markers, curves and the labels already set.

        ``items`` are (X, Y, text, color) in page coordinates.
        """
        fs = self.font_size
        for X, Y, text, color in sorted(items, key=lambda it: (it[0], -it[1])):
            cands = []
            for k in range(3):
                g = size + 1 + k * fs
                cands += [(X + g, Y - fs * 0.3, "start"), (X - g, Y - fs * 0.3, "end"),
                          (X, Y + g, "middle"), (X, Y - g - fs * 0.6, "middle"),
                          (X + g * 0.8, Y + g * 0.8, "start"), (X + g * 0.8, Y - g * 0.8 - fs * 0.6, "start")]
            self.label(cands, text, color=color, bold=True)

    def text(self, X, Y, s, *, color=None, anchor="start", bold=False, size=None):
        """Text at page coordinates of the drawing (not checked for overlap)."""
        self.d.add(String(X, Y, s, fontName=FONT_BOLD if bold else FONT, fontSize=size or self.font_size,
                          fillColor=color or PALETTE["text"], textAnchor=anchor))


#: Largest distance [pt] of a dropped sample from the simplified line: far below what print or screen shows.
SIMPLIFY_PT = 0.02


def simplified(points, tol: float = SIMPLIFY_PT) -> list:
    """The page polyline ``points`` [(x, y) pt] without the samples that lie within ``tol`` of the segment
    between the kept ones around them (Ramer-Douglas-Peucker): a finely sampled smooth curve draws the same
    with far fewer points (the standing wave's 401 samples, about a tenth)."""
    n = len(points)
    if n < 3:
        return list(points)
    keep = [False] * n
    keep[0] = keep[-1] = True
    stack = [(0, n - 1)]
    while stack:
        a, b = stack.pop()
        (ax, ay), (bx, by) = points[a], points[b]
        dx, dy = bx - ax, by - ay
        norm2 = dx * dx + dy * dy
        worst, at = -1.0, -1
        for k in range(a + 1, b):
            px, py = points[k]
            t = min(1.0, max(0.0, ((px - ax) * dx + (py - ay) * dy) / norm2)) if norm2 > 0 else 0.0
            dist = math.hypot(px - ax - t * dx, py - ay - t * dy)
            if dist > worst:
                worst, at = dist, k
        if worst > tol:
            keep[at] = True
            stack += [(a, at), (at, b)]
    return [q for q, k in zip(points, keep) if k]


class _BucketIndex:
    """Items with a bounding box [pt] in square buckets of a uniform grid.

    :meth:`near` returns every item whose box shares a bucket with the query box, which includes every
    item whose box meets it (edges included); callers apply their exact test to these only.
    """

    cell = 24.0

    def __init__(self):
        self._cells: dict[tuple[int, int], list[int]] = {}
        self._everywhere: list[int] = []      # boxes with a non-finite or very large extent
        self._count = 0

    def _span(self, x1, y1, x2, y2):
        c = self.cell
        if not all(math.isfinite(v) for v in (x1, y1, x2, y2)) or max(x2 - x1, y2 - y1) > 1e4:
            return None
        return (range(math.floor(x1 / c), math.floor(x2 / c) + 1), range(math.floor(y1 / c), math.floor(y2 / c) + 1))

    def add(self, item: int, x1: float, y1: float, x2: float, y2: float) -> None:
        self._count = max(self._count, item + 1)
        span = self._span(x1, y1, x2, y2)
        if span is None:
            self._everywhere.append(item)
            return
        for i in span[0]:
            for j in span[1]:
                self._cells.setdefault((i, j), []).append(item)

    def near(self, x1: float, y1: float, x2: float, y2: float) -> set[int]:
        span = self._span(x1, y1, x2, y2)
        if span is None:
            return set(range(self._count))
        xs, ys = span
        found: set[int] = set(self._everywhere)
        for i in xs:
            for j in ys:
                found.update(self._cells.get((i, j), ()))
        return found


def _clip_span(constraints):
    """Liang-Barsky: the parameter span (t0, t1) of a segment inside the constraints p t <= q, or None."""
    t0, t1 = 0.0, 1.0
    for p_, q_ in constraints:
        if p_ == 0:
            if q_ < 0:
                return None
            continue
        t = q_ / p_
        if p_ < 0:
            t0 = max(t0, t)
        else:
            t1 = min(t1, t)
        if t0 > t1:
            return None
    return t0, t1


def _segment_hits_box(seg, box) -> bool:
    """True when the segment (x1, y1, x2, y2) passes through the box (x1, y1, x2, y2) (Liang-Barsky)."""
    x1, y1, x2, y2 = seg
    bx1, by1, bx2, by2 = box
    dx, dy = x2 - x1, y2 - y1
    return _clip_span(((-dx, x1 - bx1), (dx, bx2 - x1), (-dy, y1 - by1), (dy, by2 - y1))) is not None
