"""Report building blocks: number formats, table widths, verdict box, fonts, invariant documents."""

import io
import math
import shutil
import subprocess

import pypdf
import pytest
from reportlab.pdfbase.pdfmetrics import stringWidth

from rfsafe.report import common as c


# ---------------------------------------------------------------- number formats (rfsafe's own spec)
@pytest.mark.parametrize("value, text", [
    (0.123456, "0.123"),       # 3 significant digits
    (1.0, "1"),
    (12.345, "12.3"),
    (123.45, "123"),
    (1234.5, "1234"),          # no exponent below 1e6: whole number
    (8.25e-4, "8.25e-04"),     # exponent form below 1e-3
    (2.5e6, "2.50e+06"),
    (0.0, "0"),
    (None, "–"),
])
def test_num_three_significant_digits(value, text):
    assert c.num(value) == text


def test_num_never_turns_nonfinite_into_a_number():
    assert c.num(math.inf) == "inf"
    assert c.num(math.nan) == "nan"
    assert c.margin_text(math.inf) == "inf"


def test_margin_and_distance_formats():
    assert c.margin_text(3.04) == "+3.0"
    assert c.margin_text(-0.26) == "-0.3"
    assert c.dist_text(2.345, 7.69) == "2.35 m (7.7 ft)"


# ---------------------------------------------------------------- tables
def test_fit_widths_keeps_words_whole_and_total_width():
    headers = ["configuration", "x"]
    rows = [["40m-cw-amp", "1"]]
    widths = c.fit_widths([10.0, 200.0], headers, rows)
    assert sum(widths) == pytest.approx(210.0)        # the total is unchanged (to rounding)
    need = stringWidth("configuration", c.FONT_BOLD, c.styles()["cell"].fontSize)
    assert widths[0] >= need                          # the longest header word fits on one line


def test_fit_widths_never_exceed_the_room_given():
    """Words too long for the room together: the widths still add up to the room (the frame), never more."""
    headers = ["configuration", "x"]
    rows = [["W" * 40, "supercalifragilistic-" * 4]]        # longest words of about 440 and 280 pt
    widths = c.fit_widths([10.0, 200.0], headers, rows)
    assert sum(widths) == pytest.approx(210.0) and min(widths) > 0
    # every column keeps the same share of what its longest word needs
    need = [stringWidth(w, c.FONT, c.styles()["cell"].fontSize) + 5.5 for w in (rows[0][0], rows[0][1])]
    assert widths[0] / widths[1] == pytest.approx(need[0] / need[1])


def _line_widths(para):
    """Widths [pt] of the lines a wrapped paragraph sets (reportlab's own line breaking)."""
    from reportlab.pdfbase.pdfmetrics import stringWidth as sw

    out = []
    for line in para.blPara.lines:
        words = line[1] if isinstance(line, tuple) else line.words
        text = " ".join(words) if isinstance(line, tuple) else "".join(w.text for w in words)
        out.append(sw(text, para.style.fontName, para.style.fontSize))
    return out


@pytest.mark.parametrize("n_rows", [3, 250])       # a table of paragraphs, and the long-table layout
def test_a_table_of_long_words_stays_inside_the_frame(n_rows):
    """A table handed the frame width is never wider, and its long words wrap inside their cells (common
    practice: nothing is printed off the page)."""
    from reportlab.platypus import Paragraph

    frame = c.frame_width()
    headers = ["configuration", "place", "note"]
    rows = [[f"config-{'x' * 60}-{i}", "a place with a long name " + "y" * 70, "a few short words"]
            for i in range(n_rows)]     # the third column's slack is less than the first two need
    t = c.data_table(headers, rows, [60.0, 200.0, frame - 260.0], align="lll")
    widths = c.fit_widths([60.0, 200.0, frame - 260.0], headers, rows)
    assert sum(widths) == pytest.approx(frame)
    if n_rows > c.LONG_TABLE_ROWS:
        t = t._window(10)
    width, _ = t.wrap(frame, 10_000)
    assert width <= frame + 1e-6
    for row in t._cellvalues[1:]:
        for j, cell in enumerate(row):
            if isinstance(cell, Paragraph):
                assert max(_line_widths(cell)) <= t._colWidths[j] - 5.0 + 0.01
    data = c.build_pdf([t], title="T", author="", subject="", date_iso="2026-11-30", header_left="",
                       header_right="", footer_left="")
    assert pypdf.PdfReader(io.BytesIO(data)).pages


@pytest.mark.skipif(shutil.which("pdftoppm") is None, reason="pdftoppm (poppler-utils) not installed")
def test_plain_cells_print_as_the_paragraphs_they_replace(tmp_path):
    """A short table sets the cells that fit as plain strings, broken into lines where their paragraphs break
    them: the page looks exactly as with a paragraph in every cell (the layout it replaces), to the pixel at
    100 dpi."""
    from PIL import Image, ImageChops
    from reportlab.platypus import Table

    rows = [["40m-ssb", "Garden bench under the dipole", "0.0389", c.Styled("COMPLIES", color=c.COMPLIES_COLOR,
             bold=True), "the household's garden: family and visitors, not told about RF exposure"],
            ["20m-cw-amp", "Path", "227", c.Styled(["EXCEEDS", "twice"], color=c.EXCEEDS_COLOR), "line one\nline two"],
            ["", "–", "1.2e-05 and more words to wrap", "within rating", ""],
            # paragraphs collapse runs of spaces, split long words and keep a no-break space: kept paragraphs
            ["a  double space", " lead", "verylongwordwithoutanyspaceatall", "no\u00a0break here", "soft\u00adhyphen"],
            ["The same 40 m dipole and coax route with a ferrite choke at the feed point", "&amp; <b>", "x " * 30,
             "20 m quarter-wave wire vertical with its base on a ground system beside the path", "≤ 0.01 µT"]] * 2
    tables = [(["configuration", "place", "ratio", "verdict", "note"], "llrll", rows,
               [25 * c.mm, 40 * c.mm, 15 * c.mm, 25 * c.mm, c.frame_width() - 105 * c.mm]),
              # 81.8 pt of room: "dipole and coax route" is 0.08 pt wider and still set on one line (a
              # paragraph squeezes up to 5 % of a space per gap between its words): this cell stays a
              # paragraph; with 6 pt more room it is plain text with the same breaks
              (["description", "x"], "lr", [["The same 40 m dipole and coax route with a ferrite choke at the feed "
                                             "point", "1"]] * 3, [86.8, c.frame_width() - 86.8]),
              (["description", "x"], "lr", [["The same 40 m dipole and coax route with a ferrite choke at the feed "
                                             "point", "1"]] * 3, [92.8, c.frame_width() - 92.8])]
    pages = {"new": [], "old": []}
    plain = []
    for headers, align, body_rows, widths in tables:
        new = c.data_table(headers, body_rows, widths, align=align)
        plain += [v for row in new._cellvalues for v in row if isinstance(v, str)]
        head = [c._cell(h, "head_right" if a == "r" else "head") for h, a in zip(headers, align)]
        body = [[c._cell(v, "cell_right" if a == "r" else "cell") for v, a in zip(row, align)] for row in body_rows]
        old = Table([head] + body, colWidths=c.fit_widths(widths, headers, body_rows), repeatRows=1, hAlign="LEFT")
        old.setStyle(c.table_style(n_rows=len(body_rows) + 1))
        pages["new"].append(new)
        pages["old"].append(old)
    assert "The same 40 m dipole\nand coax route with a\nferrite choke at the\nfeed point" in plain
    assert not any(v.startswith("The same 40 m\ndipole and coax route") for v in plain)
    images = []
    for name, story in pages.items():
        pdf = tmp_path / f"{name}.pdf"
        pdf.write_bytes(c.build_pdf(story, title="T", author="", subject="", date_iso="2026-11-30",
                                    header_left="", header_right="", footer_left=""))
        subprocess.run(["pdftoppm", "-r", "100", "-png", "-singlefile", str(pdf), str(tmp_path / name)], check=True)
        images.append(Image.open(tmp_path / f"{name}.png").convert("L"))
    assert ImageChops.difference(*images).getbbox() is None


def test_data_table_rejects_a_short_row():
    with pytest.raises(ValueError, match="row 0 has 1 cells, expected 2"):
        c.data_table(["a", "b"], [["only one"]], [50, 50])


def test_verdict_word_fits_its_box():
    for verdict in ("COMPLIES", "EXCEEDS"):
        box = c.verdict_box(verdict, "detail", 150)
        para = box._cellvalues[0][0]
        size = para.style.fontSize
        assert stringWidth(("✓ " if verdict == "COMPLIES" else "✗ ") + verdict, c.FONT_BOLD, size) <= 150 - 14
        assert size >= 12


# ---------------------------------------------------------------- document
def _doc(date="2026-11-30", text="Ω λ ≤ µ"):
    story = c.identity_block(title="T", subtitle=None, rows=[("a", "b")], verdict="COMPLIES", verdict_detail="d",
                             width=c.frame_width())
    story += [c.section_heading("2", "Next"), c.p(text), c.signoff_block(c.frame_width(), evaluator="E")]
    story += c.cautions_block(["caution one"], ["flag one"])
    return c.build_pdf(story, title="t", author="a", subject="s", date_iso=date, header_left="left",
                       header_right="right", footer_left="foot")


def test_build_is_byte_identical_and_dated_from_the_evaluation():
    a, b = _doc(), _doc()
    assert a == b
    meta = pypdf.PdfReader(io.BytesIO(a)).metadata
    assert meta["/CreationDate"] == "D:20261130000000+00'00'"
    assert meta["/ModDate"] == "D:20261130000000+00'00'"
    assert _doc(date="2027-01-02") != a


def test_dejavu_is_embedded_and_special_signs_survive():
    data = _doc()
    reader = pypdf.PdfReader(io.BytesIO(data))
    page = reader.pages[0]
    fonts = page["/Resources"]["/Font"]
    names = []
    for ref in fonts.values():
        font = ref.get_object()
        names.append(str(font["/BaseFont"]))
        desc = font["/FontDescriptor"].get_object()
        assert "/FontFile2" in desc, "TrueType font program must be embedded"
    assert any("DejaVuSans" in n for n in names)
    assert any("DejaVuSans-Bold" in n for n in names)
    text = page.extract_text()
    for sign in "Ωλ≤µ":
        assert sign in text
    assert "page 1 of 1" in text
    assert reader.outline and reader.outline[0].title == "2  Next"


def test_signoff_block_has_both_signers():
    data = _doc()
    text = pypdf.PdfReader(io.BytesIO(data)).pages[0].extract_text()
    assert "Evaluated by (name)" in text and "Reviewed by (name)" in text
    assert text.count("Signature") == 2


def _long_pdf(n_rows: int) -> tuple[bytes, list]:
    rows = [[f"R{i:04d}", "a long text " * (8 if i % 97 == 0 else 1), f"{i * 0.5:.1f}",
             c.Styled(["COMPLIES", "second line"] if i % 2 else "EXCEEDS", color=c.EXCEEDS_COLOR, bold=True)]
            for i in range(n_rows)]
    extra = [("LINEABOVE", (0, r), (-1, r), 0.9, c.GRID) for r in range(1, n_rows + 1, 10)]
    t = c.data_table(["key", "text", "value", "verdict"], rows, [20 * c.mm, 30 * c.mm, 20 * c.mm, 30 * c.mm],
                     align="llrl", extra_style=extra)
    pdf = c.build_pdf([t], title="t", author="a", subject="s", date_iso="2026-11-30", header_left="left",
                      header_right="right", footer_left="foot")
    return pdf, rows


def test_long_table_pages_every_row_once_under_its_header():
    """A table above LONG_TABLE_ROWS is laid out page by page: every row once, in order, and the header
    row on every page (common practice for long tables)."""
    n = 3 * c.LONG_TABLE_ROWS
    pdf, _ = _long_pdf(n)
    reader = pypdf.PdfReader(io.BytesIO(pdf))
    assert len(reader.pages) > 5
    keys = []
    for page in reader.pages:
        text = page.extract_text()
        assert text.count("key") == 1 and "verdict" in text, "header repeated on every page"
        keys += [w for w in text.split() if len(w) == 5 and w.startswith("R") and w[1:].isdigit()]
    assert keys == [f"R{i:04d}" for i in range(n)]
    assert _long_pdf(n)[0] == pdf           # the same input gives the same bytes


def test_long_table_uses_plain_strings_where_text_fits():
    """Plain strings for cells that fit (wrapped at spaces), a paragraph only for a word wider than its column."""
    rows = [[f"r{i}", "short", "two words " * 6, c.Styled("W" * 60 if i == 3 else "OK", bold=True)]
            for i in range(c.LONG_TABLE_ROWS + 1)]
    t = c.data_table(["a", "b", "c", "status"], rows, [20 * c.mm, 20 * c.mm, 30 * c.mm, 20 * c.mm])
    head, body, widths, base, row_cmds, zebra = t._args
    assert all(isinstance(v, str) for v in body[0])
    assert "\n" in body[0][2]                      # wrapped at spaces into lines of the column
    for line in body[0][2].split("\n"):
        assert stringWidth(line, c.FONT, 7.5) <= widths[2] - 5
    assert isinstance(body[3][3], c.Paragraph)     # one word wider than the column: a paragraph wraps it
    assert ("FONTNAME", 3, 3, c.FONT_BOLD) in row_cmds[0]


def test_styled_cell_in_a_short_table_is_the_same_paragraph_markup():
    para = c.Styled(["a +", "b"], color=c.EXCEEDS_COLOR, bold=True).paragraph()
    assert para.text == f'<font name="{c.FONT_BOLD}" color="#b3122b">a +<br/>b</font>'
    assert c.Styled("x < y").paragraph().text == "x &lt; y"


def test_quick_reportlab_restores_the_settings_it_changes():
    from reportlab import rl_config

    before = (rl_config.useA85, rl_config.shapeChecking)
    with pytest.raises(RuntimeError):
        with c.quick_reportlab():
            assert (rl_config.useA85, rl_config.shapeChecking) == (0, 0)
            raise RuntimeError("a failed build")
    assert (rl_config.useA85, rl_config.shapeChecking) == before
    data = c.build_pdf([c.p("x")], title="T", author="", subject="", date_iso="2026-11-30", header_left="",
                       header_right="", footer_left="")
    assert b"ASCII85Decode" not in data and (rl_config.useA85, rl_config.shapeChecking) == before
