"""Report building blocks: number formats, table widths, verdict box, fonts, invariant documents."""

import io
import math

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
