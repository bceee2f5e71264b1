"""Tests of the site map renderer: reproducible bytes, no timestamps, scale-bar lengths."""

from __future__ import annotations

from pathlib import Path

import pytest

from rfsafe.report.site_map import nice_length, site_map_png

DEMO = Path(__file__).resolve().parent.parent / "reports_demo" / "event_field_day.toml"


@pytest.mark.parametrize("span, bar", [(111.5, 20.0), (9.0, 1.0), (1000.0, 200.0), (30.0, 5.0), (0.8, 0.1)])
def test_scale_bar_is_a_round_length_of_about_a_fifth(span, bar):
    # 1, 2 or 5 x 10^k not above span/5 (common practice for map scale bars)
    assert nice_length(span) == pytest.approx(bar)


def test_map_png_is_reproducible_and_unstamped():
    from rfsafe.site import assess_site
    from rfsafe.site import load_site

    res = assess_site(load_site(DEMO))
    a = site_map_png(res, width_in=6.0, height_in=3.5, dpi=80)
    b = site_map_png(res, width_in=6.0, height_in=3.5, dpi=80)
    assert a == b
    assert a.startswith(b"\x89PNG")
    assert b"Software" not in a and b"matplotlib version" not in a
