"""Station worksheet: content against the evaluation result, reproducibility, hooks, rendering."""

import datetime as dt
import hashlib
import io
import re
import shutil
import subprocess
import sys
from pathlib import Path

import pypdf
import pytest

from rfsafe.assess import assess
from rfsafe.report.common import p
from rfsafe.report.worksheet import EXEMPTION_STATEMENT, build_worksheet_pdf, write_worksheet
from rfsafe.station import load_station

DEMO = Path(__file__).resolve().parent.parent / "reports_demo" / "demo_station.toml"


def text_of(data: bytes) -> str:
    """All page text with whitespace runs collapsed (table cells wrap onto several lines)."""
    reader = pypdf.PdfReader(io.BytesIO(data))
    return " ".join(" ".join(page.extract_text() for page in reader.pages).split())


def dist2(x: float) -> str:
    """The worksheet's printed precision of a distance, written independently: centimetres below 10 m,
    decimetres below 100 m."""
    return f"{x:.2f}" if x < 10 else (f"{x:.1f}" if x < 100 else f"{x:.0f}")


def sig3(x: float) -> str:
    """The worksheet's printed precision, written independently: 3 significant digits, exponent form
    below 1e-3."""
    return f"{x:.2e}" if abs(x) < 1e-3 else f"{x:.3g}"


@pytest.fixture(scope="module")
def demo():
    res = assess(load_station(DEMO))
    data = build_worksheet_pdf(res)
    return res, data, text_of(data)


def test_identity_block(demo):
    res, data, text = demo
    assert res.title in text or " ".join(res.title.split()) in text
    for item in (res.station, res.evaluator, f"{res.evaluation_date} (from the station file)", res.standard_name,
                 f"rfsafe {res.rfsafe_version}", res.input_sha256, res.input_file):
        assert item in text, item
    word = "Exposure: ✓ COMPLIES" if res.exposure_verdict == "COMPLIES" else "Exposure: ✗ EXCEEDS"
    assert word in text
    assert text.index(word) < text.index("2 Method and assumptions")    # verdict on the first page, up top


def test_sections_in_order(demo):
    _, _, text = demo
    heads = ["1 The station", "1.1 Antennas", "1.2 Places", "1.3 Plan", "2 Method and assumptions", "3 Configurations", "3.1 Compliance distances", "4 Places",
             "5 Line and tuner stress", "6 Figures", "7 Cautions", "8 Sign-off"]
    positions = [text.index(h) for h in heads]
    assert positions == sorted(positions)


def test_every_place_with_its_total_and_each_configuration_ratio(demo):
    res, _, text = demo
    for i, pl in enumerate(res.places):
        # summary row: number, label, position, environment, total ratio, margin, verdict
        row = (f"P{i + 1} {pl.label} {pl.x_m:g}, {pl.y_m:g}, {pl.height_m:g} {pl.environment} "
               f"{sig3(pl.total_ratio)} {pl.total_margin_db:+.1f} {pl.verdict.upper()}")
        assert row in text, row
        for x in pl.exposures:
            # the gain's method in one word ("peak" or "pattern"); any detail goes to a numbered note
            how = x.gain_method.split(",")[0]
            cells = f"{x.configuration} {dist2(x.dist_m)} {x.gain_dbi:.2f} {how} {sig3(x.power_density_w_m2)}"
            assert cells in text, cells
            assert f"{sig3(x.exposure_ratio)} {x.margin_db:+.1f}" in text


def test_compliance_distances_in_m_and_ft(demo):
    res, _, text = demo
    for c in res.configurations:
        for d in c.compliance_distances:
            row = f"{c.id} {d.environment} {dist2(d.dist_m)} ({d.dist_ft:.1f} ft)"
            assert row in text, row


def test_method_cautions_and_flags(demo):
    res, _, text = demo
    for note in res.method_notes:
        assert " ".join(note.split()) in text
    for caution in res.cautions:
        assert caution in text
    for c in res.configurations:
        for f in c.flags:
            # each flag once, naming its configuration (the near-field distance flags of all configurations
            # share one line that lists each configuration's distances)
            m = re.match(r"(controlled|uncontrolled) compliance distance ([0-9.]+) m (\(from [^)]*\) )?lies inside", f)
            if m:
                assert f"Compliance distance inside the near-field boundary" in text
                assert re.search(rf"{re.escape(c.id)}( \(from [^)]*\))?: [^;]*{m.group(1)} {m.group(2)} m", text), (c.id, f)
            else:
                assert f in text and c.id in text


def test_each_flag_printed_once(demo):
    res, _, text = demo
    flags_part = text[text.index("Flags raised by this evaluation"):text.index("8 Sign-off")]
    assert flags_part.count("near-field analysis or measurement recommended") <= 2   # one grouped line + places


def test_station_section_antennas_places_and_plan(demo):
    res, data, text = demo
    for a in res.antennas:
        assert f"{a.id} {a.kind}" in text
        assert a.size_basis.split(":")[0] in text
    # the dipole's extent is a textbook half wave at its lowest frequency, drawn broadside to its azimuth
    dipole = next(a for a in res.antennas if a.id == "dipole-40m")
    from rfsafe.units import wavelength_m
    assert dipole.size_m == pytest.approx(wavelength_m(7.03e6) / 2)        # common practice: lambda/2 dipole
    (x1, y1, _), (x2, y2, _) = dipole.segments_m[0]
    assert y1 == y2 == dipole.y_m and x2 - x1 == pytest.approx(dipole.size_m)   # azimuth 0: wire runs east-west
    for pl in res.places:
        assert pl.why and " ".join(pl.why.split()) in text
    assert "Call sign DEMO-1 (invented)" in text and "1 Example Lane, Demo Town (invented)" in text
    # the plan's cells and its colour scale (256 levels) are the raster images of this worksheet (the other
    # figures are vector graphics)
    reader = pypdf.PdfReader(io.BytesIO(data))
    sizes = sorted(im.image.size for page in reader.pages for im in page.images)
    assert len(sizes) == 2 and sizes[0] == (1, 256)


def test_place_without_why_says_so(tmp_path):
    station = tmp_path / "nowhy.toml"
    station.write_text(re.sub(r"(?m)^why = .*$", "", DEMO.read_text()))
    text = text_of(build_worksheet_pdf(assess(load_station(station))))
    assert "not stated in the station file" in text


def test_standard_override_is_recorded():
    res = assess(load_station(DEMO, standard="icnirp2020"))
    assert res.standard_overridden and res.file_standard == "fcc"
    text = text_of(build_worksheet_pdf(res))
    assert "overriding the station file's own standard [fcc]" in text
    own = assess(load_station(DEMO))
    assert not own.standard_overridden
    assert "overriding" not in text_of(build_worksheet_pdf(own))


def test_icnirp_prints_no_power_density_where_it_defines_none():
    # ICNIRP 2020 Table 5 sets E and H only below 30 MHz (from memory): no S is printed for those rows
    res = assess(load_station(DEMO, standard="icnirp2020"))
    text = text_of(build_worksheet_pdf(res))
    undefined = [x for pl in res.places for x in pl.exposures if x.power_density_limit_w_m2 is None]
    assert undefined
    part = text[text.index("4.2 Exposure at each place"):]
    for x in undefined:
        how = x.gain_method.split(",")[0]
        assert f"{x.configuration} {dist2(x.dist_m)} {x.gain_dbi:.2f} {how} not defined" in part


def test_sc6_shows_nerve_stimulation_beside_the_time_averaged_limit():
    res = assess(load_station(DEMO, standard="sc6"))
    text = text_of(build_worksheet_pdf(res))
    low = [c for c in res.configurations if c.freq_mhz < 10]      # SC6 nerve stimulation applies below 10 MHz
    assert low and all(len(c.limit_distances) > len(c.compliance_distances) for c in low)
    assert "3.2 Nerve stimulation and time-averaged limits" in text
    for c in low:
        for d in c.limit_distances:
            if d.limit_basis == "instantaneous":
                assert (f"{c.id} {d.environment} nerve stimulation (instantaneous, field at PEP)" in text)


def test_horizontal_distances_follow_pythagoras(demo):
    # far field, peak gain: ratio 1 at 3-D distance d, so along a level dz below the antenna the
    # horizontal distance is sqrt(d^2 - dz^2) (closed form, OET Bulletin 65 section 2 geometry)
    from rfsafe.exposure import horizontal_compliance_distance_m, ratio_at_horizontal_distance

    assert float(horizontal_compliance_distance_m(5.0, 3.0)) == pytest.approx(4.0)
    assert float(horizontal_compliance_distance_m(2.0, 3.0)) == 0.0
    assert float(ratio_at_horizontal_distance(5.0, 4.0, 3.0)) == pytest.approx(1.0)
    assert float(ratio_at_horizontal_distance(5.0, 0.0, 2.5)) == pytest.approx(4.0)


def test_line_stress_numbers(demo):
    res, _, text = demo
    for c in res.configurations:
        ln = c.line
        assert f"{c.id} {ln.cable_id}, {ln.length_m:g} m {ln.swr_at_antenna:.2f} {ln.swr_at_transmitter:.2f}" in text
        for s in ln.part_stresses:
            assert f"{s.part} " in text
        assert f"max {ln.line_voltage_v_peak:.0f} V at {ln.line_voltage_max_position_m:.1f} m" in text


def test_fcc_exemption_status_and_statement(demo):
    res, _, text = demo
    assert res.standard == "fcc" and res.exemption is not None
    status = "EXEMPT from routine evaluation" if res.exemption.exempt else "NOT EXEMPT"
    assert status in text
    assert "4.3 Exemption from routine evaluation, 47 CFR 1.1307(b)(3)" in text
    # the statement that an exemption removes only the duty to evaluate, never the duty to comply
    assert "removes only the duty" in text and "duty to comply" in text
    for s in res.exemption.per_source:
        assert s.label in text


def test_other_standard_has_no_exemption_section():
    res = assess(load_station(DEMO, standard="icnirp2020"))
    text = text_of(build_worksheet_pdf(res))
    assert res.standard_name in text
    assert "1.1307(b)(3)" not in text
    assert EXEMPTION_STATEMENT not in text


def test_two_builds_are_byte_identical(demo):
    res, data, _ = demo
    assert build_worksheet_pdf(res) == data
    meta = pypdf.PdfReader(io.BytesIO(data)).metadata
    d = res.evaluation_date.replace("-", "")
    assert meta["/CreationDate"] == f"D:{d}000000+00'00'"


def test_a_fresh_process_builds_the_same_bytes(demo, tmp_path):
    _, data, _ = demo
    out = tmp_path / "fresh.pdf"
    code = ("import sys; from rfsafe.assess import assess; from rfsafe.station import load_station;"
            "from rfsafe.report.worksheet import build_worksheet_pdf;"
            "open(sys.argv[2], 'wb').write(build_worksheet_pdf(assess(load_station(sys.argv[1]))))")
    subprocess.run([sys.executable, "-c", code, str(DEMO), str(out)], check=True)
    assert out.read_bytes() == data


def test_different_input_changes_the_printed_sha256(tmp_path, demo):
    _, _, text = demo
    changed = tmp_path / "changed.toml"
    changed.write_bytes(DEMO.read_bytes() + b"\n# one more comment line\n")
    res = assess(load_station(changed))
    new_text = text_of(build_worksheet_pdf(res))
    expected = hashlib.sha256(changed.read_bytes()).hexdigest()
    assert expected in new_text
    assert hashlib.sha256(DEMO.read_bytes()).hexdigest() in text
    assert expected not in text


def test_date_of_the_run_when_the_file_has_none(tmp_path):
    station = tmp_path / "undated.toml"
    station.write_text(re.sub(r"(?m)^evaluation_date = .*$", "", DEMO.read_text()))
    res = assess(load_station(station), today=dt.date(2027, 3, 4))
    data = build_worksheet_pdf(res)
    assert "2027-03-04 (date of this run: the station file gives no evaluation date)" in text_of(data)
    assert pypdf.PdfReader(io.BytesIO(data)).metadata["/CreationDate"] == "D:20270304000000+00'00'"


def test_exceeding_station_says_so(tmp_path):
    station = tmp_path / "close.toml"
    # a place 1 m in front of the 20 m beam (invented): far above the uncontrolled limit
    station.write_text(DEMO.read_text() + '\n[[places]]\nlabel = "Ladder at the tower"\nx_m = -5.3\n'
                       'y_m = 20.7\nheight_m = 15.0\nenvironment = "uncontrolled"\n')
    res = assess(load_station(station))
    assert res.exposure_verdict == "EXCEEDS"
    text = text_of(build_worksheet_pdf(res))
    assert "Exposure: ✗ EXCEEDS" in text
    for line in res.exceeded:
        assert " ".join(line.split()) in text
    assert "Ladder at the tower" in text and "EXCEEDS" in text


def test_extra_figures_hook():
    res = assess(load_station(DEMO, standard="icnirp2020"))
    text = text_of(build_worksheet_pdf(res, extra_figures=[p("Near-field map placeholder for the hook test")]))
    assert "6.3 Further figures" in text
    i = text.index("Near-field map placeholder for the hook test")
    assert text.index("6.2 Standing wave") < i < text.index("7 Cautions")


def test_write_worksheet_refuses_to_overwrite(tmp_path, demo):
    res, data, _ = demo
    out = tmp_path / "w.pdf"
    write_worksheet(res, out)
    assert out.read_bytes() == data
    from rfsafe.errors import InputError
    with pytest.raises(InputError, match=r'^-o: ".*w\.pdf" already exists \(use --force to overwrite\)$'):
        write_worksheet(res, out)
    write_worksheet(res, out, force=True)
    assert out.read_bytes() == data


@pytest.mark.skipif(shutil.which("pdftoppm") is None, reason="pdftoppm (poppler-utils) not installed")
def test_renders_to_png_pages(demo, tmp_path):
    from PIL import Image

    _, data, _ = demo
    pdf = tmp_path / "demo.pdf"
    pdf.write_bytes(data)
    subprocess.run(["pdftoppm", "-r", "50", "-png", str(pdf), str(tmp_path / "page")], check=True,
                   capture_output=True)
    pngs = sorted(tmp_path.glob("page-*.png"))
    assert len(pngs) == len(pypdf.PdfReader(io.BytesIO(data)).pages)
    for png in pngs:
        im = Image.open(png).convert("L")
        w, h = im.size
        assert h > w                                      # A4 portrait
        lo, hi = im.getextrema()
        # a white page with ink on it (small anti-aliased text at 50 dpi is grey, not black)
        assert hi == 255 and lo < 150
        inked = sum(im.histogram()[:200])                # pixels darker than light grey
        assert inked > 0.002 * w * h, f"{png.name} is nearly empty"


def test_wire_antenna_polarisation_comes_from_its_wires():
    # a wire antenna's polarisation is that of its wires (the solver's currents), not the schema's default:
    # the wire demo's quarter-wave vertical must not be listed as horizontal
    res = assess(load_station(DEMO.parent / "demo_wire_station.toml"))
    text = text_of(build_worksheet_pdf(res))
    section = text[text.index("1.1 Antennas"):text.index("1.2 Places")]
    assert "from the wires" in section and "horizontal" not in section


def test_differing_exposure_methods_name_their_configurations():
    # the wire demo's dipole is solved over free space and perfect ground (bound), its vertical over the
    # perfect ground it stands on: each method line says which configurations it serves
    res = assess(load_station(DEMO.parent / "demo_wire_station.toml"))
    text = re.sub(r"\s+", " ", text_of(build_worksheet_pdf(res)))
    assert "Exposure method (20m-cw-amp):" in text
    assert "Exposure method (40m-ssb, 40m-cw-amp, 40m-cw-amp-choke):" in text
