"""Site reviews show the moment-method near-field map of every wire antenna on the site."""

import math
from pathlib import Path

import pytest
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


def test_site_grid_flags_points_near_any_part_of_a_wire_as_near_field(tmp_path):
    # A wire antenna's near-field boundary holds from any part of its wires (never from a reference point):
    # the site grid measures from the nearest point of the declared wires. A 20.1 m dipole declared at its
    # centre, 7.1 MHz: boundary max(lambda/2pi, 2 D^2/lambda) = 2 x 20.1^2 / 42.2 = 19.1 m (Balanis,
    # Antenna Theory, Sec. 2.2.4). A point 15 m beyond one end (25 m from the centre) must be flagged.
    from rfsafe.site import load_site, ratio_grid, site_emitters

    text = SITE.read_text().replace(
        "points_m = [[0.0, 0.0, 0.0], [0.0, 0.0, 5.0]]", "points_m = [[-10.05, 0.0, 8.0], [10.05, 0.0, 8.0]]"
    ).replace("position = 0.0", "position = 0.5").replace('ground = "perfect"', 'ground = "free-space"').replace(
        "height_m = 2.5", "height_m = 8.0").replace("freq_mhz = 14.1", "freq_mhz = 7.1")
    path = tmp_path / "dipole_site.toml"
    path.write_text(text, encoding="utf-8")
    ems, _, _ = site_emitters(load_site(path))
    (em,) = ems
    boundary = 2 * 20.1 ** 2 / (299.792458 / 7.1)
    assert em.near_field_m == pytest.approx(boundary, rel=1e-3)
    beyond_end = ratio_grid(ems, [20.0 + 10.05 + 15.0, 20.0 + 10.05 + 20.0], [15.0, 15.0], [8.0])
    assert beyond_end.near_field.tolist() == [True, False]   # 15 m and 20 m beyond the end
    # beyond the boundary the far-field estimate is taken from the wire's end, 20 m away (not 30.05 m from
    # the centre): the solver's peak gain with F (OET Bulletin 65 sec. 2, S = P G F / (4 pi R^2))
    from rfsafe.site.constants import ENVIRONMENTS

    e = ENVIRONMENTS.index("uncontrolled")
    expected = em.ratio_coefficient_m2[e] * 10 ** (em.pattern.peak_gain_dbi / 10) / (4 * math.pi * 20.0 ** 2)
    assert beyond_end.ratio[e, 1] == pytest.approx(expected, rel=1e-5)
