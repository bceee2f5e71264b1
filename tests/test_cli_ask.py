"""``rfsafe ask``: exit codes, JSON and CSV shape, one error line per bad option, 100-column output."""

import io
import json

import pandas as pd
from typer.testing import CliRunner

from rfsafe.cli import app
from rfsafe.quick import QuickQuestion, answer

ARGS = ["ask", "--power-w", "400", "--freq-mhz", "14.2", "--mode", "ssb", "--antenna", "half-wave-dipole",
        "--cable", "rg-213", "--length-m", "20", "--swr", "1.5", "--height-m", "8", "--distance-m", "6"]


def test_ask_json_matches_the_library():
    r = CliRunner().invoke(app, ARGS + ["--json"])
    assert r.exit_code == 0, r.output
    doc = json.loads(r.stdout)
    a = answer(QuickQuestion(pep_w=400.0, freq_mhz=14.2, mode="ssb", antenna="half-wave-dipole", cable="rg-213",
                             length_m=20.0, swr=1.5, height_m=8.0, distance_m=6.0))
    got = doc["answers"][0]
    assert got["compliance_dist_m"] == a.compliance_dist_m
    assert got["ratio_at_distance"] == a.ratio_at_distance
    assert doc["cautions"]


def test_ask_table_fits_100_columns():
    r = CliRunner().invoke(app, ARGS)
    assert r.exit_code == 0
    assert max(len(line) for line in r.stdout.splitlines()) <= 100
    assert "compliance distance" in r.stdout


def test_ask_sweep_csv_has_one_row_per_band_and_power():
    r = CliRunner().invoke(app, ["ask", "--power-w", "100,1500", "--bands", "40m,20m,2m", "--gain-dbi", "2.15",
                                 "--distance-m", "5", "--csv"])
    assert r.exit_code in (0, 1)
    frame = pd.read_csv(io.StringIO(r.stdout))
    assert len(frame) == 6 and list(frame["band"]) == ["40m", "40m", "20m", "20m", "2m", "2m"]
    assert {"dist_uncontrolled_m", "ratio_uncontrolled", "largest_pep_uncontrolled_w"} <= set(frame.columns)


def test_ask_exceeding_distance_exits_1_and_standard_all_marks_the_governing_one():
    r = CliRunner().invoke(app, ["ask", "--power-w", "1500", "--freq-mhz", "28.5", "--gain-dbi", "8",
                                 "--distance-m", "3", "--standard", "all"])
    assert r.exit_code == 1
    assert max(len(line) for line in r.stdout.splitlines()) <= 100
    assert "*" in r.stdout and "icnirp2020" in r.stdout


def test_ask_bad_option_is_one_error_line():
    r = CliRunner().invoke(app, ["ask", "--power-w", "-5", "--freq-mhz", "14.2", "--gain-dbi", "0"])
    assert r.exit_code == 2
    assert r.stderr.strip().splitlines() == ['Error: --power-w: "-5" must be a finite number > 0']
    r = CliRunner().invoke(app, ["ask", "--power-w", "5", "--gain-dbi", "0"])
    assert r.exit_code == 2 and r.stderr.startswith("Error: --freq-mhz: ")
