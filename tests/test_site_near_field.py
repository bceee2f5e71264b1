"""Site reviews show the moment-method near-field map of every wire antenna on the site."""

from pathlib import Path

from pypdf import PdfReader
from typer.testing import CliRunner

from rfsafe.cli import app

SITE = Path(__file__).parent / "data" / "site_wire_vertical.toml"


def test_site_pdf_has_a_near_field_map_for_the_wire_station(tmp_path):
    out = tmp_path / "site.pdf"
    result = CliRunner().invoke(app, ["site", str(SITE), "-o", str(out)])
    assert result.exit_code in (0, 1), result.stderr
    reader = PdfReader(str(out))
    text = "\n".join(page.extract_text() for page in reader.pages)
    assert "Near-field maps of the wire antennas" in text
    assert "Station Vertical: coordinates in the station's own frame" in text
    images = sum(len(page.images) for page in reader.pages)
    assert images >= 2  # the site map and the near-field map
    # and the far-field map of the site says the wire station was mapped with its peak gain
    assert "mapped with its solver peak gain" in text.replace("\n", " ")


def test_site_without_wire_antennas_has_no_near_field_section(tmp_path):
    demo = Path(__file__).resolve().parent.parent / "reports_demo" / "event_field_day.toml"
    out = tmp_path / "event.pdf"
    result = CliRunner().invoke(app, ["site", str(demo), "-o", str(out)])
    assert result.exit_code in (0, 1)
    text = "\n".join(page.extract_text() for page in PdfReader(str(out)).pages)
    assert "Near-field maps" not in text
