"""Vector plots: log/linear mapping, decade labels, clipping, and the figures' curves against the results."""

import math

import numpy as np
import pytest
from reportlab.graphics.shapes import Drawing, Line, PolyLine

from rfsafe.report.figures import exposure_distance_figure, exposure_plot_ranges, line_profile_figure
from rfsafe.report.plots import PALETTE, Axes, decade_label, linear_ticks, log_range


def test_decade_labels():
    assert decade_label(0) == "1"
    assert decade_label(-2) == "0.01"
    assert decade_label(3) == "1000"
    assert decade_label(-5) == "10⁻⁵"
    assert decade_label(6) == "10⁶"


def test_log_range_is_decade_aligned():
    assert log_range([0.35, 22.6]) == (0.1, 100.0)
    lo, hi = log_range([1.0, 10.0])          # values on a decade get room: never on the frame
    assert lo < 1.0 and hi > 10.0
    assert math.log10(lo) == round(math.log10(lo)) and math.log10(hi) == round(math.log10(hi))
    with pytest.raises(ValueError):
        log_range([0.0, -1.0])


def test_linear_ticks_are_round_and_cover_the_range():
    assert linear_ticks(0, 550) == [0, 100, 200, 300, 400, 500]
    assert linear_ticks(0, 2.8) == [0, 0.5, 1.0, 1.5, 2.0, 2.5]


def test_log_axis_spaces_decades_evenly():
    ax = Axes(Drawing(300, 200), 10, 10, 270, 180, xlim=(0.1, 100), ylim=(1e-4, 10), xlog=True, ylog=True)
    xs = [ax.px(10.0 ** k) for k in range(-1, 3)]
    assert np.allclose(np.diff(xs), 90.0)           # 3 decades on 270 pt
    assert ax.px(0.1) == pytest.approx(10) and ax.px(100) == pytest.approx(280)
    assert ax.py(1e-4) == pytest.approx(10) and ax.py(10) == pytest.approx(190)


def test_segment_is_clipped_to_the_plot_area():
    d = Drawing(300, 200)
    ax = Axes(d, 10, 10, 270, 180, xlim=(0.1, 100), ylim=(0.01, 10), xlog=True, ylog=True)
    n = len(d.contents)
    ax.segment(0.1, 1000.0, 100, 1e-5, color=PALETTE["limit"])
    (line,) = d.contents[n:]
    for X, Y in ((line.x1, line.y1), (line.x2, line.y2)):
        assert 10 - 1e-9 <= X <= 280 + 1e-9 and 10 - 1e-9 <= Y <= 190 + 1e-9
    ax.segment(0.1, 1e-6, 100, 1e-7, color=PALETTE["limit"])   # entirely below: nothing drawn
    assert len(d.contents) == n + 1


def _log_from_page(ax, X, Y):
    u = (X - ax.x0) / ax.w
    v = (Y - ax.y0) / ax.h
    lx = math.log10(ax.xlim[0]) + u * (math.log10(ax.xlim[1]) - math.log10(ax.xlim[0]))
    ly = math.log10(ax.ylim[0]) + v * (math.log10(ax.ylim[1]) - math.log10(ax.ylim[0]))
    return lx, ly


class _CD:
    def __init__(self, env, d):
        self.environment, self.dist_m = env, d


class _Cfg:
    id = "c1"
    freq_mhz = 14.2
    mode = "ssb"
    near_field_distance_m = 3.36
    aperture_far_field_m = None
    compliance_distances = (_CD("controlled", 2.0), _CD("uncontrolled", 4.5))


def test_exposure_curve_is_the_inverse_square_law_through_the_compliance_distance():
    # Far-field prediction S = EIRP F / (4 pi R^2) (OET Bulletin 65, section 2): every compared quantity
    # falls as 1/R^2, so the curve is log10(ratio) = 2 log10(d / R): slope -2 and ratio 1 at R = d.
    drawing, caption = exposure_distance_figure(_Cfg(), (), width=250, height=170, place_numbers={})
    assert "controlled 2.00 m" in caption and "uncontrolled 4.50 m" in caption
    lines = [s for s in drawing.contents if isinstance(s, Line) and s.strokeWidth == 1.1
             and s.strokeColor in (PALETTE["controlled"], PALETTE["uncontrolled"])]
    assert len(lines) == 2
    # rebuild the axes the figure used (same ranges and layout constants) to read the lines back as data
    xlim, ylim = exposure_plot_ranges(_Cfg(), ())
    ax = Axes(Drawing(250, 170), 40, 24, 250 - 46, 170 - 38, xlim=xlim, ylim=ylim, xlog=True, ylog=True)
    for line in lines:
        d = 2.0 if line.strokeColor == PALETTE["controlled"] else 4.5
        (x1, y1), (x2, y2) = _log_from_page(ax, line.x1, line.y1), _log_from_page(ax, line.x2, line.y2)
        assert (y2 - y1) / (x2 - x1) == pytest.approx(-2.0, rel=1e-9)
        assert y1 + (-2.0) * (math.log10(d) - x1) == pytest.approx(0.0, abs=1e-9)   # ratio 1 at R = d


class _Stress:
    def __init__(self, part, rating, headroom):
        self.part, self.quantity, self.rating, self.headroom = part, "voltage_v_peak", rating, headroom


class _Line:
    cable_id = "rg-213"
    length_m = 20.0
    swr_at_antenna = 2.0
    profile_position_m = np.linspace(0, 20, 41)
    profile_voltage_v_peak = 100 + 50 * np.abs(np.cos(np.linspace(0, 3, 41)))
    profile_current_a_peak = 2 + np.abs(np.sin(np.linspace(0, 3, 41)))
    line_voltage_v_peak = 150.0
    line_voltage_max_position_m = 0.0
    line_current_a_peak = 3.0
    line_current_max_position_m = 10.0
    part_stresses = (_Stress("connector.antenna", 500.0, 3.3), _Stress("line", 7071.0, 47.1))


class _LineCfg:
    id = "c1"
    line = _Line()


def test_line_profile_draws_every_sample_and_places_ratings():
    drawing, caption = line_profile_figure(_LineCfg(), width=250, height=190)
    polys = [s for s in drawing.contents if isinstance(s, PolyLine)]
    assert [len(pl.points) // 2 for pl in polys] == [41, 41]            # |V| and |I|, every sample
    # the 500 V rating is within 10x of the maximum: drawn; the 7071 V one is named in the caption
    assert any(getattr(s, "text", "") == "connector.antenna 500 V peak" for s in drawing.contents)
    assert "line rated 7071 V peak (headroom 47.1×)" in caption
