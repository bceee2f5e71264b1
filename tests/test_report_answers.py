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


def test_site_pdf_lists_what_clears_each_violation():
    import dataclasses
    from pathlib import Path

    from rfsafe.remedies import site_remedies
    from rfsafe.report.site_pdf import build_site_pdf
    from rfsafe.site import assess_site, load_site

    res = assess_site(load_site(Path(__file__).parent.parent / "reports_demo" / "event_field_day.toml"))
    res = dataclasses.replace(res, remedies=site_remedies(res))
    text = " ".join(_text(build_site_pdf(res)).split())
    assert "What would clear each violation" in text
    assert any(r.transmitter in text for r in res.remedies)
