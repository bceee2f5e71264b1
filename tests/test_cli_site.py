"""Tests of ``rfsafe site``: exit codes, tables, JSON shape, grid CSV, the PDF and file handling."""

from __future__ import annotations

import csv
import io
import json
import subprocess
import sys
from pathlib import Path

import pytest
from typer.testing import CliRunner

from rfsafe.cli import app

DEMO = Path(__file__).resolve().parent.parent / "reports_demo" / "event_field_day.toml"


@pytest.fixture(scope="module")
def demo_json():
    r = CliRunner().invoke(app, ["site", str(DEMO), "--json"])
    assert r.exit_code == 1, r.stderr
    return json.loads(r.stdout)


def test_demo_tables_list_violations_first_and_exit_1():
    r = CliRunner().invoke(app, ["site", str(DEMO)])
    assert r.exit_code == 1
    out = r.stdout
    assert out.index("VIOLATIONS (") < out.index("Stations:") < out.index("Areas:") < out.index("VERDICT: EXCEEDS")
    assert "V1. 'Public footpath' (public area): uncontrolled exposure ratio up to" in out
    assert "caution: Local regulation and the regulator's own guidance govern" in r.stderr
    assert "grid [" not in r.stderr   # no progress bar when stderr is not a terminal


def test_demo_json_shape(demo_json):
    d = demo_json
    for key in ("title", "site", "evaluator", "evaluation_date", "standard", "rfsafe_version", "input_file",
                "input_sha256", "heights_m", "grid_spacing_m", "grid_info", "boundary", "areas", "stations",
                "transmitters", "regions", "violations", "exceeded", "exposure_verdict", "exposure_reasons",
                "equipment_verdict", "equipment_reasons", "method_notes", "flags", "cautions"):
        assert key in d
    assert "grid" not in d and "emitters" not in d   # bulky arrays stay out of JSON (see --csv)
    assert d["exposure_verdict"] == "EXCEEDS"
    # the footpath violation is exposure; the demo's lines and connectors are within their ratings (exit 1)
    assert d["equipment_verdict"] == "WITHIN RATINGS"
    assert any("Public footpath" in r for r in d["exposure_reasons"]) and d["equipment_reasons"]
    assert d["violations"][0]["region"] == "Public footpath"   # the worst first
    assert d["violations"][0]["dominant_transmitter"] == "HF CW"
    tx = {t["transmitter"]: t for t in d["transmitters"]}
    assert set(tx) == {"HF phone", "HF CW", "Digital", "Talk-in"}
    assert tx["HF CW"]["rope_off_radius_m"] >= tx["HF CW"]["keep_out_m"]["uncontrolled"]
    assert set(tx["HF CW"]["keep_out_m"]) == {"controlled", "uncontrolled"}
    # the talk-in station comes from its own station file, with its hash
    talk = next(s for s in d["stations"] if s["name"] == "Talk-in")
    assert talk["source"] == "event_field_day_vhf.toml" and len(talk["source_sha256"]) == 64
    # a grid point on an antenna is taken 0.01 m from it with the peak gain (as a station's place): a finite,
    # very large ratio
    rope = next(r for r in d["regions"] if r["label"] == "Rope: Digital vertical")
    assert rope["worst_ratio"]["uncontrolled"] > 1e3


def test_grid_csv(tmp_path, demo_json):
    path = tmp_path / "grid.csv"
    r = CliRunner().invoke(app, ["site", str(DEMO), "--csv", str(path)])
    assert r.exit_code == 1
    rows = list(csv.DictReader(io.StringIO(path.read_text())))
    assert list(rows[0]) == ["x_m", "y_m", "ratio_controlled", "ratio_uncontrolled", "worst_height_controlled_m",
                             "worst_height_uncontrolled_m", "near_field", "region"]
    assert len(rows) == demo_json["grid_info"]["points"]
    path_rows = [row for row in rows if row["region"] == "Public footpath"]
    over = [row for row in path_rows if float(row["ratio_uncontrolled"]) > 1]
    assert over   # the violation is on the grid too (the JSON count adds the edge samples)
    assert len(over) <= next(x for x in demo_json["regions"] if x["label"] == "Public footpath")["points_over"]
    assert {row["near_field"] for row in rows} <= {"true", "false"}


def test_pdf_is_reproducible_and_never_overwritten_without_force(tmp_path):
    from pypdf import PdfReader

    a, b = tmp_path / "a.pdf", tmp_path / "b.pdf"
    assert CliRunner().invoke(app, ["site", str(DEMO), "-o", str(a)]).exit_code == 1
    assert CliRunner().invoke(app, ["site", str(DEMO), "-o", str(b)]).exit_code == 1
    assert a.read_bytes() == b.read_bytes()
    text = "".join(page.extract_text() for page in PdfReader(str(a)).pages)
    import hashlib

    assert hashlib.sha256(DEMO.read_bytes()).hexdigest() in text
    for words in ("EXCEEDS", "Site map", "Stations and keep-out zones", "Areas", "Cautions", "Sign-off"):
        assert words in text
    before = a.read_bytes()
    r = CliRunner().invoke(app, ["site", str(DEMO), "-o", str(a)])
    assert r.exit_code == 2
    assert r.stderr == f'Error: -o: "{a}" already exists (use --force to overwrite)\n'
    assert a.read_bytes() == before
    a.write_bytes(b"old")
    assert CliRunner().invoke(app, ["site", str(DEMO), "-o", str(a), "--force"]).exit_code == 1
    assert a.read_bytes() == before
    assert sorted(p.name for p in tmp_path.iterdir()) == ["a.pdf", "b.pdf"]   # no temporary files left


def test_csv_and_pdf_must_differ(tmp_path):
    out = tmp_path / "x.out"
    r = CliRunner().invoke(app, ["site", str(DEMO), "-o", str(out), "--csv", str(out)])
    assert r.exit_code == 2
    assert r.stderr == f'Error: --csv: "{out}" is the same file as -o (give two different files)\n'
    assert not out.exists()


def test_missing_site_file(tmp_path):
    r = CliRunner().invoke(app, ["site", str(tmp_path / "none.toml")])
    assert r.exit_code == 2
    assert r.stderr == f'Error: FILE: "{tmp_path / "none.toml"}" does not exist\n'


def test_help():
    r = CliRunner().invoke(app, ["site", "--help"])
    assert r.exit_code == 0
    for opt in ("--json", "--csv", "-o", "--force"):
        assert opt in r.stdout


def test_command_module_imports_no_numpy():
    code = "import sys, rfsafe.cli.cmd_site; print('numpy' in sys.modules, 'matplotlib' in sys.modules)"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout
    assert out.split() == ["False", "False"]


def test_progress_bar_draws_on_stderr_for_large_grids(capsys):
    from rfsafe.cli.cmd_site import PROGRESS_MIN_POINTS, _Progress

    bar = _Progress()
    bar(10, 100)                                   # small grid: nothing
    assert capsys.readouterr().err == ""
    n = PROGRESS_MIN_POINTS
    bar(n // 2, n)
    bar(n, n)
    err = capsys.readouterr().err
    assert f"\rgrid [############-------------]  50% of {n} points" in err
    assert err.endswith(f"\rgrid [#########################] 100% of {n} points\n")


def test_demo_json_says_which_published_figures_were_checked(demo_json):
    # every limit row, duty factor and cable figure the review used, with its verification state
    # (rfsafe.verification); 47 CFR 1.1310 Table 1 was read in the eCFR text, the "digital" duty factor
    # is common practice (not confirmed)
    checks = demo_json["data_verification"]
    states = {(f["kind"], f["figure"].split(":")[0]): f["state"] for f in checks}
    assert all(f["state"] == "published text" for f in checks if f["kind"] == "limit")
    assert states[("duty factor", "digital")] == "not confirmed"
    assert states[("duty factor", "cw")] == "reproduction"


def test_exemption_in_the_json_and_the_terminal(demo_json):
    ex = demo_json["exemption"]
    # 47 CFR 1.1307(b)(3): every configuration of every station is a source; the sum of fractions needs every
    # source to have a criterion, and a source without one (a 40 m dipole 6 m from people) is never exempt
    labels = [s["label"] for s in ex["per_source"]]
    assert labels == [f"{s['name']} {c['id']}" for s in demo_json["stations"] for c in s["configurations"]]
    assert ex["exempt"] is False
    out = CliRunner().invoke(app, ["site", str(DEMO)]).stdout
    assert "47 CFR 1.1307(b)(3): NOT EXEMPT" in " ".join(out.split())


def test_every_station_zone_listed_and_a_zone_without_violation_said_plainly():
    out = " ".join(CliRunner().invoke(app, ["site", str(DEMO)]).stdout.split())
    assert "HF CW: KEEP-OUT ZONE and VIOLATION V1" in out
    # the ground-mounted vertical's zone lies inside its roped no-access area: a zone, but no violation
    assert "Digital: KEEP-OUT ZONE, no violation" in out
    assert "HF phone: no keep-out zone on the ground." in out


def test_site_pdf_sections_numbered_from_one_with_exemption_and_zones(tmp_path):
    from pypdf import PdfReader

    pdf = tmp_path / "site.pdf"
    r = CliRunner().invoke(app, ["site", str(DEMO), "-o", str(pdf)])
    assert r.exit_code == 1, r.stderr
    text = " ".join(" ".join(p.extract_text() for p in PdfReader(str(pdf)).pages).split())
    heads = ["1 Stations and keep-out zones", "2 Areas", "3 Site map", "4 Exemption from routine evaluation",
             "5 Configurations", "6 Method and assumptions", "7 Cautions", "8 Sign-off"]
    positions = [text.index(h) for h in heads]
    assert positions == sorted(positions)
    assert "Digital: KEEP-OUT ZONE, no violation" in text
    assert "rope-off" in text.lower()
