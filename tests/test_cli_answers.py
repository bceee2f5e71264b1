"""``evaluate`` answers: keep-out and remedy sections, --csv tables, --standard all, site files pointed to ``site``."""

import io
import json
from pathlib import Path

import pandas as pd
from typer.testing import CliRunner

from rfsafe.cli import app

DEMO = Path(__file__).parent.parent / "reports_demo"
STATION = str(DEMO / "demo_station.toml")
WIRE = str(DEMO / "demo_wire_station.toml")


def test_evaluate_fits_100_columns_and_wide_does_not():
    narrow = CliRunner().invoke(app, ["evaluate", STATION])
    assert narrow.exit_code in (0, 1, 4)
    assert max(len(line) for line in narrow.stdout.splitlines()) <= 100
    assert "Keep-out on the ground" in narrow.stdout
    wide = CliRunner().invoke(app, ["evaluate", STATION, "--wide"])
    assert max(len(line) for line in wide.stdout.splitlines()) > 100


def test_evaluate_lists_remedies_for_an_exceeding_place():
    r = CliRunner().invoke(app, ["evaluate", WIRE])
    assert r.exit_code == 1
    assert "What would make each exceeding place comply" in r.stdout
    assert "largest PEP" in r.stdout
    j = json.loads(CliRunner().invoke(app, ["evaluate", WIRE, "--json"]).stdout)
    assert j["place_remedies"] and j["place_remedies"][0]["remedies"]
    assert {k["environment"] for k in j["ground_keep_out"]} == {"controlled", "uncontrolled"}


def test_csv_tables_match_the_json():
    j = json.loads(CliRunner().invoke(app, ["evaluate", STATION, "--json", "--no-remedies"]).stdout)
    for table, n in (("places", len(j["places"])), ("configurations", len(j["configurations"])),
                     ("exposures", sum(len(p["exposures"]) for p in j["places"]))):
        r = CliRunner().invoke(app, ["evaluate", STATION, "--csv", table])
        frame = pd.read_csv(io.StringIO(r.stdout))
        assert len(frame) == n, table
    frame = pd.read_csv(io.StringIO(CliRunner().invoke(app, ["evaluate", STATION, "--csv", "places"]).stdout))
    assert list(frame["total_ratio"]) == [p["total_ratio"] for p in j["places"]]


def test_csv_unknown_table_is_one_error_line():
    r = CliRunner().invoke(app, ["evaluate", STATION, "--csv", "nonsense"])
    assert r.exit_code == 2
    assert r.stderr.strip().splitlines() == [
        'Error: --csv: "nonsense" is not a table (accepted: places, exposures, configurations, keep-out, remedies)']


def test_standard_all_marks_the_largest_ratio_as_governing():
    r = CliRunner().invoke(app, ["evaluate", STATION, "--standard", "all", "--json"])
    doc = json.loads(r.stdout)
    for label, std in doc["governing"].items():
        ratios = {s: next(p["total_ratio"] for p in res["places"] if p["label"] == label)
                  for s, res in doc["standards"].items() if isinstance(res, dict)}
        assert ratios[std] == max(ratios.values())
    text = CliRunner().invoke(app, ["evaluate", STATION, "--standard", "all"]).stdout
    assert "governs" in text and max(len(line) for line in text.splitlines()) <= 100


def test_site_file_is_pointed_to_site():
    r = CliRunner().invoke(app, ["evaluate", str(DEMO / "event_field_day.toml")])
    assert r.exit_code == 2
    line = r.stderr.strip().splitlines()
    assert len(line) == 1 and "is a site file" in line[0] and "rfsafe site" in line[0]


def test_standard_all_csv_has_a_ratio_column_per_standard():
    from rfsafe.limits import STANDARD_IDS

    r = CliRunner().invoke(app, ["evaluate", STATION, "--standard", "all", "--csv", "places"])
    frame = pd.read_csv(io.StringIO(r.stdout))
    assert {f"total_ratio_{s}" for s in STANDARD_IDS} <= set(frame.columns)
    for _, row in frame.iterrows():
        assert row[f"total_ratio_{row['governing']}"] == max(row[f"total_ratio_{s}"] for s in STANDARD_IDS)
    bad = CliRunner().invoke(app, ["evaluate", STATION, "--standard", "all", "--csv", "keep-out"])
    assert bad.exit_code == 2 and bad.stderr.startswith('Error: --csv: "keep-out" is not available')


def test_site_review_fits_100_columns_and_says_what_clears_a_violation():
    r = CliRunner().invoke(app, ["site", str(DEMO / "event_field_day.toml")])
    assert r.exit_code == 1
    assert max(len(line) for line in r.stdout.splitlines()) <= 100
    assert "What would clear each violation" in r.stdout
    doc = json.loads(CliRunner().invoke(app, ["site", str(DEMO / "event_field_day.toml"), "--json"]).stdout)
    assert {x["transmitter"] for x in doc["remedies"]} == {t["transmitter"] for t in doc["transmitters"]}


def test_other_commands_fit_100_columns():
    for args in (["limits", "--compare", "14.2"], ["limits", "fcc", "432"],
                 ["line", "--pep-w", "1500", "--freq-mhz", "14.2", "--cable", "rg-213", "--length-m", "30",
                  "--swr", "3"]):
        r = CliRunner().invoke(app, args)
        assert max(len(line) for line in r.stdout.splitlines()) <= 100, args
