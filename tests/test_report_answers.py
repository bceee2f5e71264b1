"""Worksheet section 4.3-4.4: keep-out distances and remedies appear when the evaluation carries them."""

import io

from pypdf import PdfReader

from rfsafe.remedies import with_answers
from rfsafe.report.worksheet import build_worksheet_pdf
from rfsafe.station import load_station
from tests.test_remedies import FAILING


def _text(pdf: bytes) -> str:
    return " ".join(page.extract_text() for page in PdfReader(io.BytesIO(pdf)).pages)


def test_worksheet_shows_keep_out_and_remedies(tmp_path):
    path = tmp_path / "s.toml"
    path.write_text(FAILING)
    res = with_answers(load_station(path))
    text = " ".join(_text(build_worksheet_pdf(res)).split())
    assert "Keep-out on the ground" in text
    assert "What would make it comply" in text
    first = res.place_remedies[0].remedies[0].text
    assert " ".join(first.split()[:4]) in text


def test_worksheet_without_answers_has_no_such_section(tmp_path):
    path = tmp_path / "s.toml"
    path.write_text(FAILING)
    from rfsafe.assess import assess

    text = _text(build_worksheet_pdf(assess(load_station(path))))
    assert "What would make it comply" not in text
