"""Vector plots: log/linear mapping, decade labels, clipping, and the figures' curves against the results."""

import math
import re

import numpy as np
import pytest
from reportlab.graphics.shapes import Drawing, Line, PolyLine

from rfsafe.report.figures import exposure_distance_figure, exposure_plot_ranges, line_profile_figure
from rfsafe.report.plots import PALETTE, Axes, decade_label, linear_ticks, log_range, new_drawing


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


def test_line_profile_draws_every_sample_and_places_ratings(monkeypatch):
    import rfsafe.report.plots as plots

    def curves():
        drawing, caption = line_profile_figure(_LineCfg(), width=250, height=190)
        polys = [s for s in drawing.contents if isinstance(s, PolyLine)]
        return drawing, caption, [list(zip(pl.points[::2], pl.points[1::2])) for pl in polys]

    drawing, caption, drawn = curves()
    with monkeypatch.context() as m:
        m.setattr(plots, "simplified", list)
        _, _, every = curves()
    assert [len(c) for c in every] == [41, 41]                          # |V| and |I|, one point per sample
    for curve, samples in zip(drawn, every):                            # drawn through every sample
        assert all(min(_segment_distance(q, a, b) for a, b in zip(curve[:-1], curve[1:])) <= 0.02 + 2e-3
                   for q in samples)                                    # + the 0.001 pt rounding of each end
    # the 500 V rating is within 10x of the maximum: drawn; the 7071 V one is named in the caption
    assert any(getattr(s, "text", "") == "connector.antenna 500 V peak" for s in drawing.contents)
    assert "line rated 7071 V peak (headroom 47.1×)" in caption


# ------------------------------------------------------------------ labels never collide (every demo figure)
import itertools  # noqa: E402
from pathlib import Path  # noqa: E402

from reportlab.graphics.shapes import Group, String  # noqa: E402
from reportlab.lib.units import mm  # noqa: E402
from reportlab.pdfbase.pdfmetrics import stringWidth  # noqa: E402

_DEMOS = Path(__file__).resolve().parent.parent / "reports_demo"


def _mul(a, b):
    """Product of two 2-D affine transforms (a, b, c, d, e, f) as reportlab writes them."""
    return (a[0] * b[0] + a[2] * b[1], a[1] * b[0] + a[3] * b[1], a[0] * b[2] + a[2] * b[3],
            a[1] * b[2] + a[3] * b[3], a[0] * b[4] + a[2] * b[5] + a[4], a[1] * b[4] + a[3] * b[5] + a[5])


def drawing_text_boxes(node, t=(1, 0, 0, 1, 0, 0)):
    """(text, box) of every String of a reportlab drawing, in drawing coordinates (rotations applied).

    The box spans the glyphs' descent (0.2 em below the baseline) to cap height (0.72 em above),
    DejaVu Sans metrics rounded (from the font's own figures).
    """
    out = []
    if isinstance(node, Group):
        t2 = _mul(t, tuple(node.transform)) if getattr(node, "transform", None) else t
        for c in node.contents:
            out += drawing_text_boxes(c, t2)
    elif isinstance(node, String):
        w = stringWidth(node.text, node.fontName, node.fontSize)
        x0 = node.x - {"end": w, "middle": w / 2}.get(node.textAnchor, 0.0)
        y0, y1 = node.y - 0.2 * node.fontSize, node.y + 0.72 * node.fontSize
        pts = [(t[0] * x + t[2] * y + t[4], t[1] * x + t[3] * y + t[5]) for x in (x0, x0 + w) for y in (y0, y1)]
        out.append((node.text, (min(p[0] for p in pts), min(p[1] for p in pts),
                                max(p[0] for p in pts), max(p[1] for p in pts))))
    elif hasattr(node, "contents"):
        for c in node.contents:
            out += drawing_text_boxes(c, t)
    return out


def colliding(boxes, tol=0.3):
    """Pairs of texts whose boxes overlap by more than ``tol`` in both directions."""
    return [(ta, tb) for (ta, a), (tb, b) in itertools.combinations(boxes, 2)
            if min(a[2], b[2]) - max(a[0], b[0]) > tol and min(a[3], b[3]) - max(a[1], b[1]) > tol]


@pytest.fixture(scope="module")
def demo_results():
    from rfsafe.remedies import with_answers
    from rfsafe.station import load_station

    return [with_answers(load_station(_DEMOS / name)) for name in ("demo_station.toml", "demo_wire_station.toml")]


def test_no_two_labels_overlap_on_any_vector_figure(demo_results):
    from rfsafe.report.figures import exposure_legend

    checked = 0
    for res in demo_results:
        numbers = {pl.label: f"P{i + 1}" for i, pl in enumerate(res.places)}
        heights = {a.id: a.height_m for a in res.antennas}
        for c in res.configurations:
            figures = [exposure_distance_figure(c, res.places, width=88 * mm, height=54 * mm, place_numbers=numbers,
                                                antenna_height_m=heights.get(c.antenna),
                                                head_heights_m=(0.5, 1.0, 1.5, 2.0))[0],
                       line_profile_figure(c, width=88 * mm, height=56 * mm)[0]]
            for d in figures:
                boxes = drawing_text_boxes(d)
                assert colliding(boxes) == [], (c.id, colliding(boxes))
                for text, (x0, y0, x1, y1) in boxes:          # nothing drawn off the figure
                    assert x0 >= -0.5 and y0 >= -0.5 and x1 <= d.width + 0.5 and y1 <= d.height + 0.5, text
                checked += 1
    assert colliding(drawing_text_boxes(exposure_legend(180 * mm))) == []
    assert checked >= 12


def _inside(boxes, w_px, h_px):
    return [t for t, (x0, y0, x1, y1) in boxes if x0 < -1 or y0 < -1 or x1 > w_px + 1 or y1 > h_px + 1]


def test_no_two_labels_overlap_on_any_map(demo_results):
    from rfsafe.report.near_field import near_field_map_drawing
    from rfsafe.report.plan_map import plan_map_drawing

    for res in demo_results:
        numbers = {pl.label: f"P{i + 1}" for i, pl in enumerate(res.places)}
        d = plan_map_drawing(res, place_numbers=numbers)
        boxes = drawing_text_boxes(d)
        assert boxes and colliding(boxes) == [], colliding(boxes)
        assert _inside(boxes, d.width, d.height) == []
        assert {a.id for a in res.antennas} <= {t for t, _ in boxes}
        for c in res.configurations:
            if c.near_field_map is None:
                continue
            d = near_field_map_drawing(c, res.places, place_numbers=numbers)
            boxes = drawing_text_boxes(d)
            assert boxes and colliding(boxes) == [], (c.id, colliding(boxes))
            assert _inside(boxes, d.width, d.height) == []


def test_no_two_labels_overlap_on_the_site_map():
    from rfsafe.report.site_map import site_map_png
    from rfsafe.site import assess_site, load_site

    res = assess_site(load_site(_DEMOS / "event_field_day.toml"))
    boxes = []
    site_map_png(res, width_in=7.09, height_in=4.5, dpi=100, boxes=boxes)
    labels = {t for t, _ in boxes}
    assert {t.transmitter for t in res.transmitters} <= labels and {a.label for a in res.areas} <= labels
    assert colliding(boxes) == [], colliding(boxes)
    assert _inside(boxes, 709, 450) == []


@pytest.fixture(scope="module")
def crowded(tmp_path_factory):
    """The demo station with 150 places on a grid around the house (many more than a map can number)."""
    from rfsafe.assess import assess
    from rfsafe.station import load_station

    text = (_DEMOS / "demo_station.toml").read_text(encoding="utf-8")
    rows = [f'{{label="G{k:03d}",x_m={-30.0 + 5.0 * (k % 13):.1f},y_m={-30.0 + 5.0 * (k // 13):.1f},height_m=1.5,'
            f'environment="{"controlled" if k % 7 == 0 else "uncontrolled"}"}}' for k in range(150)]
    head, *tables = text.split("\n[[")
    tables = ["\n[[" + t for t in tables if not t.startswith("places]]")]     # the demo's own places go
    path = tmp_path_factory.mktemp("crowded") / "crowded.toml"
    path.write_text(head + "\nplaces = [\n" + ",\n".join(rows) + "\n]\n" + "".join(tables), encoding="utf-8")
    res = assess(load_station(path))
    assert len(res.places) == 150
    return res


def test_a_crowded_plan_numbers_the_highest_ratios_only(crowded):
    """Above 60 places the plan numbers at most 40, highest total ratio first and spaced apart, and its
    labels still do not overlap."""
    from rfsafe.report.plan_map import MAX_NUMBERED_PLACES, numbered_places, plan_map_drawing

    numbers = {pl.label: f"P{i + 1}" for i, pl in enumerate(crowded.places)}
    chosen = numbered_places(crowded.places)           # no spacing asked: the 40 highest
    assert len(chosen) == MAX_NUMBERED_PLACES == 40
    lowest_chosen = min(pl.total_ratio for pl in chosen)
    assert all(pl.total_ratio <= lowest_chosen for pl in crowded.places if pl not in chosen)
    spaced = numbered_places(crowded.places, min_gap_m=8.0)
    top = max(crowded.places, key=lambda pl: pl.total_ratio)
    assert top in spaced and 1 < len(spaced) <= 40
    assert all(math.hypot(a.x_m - b.x_m, a.y_m - b.y_m) >= 8.0 for a in spaced for b in spaced if a is not b)
    d = plan_map_drawing(crowded, place_numbers=numbers)
    boxes = drawing_text_boxes(d)
    shown = {t for t, _ in boxes if re.fullmatch(r"P\d+", t)}
    assert numbers[top.label] in shown and 1 < len(shown) <= 40
    assert colliding(boxes) == [], colliding(boxes)
    assert _inside(boxes, d.width, d.height) == []


def test_numbered_places_ranks_an_unknown_ratio_first():
    from types import SimpleNamespace

    from rfsafe.report.plan_map import numbered_places

    places = [SimpleNamespace(total_ratio=0.5, x_m=k, y_m=0.0) for k in range(100)]
    places.append(SimpleNamespace(total_ratio=math.nan, x_m=0.0, y_m=0.0))
    chosen = numbered_places(places)
    assert places[-1] in chosen and chosen[:39] == places[:39]


def test_a_crowded_exposure_figure_names_the_highest_ratios(crowded):
    """Every place keeps its marker; at most 25 are named, highest ratio first where a name finds room, without
    overlaps, as the caption says."""
    numbers = {pl.label: f"P{i + 1}" for i, pl in enumerate(crowded.places)}
    c = crowded.configurations[0]
    d, caption = exposure_distance_figure(c, crowded.places, width=88 * mm, height=54 * mm, place_numbers=numbers)
    assert "Named: up to 25 of the 150 places, highest ratio first, where a name finds free room." in caption
    boxes = drawing_text_boxes(d)
    named = [t for t, _ in boxes if re.fullmatch(r"P\d+", t)]
    assert 1 < len(named) <= 25
    ratio = {numbers[pl.label]: x.exposure_ratio for pl in crowded.places for x in pl.exposures if x.configuration == c.id}
    assert max(ratio, key=ratio.get) in named
    assert colliding(boxes) == [], colliding(boxes)
    markers = sum(1 for node in d.getContents() for _ in [0] if type(node).__name__ in ("Circle", "Rect"))
    assert markers >= 150


def _segment_distance(p, a, b):
    (px, py), (ax, ay), (bx, by) = p, a, b
    dx, dy = bx - ax, by - ay
    t = 0.0 if dx == dy == 0 else min(1.0, max(0.0, ((px - ax) * dx + (py - ay) * dy) / (dx * dx + dy * dy)))
    return math.hypot(px - ax - t * dx, py - ay - t * dy)


def test_simplified_curves_stay_within_their_tolerance_of_every_sample(demo_results):
    """Every sample a curve leaves out lies within SIMPLIFY_PT (0.02 pt, 7 micrometres) of the line drawn
    between the samples kept around it (a geometric check, independent of how the samples were chosen)."""
    from rfsafe.report.plots import SIMPLIFY_PT, simplified

    res = demo_results[1]
    c = res.configurations[0]
    xs = [float(v) for v in c.line.profile_position_m]
    d = new_drawing(250, 100)
    ax = Axes(d, 20, 20, 220, 70, xlim=(0, xs[-1]), ylim=(0, 1.25 * max(c.line.profile_voltage_v_peak)))
    page = [(ax.px(x), ax.py(float(v))) for x, v in zip(xs, c.line.profile_voltage_v_peak)]
    for pts in (page, [(k * 0.5, math.sin(k / 9.0) * 40) for k in range(300)], [(0, 0), (5, 5), (1, 1), (9, 0)]):
        kept = simplified(pts)
        assert kept[0] == pts[0] and kept[-1] == pts[-1] and len(kept) <= len(pts)
        k = 0
        for p in pts:                          # kept points are in order: find the kept segment around p
            if p == kept[k]:
                k = min(k + 1, len(kept) - 1)
                continue
            assert _segment_distance(p, kept[k - 1], kept[k]) <= SIMPLIFY_PT + 1e-12
    assert len(simplified(page)) < len(page) / 3      # the standing wave: far fewer points to draw
