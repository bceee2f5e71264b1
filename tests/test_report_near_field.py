"""Near-field maps and the near/far comparison in the station worksheet, checked against ``evaluate --json``."""

import io
import json
import math
import shutil
from pathlib import Path

import pypdf
import pytest
from typer.testing import CliRunner

from rfsafe.assess import assess
from rfsafe.cli import app
from rfsafe.report.near_field import CONTOUR_STYLE, MAX_DECADES, _colour_range, near_field_map_drawing
from rfsafe.report.worksheet import build_worksheet_pdf
from rfsafe.station import load_station
from test_report_plots import drawing_text_boxes

DEMOS = Path(__file__).resolve().parent.parent / "reports_demo"
WIRE_DEMO = DEMOS / "demo_wire_station.toml"
PLAIN_DEMO = DEMOS / "demo_station.toml"
MOMENT_METHOD = "near-field (moment method)"


def text_of(data: bytes) -> str:
    """All page text with whitespace runs collapsed (table cells wrap onto several lines)."""
    reader = pypdf.PdfReader(io.BytesIO(data))
    return " ".join(" ".join(page.extract_text() for page in reader.pages).split())


def page_texts(data: bytes) -> list[str]:
    return [" ".join(page.extract_text().split()) for page in pypdf.PdfReader(io.BytesIO(data)).pages]


def images_per_page(data: bytes) -> list[list]:
    """Image XObjects drawn on each page: (width, height) in pixels."""
    out = []
    for page in pypdf.PdfReader(io.BytesIO(data)).pages:
        xobjects = page["/Resources"].get("/XObject") or {}
        found = []
        for ref in xobjects.values():
            obj = ref.get_object()
            if obj.get("/Subtype") == "/Image":
                found.append((int(obj["/Width"]), int(obj["/Height"])))
        out.append(found)
    return out


def sig3(x: float) -> str:
    """Printed precision, written independently: 3 significant digits, exponent form below 1e-3."""
    return f"{x:.2e}" if abs(x) < 1e-3 else f"{x:.3g}"


@pytest.fixture(scope="module")
def wire(tmp_path_factory):
    """``evaluate --json`` and ``rfsafe report`` of a copy of the wire demo (exit 1: it exceeds at the path)."""
    folder = tmp_path_factory.mktemp("wire")
    station = folder / WIRE_DEMO.name
    shutil.copy(WIRE_DEMO, station)
    runner = CliRunner()
    ev = runner.invoke(app, ["evaluate", str(station), "--json"])
    assert ev.exit_code == 1, ev.output
    rep = runner.invoke(app, ["report", str(station)])
    assert rep.exit_code == 1, rep.output
    data = station.with_suffix(".pdf").read_bytes()
    return json.loads(ev.stdout), data, text_of(data)


def test_comparison_rows_equal_evaluate_json(wire):
    js, _, text = wire
    numbers = {pl["label"]: f"P{i + 1}" for i, pl in enumerate(js["places"])}
    # the boundary a place is judged against: lambda/2pi, or 2D^2/lambda where the antenna is larger
    boundary = {c["id"]: max(c["near_field_distance_m"], c["aperture_far_field_m"] or 0.0) for c in js["configurations"]}
    rows = 0
    for pl in js["places"]:
        for x in pl["exposures"]:
            if x["method"] != MOMENT_METHOD:
                continue
            rows += 1
            far, near = x["far_field_ratio"], x["near_field_ratio"]
            # exposure ratios are squared-field (power-like) quantities: 10 log10 (common practice)
            diff = f"{10 * math.log10(near / far):+.1f}"
            # the evaluation's own flag states the same difference in dB
            assert any(f"{diff} dB" in f for f in x["flags"]), x["flags"]
            governs = "near-field result" if x["exposure_ratio"] == near else "far-field estimate"
            row = (f"{numbers[pl['label']]} {pl['label']} {x['configuration']} {x['dist_m']:.2f} "
                   f"{boundary[x['configuration']]:.2f} {sig3(far)} {sig3(near)} {diff} {governs} {MOMENT_METHOD}")
            assert row in text, row
            assert x["dist_m"] < boundary[x["configuration"]]          # only places inside lambda/2pi
    assert rows >= 2        # at least the bench under the dipole and the path beside the vertical


def test_near_field_result_governs_inside_the_boundary(wire):
    js, _, _ = wire
    for pl in js["places"]:
        for x in pl["exposures"]:
            if x["method"] == MOMENT_METHOD:
                assert x["exposure_ratio"] == x["near_field_ratio"]


def test_sections_numbered_in_order(wire):
    _, _, text = wire
    heads = ["4.2 Exposure at each place", "4.3 Near-field result beside the far-field estimate",
             "4.4 Exemption from routine evaluation", "6.2 Standing wave", "6.3 Near-field maps of the wire antennas",
             "7 Cautions"]
    positions = [text.index(h) for h in heads]
    assert positions == sorted(positions)
    assert "see section 4.4" in text           # the identity block points at the renumbered exemption


def test_one_image_per_near_field_map_beside_its_caption(wire):
    js, data, _ = wire
    maps = [c for c in js["configurations"] if c["near_field_map"] is not None]
    assert len(maps) >= 2
    # one raster of the cells per map and for the station plan, besides the colour scales (256 levels, one
    # pixel wide); the rest of the worksheet is vector graphics
    images = [[size for size in on_page if size != (1, 256)] for on_page in images_per_page(data)]
    pages = page_texts(data)
    assert sum(len(i) for i in images) == len(maps) + 1
    for c in maps:
        on = [k for k, t in enumerate(pages) if f"Near-field map of {c['id']} (" in t]
        assert len(on) == 1, c["id"]
        assert images[on[0]], f"no image on the page of the {c['id']} map"


def test_captions_state_cells_left_out_and_places_marked(wire):
    js, _, text = wire
    for c in js["configurations"]:
        m = c["near_field_map"]
        cells = len(m["x_m"]) * len(m["y_m"])
        assert f"{m['excluded_points']} of {cells} cells left out because they touch a conductor" in text
        dx = m["x_m"][1] - m["x_m"][0]
        dy = m["y_m"][1] - m["y_m"][0]
        inside = [f"P{i + 1} {pl['label']}" for i, pl in enumerate(js["places"])
                  if m["x_m"][0] - dx / 2 <= pl["x_m"] <= m["x_m"][-1] + dx / 2
                  and m["y_m"][0] - dy / 2 <= pl["y_m"] <= m["y_m"][-1] + dy / 2]
        assert inside, c["id"]            # the demo puts a place beside each antenna
        caption_start = text.index(f"Near-field map of {c['id']} (")
        caption = text[caption_start:caption_start + 700]
        assert f"Places marked: {'; '.join(inside)}." in caption
        for env in ("uncontrolled", "controlled"):
            assert f"E {sig3(m['max_e_ratio'][env])}, H {sig3(m['max_h_ratio'][env])} ({env})" in caption
    # the quarter-wave vertical's base cell touches the conductor
    excluded = {c["id"]: c["near_field_map"]["excluded_points"] for c in js["configurations"]}
    assert excluded["20m-cw-amp"] > 0


def test_two_builds_byte_identical_and_equal_to_the_cli_file(wire):
    _, data, _ = wire
    from rfsafe.remedies import with_answers

    res = with_answers(load_station(WIRE_DEMO))      # what `rfsafe report` renders
    first = build_worksheet_pdf(res)
    assert first == build_worksheet_pdf(res)
    # the CLI evaluated a copy with the same name and content: the same worksheet, byte for byte
    assert first == data


def _nodes(node):
    yield node
    for c in getattr(node, "contents", ()):
        yield from _nodes(c)


def test_map_drawing_reproducible_with_one_opaque_raster_of_the_cells():
    from reportlab.graphics.shapes import Image

    res = assess(load_station(WIRE_DEMO))
    numbers = {pl.label: f"P{i + 1}" for i, pl in enumerate(res.places)}
    cfg = next(c for c in res.configurations if c.near_field_map is not None)
    m = cfg.near_field_map

    def rasters(d):
        return [n.path for n in _nodes(d) if isinstance(n, Image)]

    d = near_field_map_drawing(cfg, res.places, place_numbers=numbers)
    field, bar = rasters(d)                   # the cells, and the colour scale's 256 levels
    again = rasters(near_field_map_drawing(cfg, res.places, place_numbers=numbers))
    assert [im.tobytes() for im in again] == [field.tobytes(), bar.tobytes()]
    assert field.mode == bar.mode == "RGB"                            # opaque: no mask for the PDF to carry
    # whole pixels per cell, so cell edges stay sharp
    assert field.size[0] % len(m.x_m) == 0 and field.size[1] % len(m.y_m) == 0
    assert d.width <= 7 * 72 + 1e-6                                   # 7 in; scaled to the 180 mm frame


def test_map_colours_are_the_orrd_scale_as_matplotlib_draws_it():
    """The colour field against matplotlib's own "OrRd" colour map on its LogNorm (ColorBrewer 9-class
    OrRd scheme), to one part in 255 (rounding of the 0-1 colour to a byte)."""
    import numpy as np
    from matplotlib import colormaps
    from matplotlib.colors import LogNorm

    from rfsafe.report.maps import colour_rgb

    values = np.logspace(-4.5, 1.5, 997)
    ours = colour_rgb(values, 1e-4, 10.0).astype(float)
    theirs = colormaps["OrRd"](LogNorm(1e-4, 10.0)(values))[:, :3] * 255.0
    assert np.abs(ours - theirs).max() <= 0.5 + 1e-9
    assert tuple(colour_rgb(np.array([np.nan, 0.0]), 1e-4, 10.0)[0]) == (0x8c, 0x8c, 0x8c)


def test_map_contours_are_the_lines_matplotlib_traces():
    """The ratio = 1 lines of a near-field map against matplotlib's contour of the same grid."""
    import numpy as np
    from matplotlib.figure import Figure
    from reportlab.graphics.shapes import Drawing

    from rfsafe.report.maps import MapAxes

    res = assess(load_station(WIRE_DEMO))
    cfg = next(c for c in res.configurations if c.near_field_map is not None and c.id.startswith("20m"))
    m = cfg.near_field_map
    f = np.asarray(m.h_ratio["uncontrolled"], dtype=float)
    ax = MapAxes(Drawing(100, 100), (0, 0, 100, 100), xlim=(m.x_m[0], m.x_m[-1]), ylim=(m.y_m[0], m.y_m[-1]))
    ours = ax.contour_lines(m.x_m, m.y_m, f)
    cs = Figure().add_subplot().contour(m.x_m, m.y_m, np.ma.masked_invalid(f), levels=[1.0])
    theirs = [v for path in cs.get_paths() for v in path.to_polygons(closed_only=False)]
    assert len(ours) == len(theirs) >= 1
    for a, b in zip(ours, theirs):
        assert np.allclose(a, b)


def test_the_worksheet_loads_neither_matplotlib_nor_the_network_modules(tmp_path):
    """The maps are reportlab drawings: importing matplotlib alone cost more than the rest of a worksheet; and
    text is escaped without xml.sax.saxutils, whose import pulls in urllib, http and ssl."""
    import subprocess
    import sys

    code = ("import sys; from rfsafe.remedies import with_answers; from rfsafe.station import load_station; "
            "from rfsafe.report.worksheet import build_worksheet_pdf; "
            f"build_worksheet_pdf(with_answers(load_station({str(WIRE_DEMO)!r}))); "
            "print(sorted(m for m in sys.modules if m.split('.')[0] in ('matplotlib', 'ssl', 'http', 'xml')))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "[]"


def test_colour_scale_holds_the_limit_and_the_largest_ratio():
    import numpy as np

    # all far below the limit: the scale still reaches 1 so the reader sees the distance to it
    lo, hi = _colour_range(np.array([[1e-9, 1e-3], [np.nan, 4e-4]]))
    assert hi == 1.0 and lo == pytest.approx(10.0 ** -MAX_DECADES)
    # above the limit: the decade above the largest ratio, and at least two decades shown
    lo, hi = _colour_range(np.array([[0.06, 230.0]]))
    assert (lo, hi) == (pytest.approx(0.01), pytest.approx(1000.0))
    lo, hi = _colour_range(np.array([[2.0, 3.0]]))
    assert hi == pytest.approx(10.0) and lo <= hi / 100


def test_four_contours_have_distinct_styles():
    styles = {(s["color"], str(s["linestyle"])) for s in CONTOUR_STYLE.values()}
    assert len(styles) == 4
    # E and H differ in colour, the environments in line style
    assert CONTOUR_STYLE[("e", "uncontrolled")]["color"] != CONTOUR_STYLE[("h", "uncontrolled")]["color"]
    assert CONTOUR_STYLE[("e", "uncontrolled")]["linestyle"] != CONTOUR_STYLE[("e", "controlled")]["linestyle"]


def test_station_without_wire_antennas_has_no_near_field_section():
    res = assess(load_station(PLAIN_DEMO))
    assert all(c.near_field_map is None for c in res.configurations)
    data = build_worksheet_pdf(res)
    text = text_of(data)
    assert "Near-field maps" not in text and "Near-field map of" not in text
    assert "Near-field result beside the far-field estimate" not in text
    assert sum(1 for i in images_per_page(data) for size in i if size != (1, 256)) == 1   # the station plan only
    assert "4.3 Exemption from routine evaluation" in text


def test_extra_figures_follow_the_near_field_maps():
    from rfsafe.report.common import p

    res = assess(load_station(WIRE_DEMO))
    text = text_of(build_worksheet_pdf(res, extra_figures=[p("Hook figure after the near-field maps")]))
    i = text.index("Hook figure after the near-field maps")
    assert text.index("6.3 Near-field maps of the wire antennas") < text.index("6.4 Further figures") < i
    assert i < text.index("7 Cautions")


def test_a_contour_a_few_millimetres_wide_gets_a_zoomed_inset():
    # rendering check on a constructed map (not physics): one hot spot of 3 x 3 cells on a 61 x 61 grid
    # of 60 m, whose ratio = 1 contour is about 1.5 m across, a few millimetres on paper
    import numpy as np
    from types import SimpleNamespace

    from rfsafe.report.near_field import INSET_BELOW_MM
    from rfsafe.results import NearFieldMap

    x = np.linspace(-30, 30, 61)
    gx, gy = np.meshgrid(x, x)
    hot = 4.0 * np.exp(-(gx ** 2 + gy ** 2) / 0.8)
    ratios = {env: hot + 1e-3 for env in ("uncontrolled", "controlled")}
    m = NearFieldMap(configuration="c", antenna="a", plane="horizontal", x_m=tuple(x), y_m=tuple(x),
                     heights_m=(1.0,), wire_paths_m=(((0.0, 0.0), (0.0, 0.0)),),
                     max_e_ratio={"uncontrolled": 4.0, "controlled": 4.0},
                     max_h_ratio={"uncontrolled": 4.0, "controlled": 4.0}, excluded_points=0,
                     e_ratio=ratios, h_ratio=ratios)
    cfg = SimpleNamespace(id="c", freq_mhz=145.0, mode="fm", near_field_map=m)
    boxes = drawing_text_boxes(near_field_map_drawing(cfg, (), place_numbers={}))
    assert any(t.startswith("zoom ×") for t, _ in boxes)
    assert INSET_BELOW_MM >= 3.0          # "a few millimetres"
    # a wide contour draws no inset
    wide = {env: 4.0 * np.exp(-(gx ** 2 + gy ** 2) / 300.0) + 1e-3 for env in ("uncontrolled", "controlled")}
    cfg.near_field_map = NearFieldMap(**{**m.__dict__, "e_ratio": wide, "h_ratio": wide})
    boxes = drawing_text_boxes(near_field_map_drawing(cfg, (), place_numbers={}))
    assert not any(t.startswith("zoom ×") for t, _ in boxes)
