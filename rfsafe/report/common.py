"""Building blocks shared by rfsafe's PDF documents (station worksheet, event-site review).

Everything here renders; nothing computes. The blocks are:

- :func:`register_fonts` / :data:`FONT` / :data:`FONT_BOLD`: the embedded DejaVu Sans faces
  (shipped in ``rfsafe/report/fonts/``, with their licence), so that ohm, lambda, <= and micro
  signs render the same on every machine;
- :func:`styles`: the paragraph styles (``title``, ``h1``, ``h2``, ``body``, ``small``, ``cell``,
  ``cell_bold``, ``cell_right``, ``head``, ``caution``, ``mono``);
- :func:`p` (escaped paragraph), :func:`data_table` (header row, zebra rows, wrapped cells,
  repeated header across pages), :func:`kv_table` (label/value pairs), :func:`table_style`;
- :func:`verdict_box` and :func:`identity_block` (title, identity rows, the big verdict);
- :func:`section_heading` (numbered heading that also becomes a PDF outline entry);
- :func:`cautions_block` and :func:`signoff_block`;
- :func:`build_pdf`: the invariant document set-up (A4, portrait and landscape page templates,
  running header and "page n of m" footer, creation date taken from the evaluation date, no
  random ids) returning the PDF as bytes;
- number formatting helpers :func:`num`, :func:`ratio_text`, :func:`margin_text`,
  :func:`dist_text`.
"""

from __future__ import annotations

import datetime as dt
import io
import math
import re
from contextlib import contextmanager
from functools import lru_cache
from importlib import resources

from reportlab import rl_config
from reportlab.lib import colors
from reportlab.lib.enums import TA_CENTER, TA_LEFT, TA_RIGHT
from reportlab.lib.pagesizes import A4, landscape
from reportlab.lib.styles import ParagraphStyle
from reportlab.lib.units import mm
from reportlab.pdfbase import pdfmetrics
from reportlab.pdfbase.pdfmetrics import stringWidth
from reportlab.pdfbase.ttfonts import TTFont
from reportlab.pdfgen.canvas import Canvas
from reportlab.platypus import (BaseDocTemplate, CondPageBreak, Flowable, Frame, PageTemplate, Paragraph, Spacer,
                                Table, TableStyle)

__all__ = [
    "FONT", "FONT_BOLD", "PAGE", "PAGE_LANDSCAPE", "MARGIN", "COMPLIES_COLOR", "EXCEEDS_COLOR",
    "ACCENT", "GRID", "register_fonts", "styles", "p", "table_style", "data_table", "kv_table", "Styled",
    "LONG_TABLE_ROWS",
    "verdict_box", "identity_block", "section_heading", "heading_before_table", "cautions_block", "signoff_block",
    "grouped_flags", "merge_numbers",
    "build_pdf", "quick_reportlab", "escape", "frame_width", "fit_widths", "num", "ratio_text", "margin_text",
    "dist_text",
]

FONT = "DejaVuSans"
FONT_BOLD = "DejaVuSans-Bold"
PAGE = A4
PAGE_LANDSCAPE = landscape(A4)
MARGIN = 15 * mm
_HEADER_GAP = 8 * mm           # room for the running header / footer inside the margins

COMPLIES_COLOR = colors.HexColor("#1b6e34")   # dark green, white text passes contrast checks
EXCEEDS_COLOR = colors.HexColor("#b3122b")    # dark red
ACCENT = colors.HexColor("#1f3a5f")           # headings, table headers
GRID = colors.HexColor("#9aa5b1")
ZEBRA = colors.HexColor("#eef2f6")


def escape(text: str) -> str:
    """``&``, ``<`` and ``>`` as entities, for paragraph markup (as ``xml.sax.saxutils.escape``, whose import
    pulls in urllib, http and ssl and cost more than a page of the worksheet)."""
    return text.replace("&", "&amp;").replace(">", "&gt;").replace("<", "&lt;")


def register_fonts() -> None:
    """Register the embedded DejaVu Sans regular and bold faces with reportlab (idempotent)."""
    if FONT in pdfmetrics.getRegisteredFontNames():
        return
    folder = resources.files("rfsafe.report") / "fonts"
    for name, file in ((FONT, "DejaVuSans.ttf"), (FONT_BOLD, "DejaVuSans-Bold.ttf")):
        with resources.as_file(folder / file) as path:
            pdfmetrics.registerFont(TTFont(name, str(path)))
    pdfmetrics.registerFontFamily(FONT, normal=FONT, bold=FONT_BOLD, italic=FONT, boldItalic=FONT_BOLD)


@lru_cache(maxsize=1)
def styles() -> dict[str, ParagraphStyle]:
    """The paragraph styles of rfsafe documents, keyed by role."""
    register_fonts()
    base = ParagraphStyle("body", fontName=FONT, bulletFontName=FONT, fontSize=9, leading=11.5, spaceAfter=3)
    s = {
        "body": base,
        "title": ParagraphStyle("title", parent=base, fontName=FONT_BOLD, fontSize=17, leading=21,
                                textColor=ACCENT, spaceAfter=2),
        "subtitle": ParagraphStyle("subtitle", parent=base, fontSize=10, leading=13, textColor=ACCENT,
                                   spaceAfter=6),
        "h1": ParagraphStyle("h1", parent=base, fontName=FONT_BOLD, fontSize=12.5, leading=16,
                             textColor=ACCENT, spaceBefore=9, spaceAfter=4, keepWithNext=1),
        "h2": ParagraphStyle("h2", parent=base, fontName=FONT_BOLD, fontSize=10, leading=13,
                             textColor=ACCENT, spaceBefore=6, spaceAfter=3, keepWithNext=1),
        "small": ParagraphStyle("small", parent=base, fontSize=7.5, leading=9.5, spaceAfter=2),
        # a small paragraph that introduces what follows: never left alone at a page foot
        "lead": ParagraphStyle("lead", parent=base, fontSize=7.5, leading=9.5, spaceAfter=2, keepWithNext=1),
        "bullet": ParagraphStyle("bullet", parent=base, leftIndent=10, bulletIndent=2, spaceAfter=2),
        "cell": ParagraphStyle("cell", parent=base, fontSize=7.5, leading=9, spaceAfter=0),
        "cell_bold": ParagraphStyle("cell_bold", parent=base, fontName=FONT_BOLD, fontSize=7.5, leading=9,
                                    spaceAfter=0),
        "cell_right": ParagraphStyle("cell_right", parent=base, fontSize=7.5, leading=9, spaceAfter=0,
                                     alignment=TA_RIGHT),
        "head": ParagraphStyle("head", parent=base, fontName=FONT_BOLD, fontSize=7.5, leading=9,
                               spaceAfter=0, textColor=colors.white),
        "head_right": ParagraphStyle("head_right", parent=base, fontName=FONT_BOLD, fontSize=7.5,
                                     leading=9, spaceAfter=0, textColor=colors.white, alignment=TA_RIGHT),
        "kv_key": ParagraphStyle("kv_key", parent=base, fontName=FONT_BOLD, fontSize=8.5, leading=10.5,
                                 spaceAfter=0),
        "kv_value": ParagraphStyle("kv_value", parent=base, fontSize=8.5, leading=10.5, spaceAfter=0),
        "verdict": ParagraphStyle("verdict", parent=base, fontName=FONT_BOLD, fontSize=30, leading=36,
                                  textColor=colors.white, alignment=TA_CENTER, spaceAfter=0),
        "verdict_detail": ParagraphStyle("verdict_detail", parent=base, fontSize=9.5, leading=12,
                                         textColor=colors.white, alignment=TA_CENTER, spaceAfter=0),
        "caution": ParagraphStyle("caution", parent=base, leftIndent=12, bulletIndent=2, spaceAfter=2.5),
        "mono": ParagraphStyle("mono", parent=base, fontSize=7.5, leading=9.5, spaceAfter=0),
        "caption": ParagraphStyle("caption", parent=base, fontSize=7.5, leading=9.5, spaceBefore=1,
                                  spaceAfter=6, alignment=TA_LEFT, textColor=colors.HexColor("#333333")),
    }
    return s


def p(text: str, style: str = "body", *, markup: bool = False) -> Paragraph:
    """A paragraph of plain text (escaped), or of reportlab mini-markup when ``markup``."""
    return Paragraph(text if markup else escape(str(text)), styles()[style])


def frame_width(pagesize=PAGE) -> float:
    """Usable width of a page's frame [pt]."""
    return pagesize[0] - 2 * MARGIN


# ---------------------------------------------------------------- numbers
def num(x, sig: int = 3) -> str:
    """A number with ``sig`` significant digits; exponent form below 1e-3 and from 1e6.

    Non-finite values print as such (never as a plausible number); ``None`` prints as a dash.
    """
    if x is None:
        return "–"
    x = float(x)
    if not math.isfinite(x):
        return str(x)
    ax = abs(x)
    if ax != 0 and (ax < 1e-3 or ax >= 1e6):
        return f"{x:.{sig - 1}e}"
    if ax >= 10 ** sig:
        return f"{x:.0f}"
    return f"{x:.{sig}g}"


def ratio_text(r) -> str:
    """Exposure ratio as printed in rfsafe documents (3 significant digits)."""
    return num(r, 3)


def margin_text(db) -> str:
    """Margin to the limit [dB], signed, one decimal (positive = below the limit)."""
    if db is None or not math.isfinite(float(db)):
        return num(db)
    return f"{float(db):+.1f}"


def dist_text(dist_m, dist_ft=None) -> str:
    """Distance as ``"m (ft)"`` with 2 and 1 decimals."""
    if dist_ft is None:
        return f"{float(dist_m):.2f}"
    return f"{float(dist_m):.2f} m ({float(dist_ft):.1f} ft)"


# ---------------------------------------------------------------- tables
#: Left and right padding of table cells [pt].
_PAD = 2.5


def table_style(*, n_rows: int, header_rows: int = 1, zebra: bool = True, extra=()) -> TableStyle:
    """The one table look: dark header, thin grid, zebra body rows, top-aligned cells."""
    cmds = [
        ("FONTNAME", (0, 0), (-1, -1), FONT),
        ("BACKGROUND", (0, 0), (-1, header_rows - 1), ACCENT),
        ("VALIGN", (0, 0), (-1, -1), "TOP"),
        ("GRID", (0, 0), (-1, -1), 0.35, GRID),
        ("LEFTPADDING", (0, 0), (-1, -1), _PAD),
        ("RIGHTPADDING", (0, 0), (-1, -1), _PAD),
        ("TOPPADDING", (0, 0), (-1, -1), 1.6),
        ("BOTTOMPADDING", (0, 0), (-1, -1), 1.8),
    ]
    if zebra:
        for r in range(header_rows, n_rows):
            if (r - header_rows) % 2 == 1:
                cmds.append(("BACKGROUND", (0, r), (-1, r), ZEBRA))
    cmds.extend(extra)
    return TableStyle(cmds)


class Styled:
    """Table cell text in a colour and/or bold, on one or more lines.

    In a table of up to :data:`LONG_TABLE_ROWS` rows it becomes a paragraph; in a longer one a plain
    string with the colour and font set by the table's style (a paragraph only when a line is wider
    than its column).
    """

    __slots__ = ("lines", "color", "bold")

    def __init__(self, lines, *, color=None, bold: bool = False):
        self.lines = [lines] if isinstance(lines, str) else list(lines)
        self.color = color
        self.bold = bold

    def paragraph(self, style: str = "cell") -> Paragraph:
        text = "<br/>".join(escape(str(line)) for line in self.lines)
        if self.bold or self.color is not None:
            attrs = (f' name="{FONT_BOLD}"' if self.bold else "") + (
                f' color="#{self.color.hexval()[2:]}"' if self.color is not None else "")
            text = f"<font{attrs}>{text}</font>"
        return Paragraph(text, styles()[style])


def _cell(value, style):
    if isinstance(value, Styled):      # its own font and colour: the plain cell style beneath them
        return value.paragraph()
    if isinstance(value, Paragraph) or hasattr(value, "wrapOn"):
        return value
    return p("" if value is None else str(value), style)


@lru_cache(maxsize=65536)
def _token_width(text: str, font: str, size: float) -> float:
    words = str(text).split()
    return max((stringWidth(w, font, size) for w in words), default=0.0)


def fit_widths(col_widths, headers, rows, *, padding: float = 5.5) -> list[float]:
    """Column widths [pt] that add up to exactly the total of ``col_widths`` (the room the caller gave the
    table, at most the frame), widening columns whose longest word would otherwise be broken.

    The room comes from columns with slack, in proportion to it. When the longest words of all columns
    together need more than the total, every column gets the same share of its need: the total is kept
    and the widest words wrap inside their cells (cells break a word that is wider than the column).
    Only plain-text cells are measured (flowables wrap themselves).
    """
    size = styles()["cell"].fontSize
    need = []
    for j, w in enumerate(col_widths):
        m = _token_width(headers[j], FONT_BOLD, size) if isinstance(headers[j], str) else 0.0
        for row in rows:
            if isinstance(row[j], str):
                m = max(m, _token_width(row[j], FONT, size))
        need.append(m + padding)
    widths = [float(w) for w in col_widths]
    total = sum(widths)
    if sum(need) > total:       # not every word fits whole: shares of the need, the total kept
        return [total * n / sum(need) for n in need]
    deficit = sum(max(0.0, n - w) for n, w in zip(need, widths))
    if deficit <= 0:
        return widths
    slack = [max(0.0, w - n) for n, w in zip(need, widths)]
    take = deficit / sum(slack)            # at most 1: the needs fit the total
    return [n if n > w else w - s_ * take for w, n, s_ in zip(widths, need, slack)]


def data_table(headers, rows, col_widths, *, align: str | None = None, extra_style=(),
               zebra: bool = True, bold_rows=()) -> Table:
    """A wrapped-cell table with a header row repeated on every page.

    Parameters
    ----------
    headers : sequence of str
        Column titles.
    rows : sequence of sequences
        Cell texts (str) or flowables (kept as given).
    col_widths : sequence of float
        Column widths [pt]; they should add up to at most the frame width.
    align : str, optional
        One ``l``/``r`` per column (default: first column left, the rest right).
    extra_style : sequence
        Additional TableStyle commands.
    bold_rows : iterable of int
        Body row indices (0 = first row after the header) printed in bold.
    """
    n = len(headers)
    align = align or ("l" + "r" * (n - 1))
    bold_rows = set(bold_rows)
    for i, row in enumerate(rows):
        if len(row) != n:
            raise ValueError(f"table row {i} has {len(row)} cells, expected {n}")
    if len(rows) > LONG_TABLE_ROWS:
        return _long_table(headers, rows, col_widths, align, extra_style, zebra, bold_rows)
    widths = fit_widths(col_widths, headers, rows)
    head = [_cell(h, "head_right" if a == "r" else "head") for h, a in zip(headers, align)]
    body, row_cmds = _body_cells(rows, widths, align, bold_rows, wrap=False)
    cmds = list(table_style(n_rows=len(rows) + 1, zebra=zebra, extra=extra_style).getCommands())
    cmds += _plain_cell_commands(align)
    cmds += [(name, (c0, i + 1), (c1, i + 1), *args) for i, row in row_cmds.items() for name, c0, c1, *args in row]
    t = Table([head] + body, colWidths=widths, repeatRows=1, hAlign="LEFT")
    t.setStyle(TableStyle(cmds))
    return t


def _plain_cell_commands(align) -> list:
    """Table style commands that set plain-string body cells as the cell paragraphs are set."""
    st = styles()["cell"]
    cmds = [("FONTSIZE", (0, 1), (-1, -1), st.fontSize), ("LEADING", (0, 1), (-1, -1), st.leading),
            ("TEXTCOLOR", (0, 1), (-1, -1), st.textColor)]
    return cmds + [("ALIGN", (j, 1), (j, -1), "RIGHT") for j, a in enumerate(align) if a == "r"]


def _body_cells(rows, widths, align, bold_rows, *, wrap: bool):
    """Body cells of a data table and per-row style commands ``{row: [(name, col0, col1, *args)]}``.

    A text that fits its column is a plain string set by the table's style (a paragraph per cell costs
    about 100 times more): in a short table broken exactly where its paragraph would break it
    (:func:`_paragraph_breaks`, so the page is the same), in a long one (``wrap``) at spaces, each line
    break kept, and the colours and bold of :class:`Styled` cells and of bold rows become style
    commands of those cells. Other texts are paragraphs, which wrap (and break a word wider than the
    column).
    """
    body, row_cmds = [], {}
    for i, row in enumerate(rows):
        bold = i in bold_rows
        out = []
        for j, (v, a) in enumerate(zip(row, align)):
            room = widths[j] - 5.0          # left and right padding of the table style
            if isinstance(v, Styled) and not wrap:      # a short table's few coloured cells: as they were
                out.append(v.paragraph())
            elif isinstance(v, Styled):
                font = FONT_BOLD if (v.bold or bold) else FONT
                text = _plain_lines([str(t) for t in v.lines], font, room)
                if text is not None:
                    out.append(text)
                    cmds = row_cmds.setdefault(i, [])
                    if font != FONT:
                        cmds.append(("FONTNAME", j, j, font))
                    if v.color is not None:
                        cmds.append(("TEXTCOLOR", j, j, v.color))
                else:
                    out.append(v.paragraph("cell_bold" if bold else ("cell_right" if a == "r" else "cell")))
            elif v is None or isinstance(v, str):
                text = "" if v is None else v
                font = FONT_BOLD if bold else FONT
                plain = (_plain_lines(text.split("\n"), font, room) if wrap else
                         _paragraph_breaks(text, font, widths[j] - _PAD - _PAD))
                if plain is not None:
                    out.append(plain)
                else:
                    style = "cell_bold" if bold else ("cell_right" if a == "r" else "cell")
                    out.append(Paragraph(escape(text), styles()[style]) if not (bold and a == "r") else
                               Paragraph(escape(text), ParagraphStyle("cell_bold_right", parent=styles()["cell_bold"],
                                                                      alignment=TA_RIGHT)))
            else:
                out.append(_cell(v, "cell"))
        if bold:
            row_cmds.setdefault(i, []).append(("FONTNAME", 0, -1, FONT_BOLD))
        body.append(out)
    return body, row_cmds


#: Tables with more body rows than this are laid out page by page (:class:`_PagedTable`), with plain-string
#: cells wherever the text fits its column on one line (a paragraph per cell costs about 100 times more).
LONG_TABLE_ROWS = 200
#: Body rows handed to reportlab at a time when a long table is split across pages: more than a page holds.
_PAGE_WINDOW = 160


@lru_cache(maxsize=65536)
def _line_width(text: str, font: str) -> float:
    return stringWidth(text, font, styles()["cell"].fontSize)


def _paragraph_breaks(text: str, font: str, room: float) -> str | None:
    """``text`` broken into lines where a cell paragraph of ``room`` [pt] breaks it, as one plain string.

    reportlab's rule for a plain-text paragraph: words taken greedily, a line running over ``room`` by at
    most its style's space shrinkage (a share of a space per gap between its words). None for a text the
    paragraph sets otherwise: a line it squeezes into the room that way, whitespace other than single
    spaces between words, a soft hyphen, or a word wider than the room (the paragraph splits it).
    """
    if (text != text.strip(" ") or "  " in text or "\xad" in text
            or any(ch.isspace() and ch != " " for ch in text)):
        return None
    space = _line_width(" ", font)
    shrink = styles()["cell"].spaceShrinkage * space
    lines, current, used = [], [], -space
    for word in text.split(" ") if text else ():
        w = _line_width(word, font)
        if w > room:
            return None
        wider = used + space + w
        if wider <= room + shrink * len(current) or not current:
            current.append(word)
            used = wider
        else:
            if used > room:         # the paragraph squeezes this line's spaces: a plain string cannot
                return None
            lines.append(" ".join(current))
            current, used = [word], w
    if used > room:
        return None
    lines.append(" ".join(current))
    return "\n".join(lines)


def _plain_lines(lines, font: str, room: float) -> str | None:
    """``lines`` broken at spaces to fit ``room`` [pt] as one plain string, or None when a word is wider."""
    out = []
    space = _line_width(" ", font)
    for line in lines:
        if _line_width(line, font) <= room:
            out.append(line)
            continue
        current, used = [], 0.0
        for word in line.split(" "):
            w = _line_width(word, font)
            if w > room:
                return None
            if current and used + space + w > room:
                out.append(" ".join(current))
                current, used = [], 0.0
            used += (space if current else 0.0) + w
            current.append(word)
        out.append(" ".join(current))
    return "\n".join(out)


def _long_table(headers, rows, col_widths, align, extra_style, zebra, bold_rows) -> "_PagedTable":
    """The layout of :func:`data_table` for many rows, in time and memory linear in the rows.

    Cells whose text fits their column, broken at spaces where needed, are plain strings set in the cell
    font, size and alignment by the table style; colours and bold of :class:`Styled`
    cells and bold rows become style commands of those cells. Other texts wrap as paragraphs.
    """
    widths = fit_widths(col_widths, headers, rows)
    head = [_cell(h, "head_right" if a == "r" else "head") for h, a in zip(headers, align)]
    body, row_cmds = _body_cells(rows, widths, align, bold_rows, wrap=True)
    base = list(table_style(n_rows=1, zebra=False).getCommands()) + _plain_cell_commands(align)
    for cmd in extra_style:      # a command on one body row follows that row into whichever page it lands on
        name, (c0, r0), (c1, r1), *args = cmd
        if r0 == r1 and r0 >= 1:
            row_cmds.setdefault(r0 - 1, []).append((name, c0, c1, *args))
        else:
            base.append(cmd)
    return _PagedTable(head, body, widths, base, row_cmds, zebra)


class _PagedTable(Flowable):
    """A long table laid out a page at a time: each split hands reportlab only the next
    :data:`_PAGE_WINDOW` rows (with the header, repeated on every page), so the work grows with the
    rows, not with rows x pages as a single reportlab table's splits do."""

    def __init__(self, head, body, widths, base, row_cmds, zebra, start: int = 0, hint: int = 48):
        super().__init__()
        self.hAlign = "LEFT"
        self._args = (head, body, widths, base, row_cmds, zebra)
        self._start = start
        self._hint = hint        # rows to try first: a little more than the previous page took
        self._whole = None       # the last rows as one reportlab table, once they are few enough
        self.width = sum(widths)

    def _window(self, count: int) -> Table:
        head, body, widths, base, row_cmds, zebra = self._args
        a = self._start
        t = Table([head] + body[a:a + count], colWidths=widths, repeatRows=1, hAlign="LEFT")
        cmds = list(base)
        if zebra:                # zebra by the row's place in the whole table
            cmds.append(("ROWBACKGROUNDS", (0, 1), (-1, -1), [None, ZEBRA] if a % 2 == 0 else [ZEBRA, None]))
        for i in range(a, min(a + count, len(body))):
            for name, c0, c1, *args in row_cmds.get(i, ()):
                cmds.append((name, (c0, i - a + 1), (c1, i - a + 1), *args))
        t.setStyle(TableStyle(cmds))
        return t

    def _remaining(self) -> int:
        return len(self._args[1]) - self._start

    def wrap(self, availWidth, availHeight):
        if self._remaining() <= _PAGE_WINDOW:
            if self._whole is None:
                self._whole = self._window(self._remaining())
            self.width, self.height = self._whole.wrap(availWidth, availHeight)
            return self.width, self.height
        # more rows than any page holds: report more than the room, so that the frame splits
        self.height = availHeight + 1.0
        return self.width, self.height

    def split(self, availWidth, availHeight):
        if self._remaining() <= _PAGE_WINDOW:
            if self._whole is None:
                self._whole = self._window(self._remaining())
            return self._whole.split(availWidth, availHeight)
        count = min(self._hint, _PAGE_WINDOW)
        while True:
            parts = self._window(count).split(availWidth, availHeight)
            taken = parts[0]._nrows - 1 if parts else 0
            if taken < count or count >= _PAGE_WINDOW:    # the page is full (or holds nothing)
                break
            count = min(2 * count, _PAGE_WINDOW)           # every row tried fits: try more
        if taken <= 0:
            return []
        head, body, widths, base, row_cmds, zebra = self._args
        return [parts[0], _PagedTable(head, body, widths, base, row_cmds, zebra, start=self._start + taken,
                                      hint=taken + max(4, taken // 4))]

    def draw(self):
        self._whole.drawOn(self.canv, 0, 0)


def kv_table(pairs, col_widths) -> Table:
    """Label/value pairs as a two-column table without header."""
    data = [[_cell(k, "kv_key"), _cell(v, "kv_value")] for k, v in pairs]
    t = Table(data, colWidths=list(col_widths), hAlign="LEFT")
    t.setStyle(TableStyle([
        ("FONTNAME", (0, 0), (-1, -1), FONT),
        ("VALIGN", (0, 0), (-1, -1), "TOP"),
        ("LINEBELOW", (0, 0), (-1, -1), 0.25, GRID),
        ("LEFTPADDING", (0, 0), (-1, -1), 2),
        ("RIGHTPADDING", (0, 0), (-1, -1), 2),
        ("TOPPADDING", (0, 0), (-1, -1), 1.5),
        ("BOTTOMPADDING", (0, 0), (-1, -1), 2),
    ]))
    return t


# ---------------------------------------------------------------- blocks
def verdict_box(verdict: str, detail: str, width: float) -> Table:
    """The overall verdict in a big coloured box: green ``✓ COMPLIES`` or red ``✗ EXCEEDS``.

    The word and the symbol carry the meaning; the colour only repeats it.
    """
    ok = verdict.upper() == "COMPLIES"
    word = ("✓ " if ok else "✗ ") + verdict.upper()
    base = styles()["verdict"]
    size = base.fontSize
    while size > 12 and stringWidth(word, FONT_BOLD, size) > width - 14:
        size -= 1
    big = ParagraphStyle("verdict_fit", parent=base, fontSize=size, leading=size * 1.2)
    t = Table([[Paragraph(escape(word), big)], [p(detail, "verdict_detail")]], colWidths=[width], hAlign="LEFT")
    t.setStyle(TableStyle([
        ("FONTNAME", (0, 0), (-1, -1), FONT),
        ("BACKGROUND", (0, 0), (-1, -1), COMPLIES_COLOR if ok else EXCEEDS_COLOR),
        ("TOPPADDING", (0, 0), (-1, 0), 6),
        ("BOTTOMPADDING", (0, 0), (-1, 0), 2),
        ("BOTTOMPADDING", (0, 1), (-1, 1), 7),
        ("LEFTPADDING", (0, 0), (-1, -1), 6),
        ("RIGHTPADDING", (0, 0), (-1, -1), 6),
    ]))
    return t


#: Colour of a verdict that is neither good nor bad (not evaluated, not rated): dark grey.
UNDECIDED_COLOR = colors.HexColor("#4d4d4d")


def verdicts_box(entries, width: float) -> Table:
    """Separate verdicts stacked in one box, each in its own colour.

    ``entries`` are ``(label, word, ok, detail)``: ``ok`` True (green, ✓), False (red, ✗) or None
    (grey, –: not evaluated or not rated). The word and the symbol carry the meaning; the colour only
    repeats it.
    """
    base = styles()["verdict"]
    rows, style = [], [("FONTNAME", (0, 0), (-1, -1), FONT), ("LEFTPADDING", (0, 0), (-1, -1), 6),
                       ("RIGHTPADDING", (0, 0), (-1, -1), 6)]
    for label, word, ok, detail in entries:
        text = f"{label}: {'✓' if ok else ('✗' if ok is False else '–')} {word.upper()}"
        size = min(base.fontSize, 16)
        while size > 9 and stringWidth(text, FONT_BOLD, size) > width - 14:
            size -= 1
        big = ParagraphStyle("verdict_fit", parent=base, fontSize=size, leading=size * 1.2)
        k = len(rows)
        rows += [[Paragraph(escape(text), big)], [p(detail, "verdict_detail")]]
        colour = COMPLIES_COLOR if ok else (EXCEEDS_COLOR if ok is False else UNDECIDED_COLOR)
        style += [("BACKGROUND", (0, k), (-1, k + 1), colour), ("TOPPADDING", (0, k), (-1, k), 6),
                  ("BOTTOMPADDING", (0, k), (-1, k), 2), ("BOTTOMPADDING", (0, k + 1), (-1, k + 1), 7),
                  ("LINEBELOW", (0, k + 1), (-1, k + 1), 2, colors.white)]
    t = Table(rows, colWidths=[width], hAlign="LEFT")
    t.setStyle(TableStyle(style))
    return t


def identity_block(*, title: str, subtitle: str | None, rows, verdict: str, verdict_detail: str,
                   width: float, verdicts=None) -> list:
    """Title, identity rows (label, value) beside the verdict box (``verdicts``: see :func:`verdicts_box`)."""
    out = [p(title, "title")]
    if subtitle:
        out.append(p(subtitle, "subtitle"))
    box_w = 62 * mm
    gap = 5 * mm
    ident = kv_table(rows, [36 * mm, width - box_w - gap - 36 * mm])
    box = verdicts_box(verdicts, box_w) if verdicts else verdict_box(verdict, verdict_detail, box_w)
    outer = Table([[ident, "", box]], colWidths=[width - box_w - gap, gap, box_w], hAlign="LEFT")
    outer.setStyle(TableStyle([("FONTNAME", (0, 0), (-1, -1), FONT), ("VALIGN", (0, 0), (-1, -1), "TOP"),
                               ("LEFTPADDING", (0, 0), (-1, -1), 0), ("RIGHTPADDING", (0, 0), (-1, -1), 0),
                               ("TOPPADDING", (0, 0), (-1, -1), 0), ("BOTTOMPADDING", (0, 0), (-1, -1), 0)]))
    out += [outer, Spacer(1, 4 * mm)]
    return out


class _Heading(Paragraph):
    """A section heading that registers a PDF outline entry when drawn."""

    def __init__(self, text, style, key, level):
        super().__init__(escape(text), style)
        self.outline = (text, key, level)

    def draw(self):
        text, key, level = self.outline
        self.canv.bookmarkPage(key)
        self.canv.addOutlineEntry(text, key, level=level, closed=False)
        super().draw()


def section_heading(number: str, text: str, *, level: int = 0) -> Paragraph:
    """Numbered heading ``"<number>  <text>"``; level 0 uses ``h1``, level 1 ``h2``."""
    label = f"{number}  {text}" if number else text
    return _Heading(label, styles()["h1" if level == 0 else "h2"], f"sec-{number or text}", level)


def heading_before_table(number: str, text: str, *, level: int = 0, room: float = 35 * mm) -> list:
    """A numbered heading that starts a long table: a new page only when less than ``room`` is left,
    else the table starts under the heading and continues on the next page (its header row repeated).

    A heading kept with a whole long table would move the table to the next page and leave the rest
    of this one empty.
    """
    style = ParagraphStyle(f"{'h1' if level == 0 else 'h2'}_table", parent=styles()["h1" if level == 0 else "h2"],
                           keepWithNext=0)
    label = f"{number}  {text}" if number else text
    return [CondPageBreak(room), _Heading(label, style, f"sec-{number or text}", level)]


def cautions_block(cautions, flags=()) -> list:
    """The general cautions, then the evaluation's own flags, as bullet lists."""
    out = []
    for c in cautions:
        out.append(Paragraph(escape(c), styles()["caution"], bulletText="•"))
    if flags:
        out.append(p("Flags raised by this evaluation:", "h2"))
        for f in flags:
            out.append(Paragraph(escape(f), styles()["caution"], bulletText="!"))
    return out


_NEAR_DIST = re.compile(r"^(controlled|uncontrolled) compliance distance ([0-9.]+) m(?: \((from [^)]*)\))? lies "
                        r"inside the near-field boundary ([0-9.]+) m: (.*)$")


_NUMBER_IN = re.compile(r"\d")
_NEAR_PLACE = re.compile(r"^([0-9.]+) m from (.+?) is inside the near-field boundary ([0-9.]+) m: (.*)$")


_NUMBER = re.compile(r"(?<![A-Za-z\[_])[-+]?\d+(?:\.\d+)?(?:e[-+]?\d+)?")


def merge_numbers(texts) -> str:
    """Texts that differ only in their numbers as one text: each varying number becomes ``a / b (in order)``."""
    pieces = _NUMBER.split(texts[0])
    columns = list(zip(*(_NUMBER.findall(t) for t in texts)))
    out = pieces[0]
    for col, piece in zip(columns, pieces[1:]):
        values = list(dict.fromkeys(col))
        out += (values[0] if len(values) == 1 else " / ".join(col) + " (in order)") + piece
    return out


def _subjects(subjects) -> str:
    """``configuration a, configuration b`` -> ``configurations a, b`` (the kind said once)."""
    kinds = {s.split(" ", 1)[0] for s in subjects}
    if len(subjects) > 1 and kinds in ({"configuration"}, {"place"}):
        kind = kinds.pop()
        return f"{kind}s " + ", ".join(s.split(" ", 1)[1] for s in subjects)
    return ", ".join(subjects)


def grouped_flags(items) -> list[str]:
    """Each flag once, with the subjects (configurations, places) it applies to.

    ``items`` are (subject, text) pairs in order. Identical texts are merged into one line naming
    every subject; the per-environment "compliance distance inside the near-field boundary" flags
    of all configurations become one line that lists each configuration's distances.
    """
    near: dict[str, dict[str, list]] = {}
    inside: dict[str, dict[str, list[str]]] = {}
    texts: dict[str, list[str]] = {}
    listed: set[tuple[str, str]] = set()
    order: list[str] = []
    for subject, text in items:
        m = _NEAR_DIST.match(text)
        if m and not _NUMBER_IN.search(m.group(5)):    # the same conclusion for every configuration: one line
            env, d, basis, boundary, tail = m.groups()
            if tail not in near:
                near[tail] = {}
                order.append("\0near" + tail)
            who = f"{subject} ({basis})" if basis else subject
            near[tail].setdefault(who, [boundary]).append(f"{env} {d} m")
            continue
        m = _NEAR_PLACE.match(text)
        if m:
            d, antenna, boundary, how = m.groups()
            how = "solved with the moment-method solver; the near-field result governs" if how.startswith(
                "evaluated with the moment-method") else how
            if how not in inside:
                inside[how] = {}
                order.append("\0inside" + how)
            seen = inside[how].setdefault(subject, {})
            old_d, old_b = seen.get(antenna, (d, boundary))
            seen[antenna] = (old_d, max(old_b, boundary, key=float))   # one entry per antenna, widest boundary
            continue
        if text not in texts:
            texts[text] = []
            order.append(text)
        if (text, subject) not in listed:
            listed.add((text, subject))
            texts[text].append(subject)
    # texts that differ only in their numbers, one subject each: one line, the numbers listed in order
    masked: dict[str, list[str]] = {}
    for key in order:
        if not key.startswith("\0") and len(texts[key]) == 1:
            masked.setdefault(_NUMBER.sub("#", key), []).append(key)
    merged = {group[0]: group for group in masked.values() if len(group) > 1}
    skip = {k for group in merged.values() for k in group[1:]}
    out = []
    for key in order:
        if key in skip:
            continue
        if key in merged:
            group = merged[key]
            out.append(f"{_subjects([texts[k][0] for k in group])}: {merge_numbers(group)}")
        elif key.startswith("\0near"):
            tail = key[len("\0near"):]
            parts = "; ".join(f"{subj}: {', '.join(v[1:])} (boundary {v[0]} m)" for subj, v in near[tail].items())
            out.append(f"Compliance distance inside the near-field boundary ({tail}): {parts}.")
        elif key.startswith("\0inside"):
            how = key[len("\0inside"):]
            parts = "; ".join(f"{subj}: " + ", ".join(f"{a} at {d} m (boundary {b} m)" for a, (d, b) in v.items())
                              for subj, v in inside[how].items())
            out.append(f"Inside an antenna's near-field boundary ({how}): {parts}.")
        else:
            out.append(f"{_subjects(texts[key])}: {key}")
    return out


def signoff_block(width: float, *, evaluator: str = "", date: str = "") -> Table:
    """Sign-off lines: evaluated by / date / signature, then reviewed by / date / signature.

    The evaluator's name and the evaluation date are pre-printed small above the lines where
    known; signature lines stay blank for ink. The table does not split across pages; wrap it
    with its heading in one ``KeepTogether`` to keep both together.
    """
    line_h = 11 * mm
    cols = [width * 0.42, width * 0.22, width * 0.36]

    def row(label, prefill_name, prefill_date):
        return [[p(f"{label}", "kv_key"), p("Date", "kv_key"), p("Signature", "kv_key")],
                [p(prefill_name, "small"), p(prefill_date, "small"), ""]]

    data = row("Evaluated by (name)", evaluator, date) + row("Reviewed by (name)", "", "")
    t = Table(data, colWidths=cols, rowHeights=[None, line_h, None, line_h], hAlign="LEFT")
    t.setStyle(TableStyle([
        ("FONTNAME", (0, 0), (-1, -1), FONT),
        ("VALIGN", (0, 0), (-1, -1), "TOP"),
        ("LINEBELOW", (0, 1), (-1, 1), 0.8, colors.black),
        ("LINEBELOW", (0, 3), (-1, 3), 0.8, colors.black),
        ("TOPPADDING", (0, 2), (-1, 2), 8),
        ("LEFTPADDING", (0, 0), (-1, -1), 3),
        ("RIGHTPADDING", (0, 0), (-1, -1), 8),
    ]))
    return t


# ---------------------------------------------------------------- document
def _pdf_date(date_iso: str):
    d = dt.date.fromisoformat(date_iso)
    return lambda *_: f"D:{d.year:04d}{d.month:02d}{d.day:02d}000000+00'00'"


def _page_canvas(header_left: str, header_right: str, footer_left: str, date_iso: str):
    """A canvas class that stamps header/footer with "page n of m" once the page count is known."""
    formatter = _pdf_date(date_iso)

    class _Canvas(Canvas):
        def __init__(self, *args, **kwargs):
            kwargs["invariant"] = 1
            super().__init__(*args, **kwargs)
            self.setDateFormatter(formatter)
            self._pages = []

        def showPage(self):
            # the page's drawing operators as one text (reportlab joins them with newlines when it writes
            # the page): a long document's pages wait for the page count in a fraction of the memory
            self._code = ["\n".join(self._code)]
            self._pages.append(dict(self.__dict__))
            self._startPage()

        def save(self):
            total = len(self._pages)
            for state in self._pages:
                self.__dict__.update(state)
                self._furniture(total)
                Canvas.showPage(self)
            Canvas.save(self)

        def _furniture(self, total):
            w, h = self._pagesize
            self.saveState()
            self.setStrokeColor(GRID)
            self.setLineWidth(0.4)
            top = h - MARGIN + 3 * mm
            self.line(MARGIN, top - 1.5 * mm, w - MARGIN, top - 1.5 * mm)
            self.line(MARGIN, MARGIN - 2.5 * mm, w - MARGIN, MARGIN - 2.5 * mm)
            self.setFont(FONT, 7)
            self.setFillColor(colors.HexColor("#333333"))
            self.drawString(MARGIN, top, header_left)
            self.drawRightString(w - MARGIN, top, header_right)
            self.drawString(MARGIN, MARGIN - 6 * mm, footer_left)
            self.drawRightString(w - MARGIN, MARGIN - 6 * mm, f"page {self._pageNumber} of {total}")
            self.restoreState()

    return _Canvas


def build_pdf(story, *, title: str, author: str, subject: str, date_iso: str, header_left: str,
              header_right: str, footer_left: str, keywords=(), first_template: str = "portrait") -> bytes:
    """Lay out ``story`` into a reproducible PDF and return its bytes.

    Two builds of the same story are byte-identical: reportlab's invariant mode (fixed document
    id seed), the PDF creation/modification date set to ``date_iso`` (the evaluation date, not
    the clock), deterministic font-subset names. Page templates ``"portrait"`` and
    ``"landscape"`` (A4) are available to ``NextPageTemplate``.
    """
    register_fonts()
    buf = io.BytesIO()
    doc = BaseDocTemplate(buf, pagesize=PAGE, title=title, author=author, subject=subject,
                          creator="rfsafe", keywords=list(keywords), invariant=1,
                          leftMargin=MARGIN, rightMargin=MARGIN, topMargin=MARGIN + _HEADER_GAP / 2,
                          bottomMargin=MARGIN, lang="en", initialFontName=FONT, initialFontSize=9)
    templates = []
    for name, size in (("portrait", PAGE), ("landscape", PAGE_LANDSCAPE)):
        frame = Frame(MARGIN, MARGIN, size[0] - 2 * MARGIN, size[1] - 2 * MARGIN - _HEADER_GAP / 2,
                      id=f"body-{name}", leftPadding=0, rightPadding=0, topPadding=0, bottomPadding=0)
        templates.append(PageTemplate(id=name, frames=[frame], pagesize=size))
    if first_template == "landscape":
        templates.reverse()
    doc.addPageTemplates(templates)
    with quick_reportlab():
        doc.build(list(story), canvasmaker=_page_canvas(header_left, header_right, footer_left, date_iso))
    return buf.getvalue()


@contextmanager
def quick_reportlab():
    """reportlab settings for a finished document, restored on leaving: binary streams (its pure-Python
    ASCII85 encoding of images and fonts was a third of the build; a PDF needs no 7-bit-safe streams)
    and no type check of every attribute set on a drawing's shapes (a sixth of building the figures;
    the figure functions, called directly as the tests do, keep the checks)."""
    saved = rl_config.useA85, rl_config.shapeChecking
    rl_config.useA85, rl_config.shapeChecking = 0, 0
    try:
        yield
    finally:
        rl_config.useA85, rl_config.shapeChecking = saved
