"""``rfsafe report``: exit codes, default output, overwrite refusal, no partial file, numbers = evaluate --json."""

import io
import json
import shutil
from pathlib import Path

import pypdf
import pytest
from typer.testing import CliRunner

from rfsafe.cli import app

DEMO = Path(__file__).resolve().parent.parent / "reports_demo" / "demo_station.toml"
EXCEEDING_PLACE = ('\n[[places]]\nlabel = "Ladder at the tower"\nx_m = -5.3\ny_m = 20.7\nheight_m = 15.0\n'
                   'environment = "uncontrolled"\n')


def text_of(path: Path) -> str:
    reader = pypdf.PdfReader(io.BytesIO(path.read_bytes()))
    return " ".join(" ".join(page.extract_text() for page in reader.pages).split())


def sig3(x: float) -> str:
    """Printed precision, written independently: 3 significant digits, exponent form below 1e-3."""
    return f"{x:.2e}" if abs(x) < 1e-3 else f"{x:.3g}"


@pytest.fixture
def station(tmp_path):
    path = tmp_path / "demo_station.toml"
    shutil.copy(DEMO, path)
    return path


def invoke(*args):
    return CliRunner().invoke(app, [str(a) for a in args])


def test_default_output_beside_the_file_and_numbers_equal_evaluate_json(station):
    ev = invoke("evaluate", station, "--json")
    assert ev.exit_code in (0, 1, 4)
    doc = json.loads(ev.stdout)
    rep = invoke("report", station)
    assert rep.exit_code == ev.exit_code
    pdf = station.with_suffix(".pdf")
    assert pdf.is_file()
    headline = f"EXPOSURE {doc['exposure_verdict']} · EQUIPMENT {doc['equipment_verdict']}"
    assert rep.stdout.strip() == f"{headline}: worksheet written to {pdf}"
    text = text_of(pdf)
    assert f"Exposure: ✓ {doc['exposure_verdict']}" in text or f"Exposure: ✗ {doc['exposure_verdict']}" in text
    assert f"Equipment: ✓ {doc['equipment_verdict']}" in text or f"Equipment: ✗ {doc['equipment_verdict']}" in text
    assert doc["input_sha256"] in text
    for i, pl in enumerate(doc["places"]):
        assert f"P{i + 1} {pl['label']}" in text
        assert f"{pl['environment']} {sig3(pl['total_ratio'])} {pl['total_margin_db']:+.1f}" in text
        for x in pl["exposures"]:
            assert f"{sig3(x['exposure_ratio'])} {x['margin_db']:+.1f}" in text
    for c in doc["configurations"]:
        for d in c["compliance_distances"]:
            # the worksheet prints centimetres below 10 m, decimetres below 100 m, and feet in brackets
            dist = f"{d['dist_m']:.2f}" if d["dist_m"] < 10 else f"{d['dist_m']:.1f}"
            assert f"{c['id']} {d['environment']} {dist} ({d['dist_ft']:.1f} ft)" in text


def test_exit_1_when_exceeded_and_the_pdf_is_still_written(station):
    station.write_text(station.read_text() + EXCEEDING_PLACE)
    out = station.parent / "exceeds.pdf"
    rep = invoke("report", station, "-o", out)
    assert rep.exit_code == 1
    assert rep.stdout.strip().startswith("EXPOSURE EXCEEDS · EQUIPMENT ")
    assert rep.stdout.strip().endswith(f": worksheet written to {out}")
    assert "Exposure: ✗ EXCEEDS" in text_of(out)


def test_refuses_to_overwrite_without_force(station):
    out = station.parent / "x.pdf"
    out.write_bytes(b"precious")
    rep = invoke("report", station, "-o", out)
    assert rep.exit_code == 2
    assert rep.stderr.strip() == f'Error: -o: "{out}" already exists (use --force to overwrite)'
    assert out.read_bytes() == b"precious"
    rep = invoke("report", station, "-o", out, "--force")
    assert rep.exit_code == 0
    assert out.read_bytes().startswith(b"%PDF-")


def test_never_overwrites_the_station_file_itself(station):
    before = station.read_bytes()
    rep = invoke("report", station, "-o", station, "--force")
    assert rep.exit_code == 2
    assert rep.stderr.strip() == (f'Error: -o: "{station}" is one of this run\'s input files: '
                                  "choose another name for the output")
    assert station.read_bytes() == before


def test_missing_folder_is_an_input_error(station):
    out = station.parent / "nowhere" / "x.pdf"
    rep = invoke("report", station, "-o", out)
    assert rep.exit_code == 2
    assert rep.stderr.strip().startswith(f'Error: -o: "{out}" cannot be written: folder')


def test_bad_station_writes_nothing(station):
    station.write_text(station.read_text().replace("pep_w = 100.0", "pep_w = -5.0"))
    rep = invoke("report", station)
    assert rep.exit_code == 2
    assert rep.stderr.startswith("Error: transmitters[0].pep_w: -5.0")
    assert list(station.parent.iterdir()) == [station]


def test_standard_override(station):
    rep = invoke("report", station, "--standard", "icnirp2020", "-o", station.parent / "i.pdf")
    assert rep.exit_code in (0, 1)
    assert "[icnirp2020]" in text_of(station.parent / "i.pdf")
    rep = invoke("report", station, "--standard", "nope", "-o", station.parent / "j.pdf")
    assert rep.exit_code == 2
    assert rep.stderr.startswith("Error: ")
    assert not (station.parent / "j.pdf").exists()


def test_builder_failure_midway_leaves_no_file(station, monkeypatch):
    import rfsafe.report.worksheet as ws

    def broken(story, **kwargs):
        raise RuntimeError("simulated failure while laying out the PDF")

    monkeypatch.setattr(ws, "build_pdf", broken)
    out = station.parent / "broken.pdf"
    rep = invoke("report", station, "-o", out)
    # an unexpected failure is a bug: its own exit status (3), never 0 or 1, and no file left
    assert rep.exit_code == 3
    assert rep.stderr.startswith("Internal error: RuntimeError: simulated failure")
    assert sorted(p.name for p in station.parent.iterdir()) == [station.name]


def test_interrupted_write_keeps_the_old_file_and_no_temporary(station, monkeypatch):
    import rfsafe.fileio as fileio

    out = station.parent / "old.pdf"
    out.write_bytes(b"old worksheet")

    def interrupted(src, dst):
        raise KeyboardInterrupt("simulated interruption before the rename")

    monkeypatch.setattr(fileio.os, "replace", interrupted)
    rep = invoke("report", station, "-o", out, "--force")
    assert rep.exit_code != 0
    assert out.read_bytes() == b"old worksheet"
    assert sorted(p.name for p in station.parent.iterdir()) == sorted([station.name, out.name])
