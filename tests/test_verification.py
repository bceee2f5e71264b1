"""Verification states of published figures, and how they travel into every output.

The states themselves are rfsafe's own bookkeeping (rfsafe/verification.py); which rows are read is
checked against the project's published-values reference in test_limits.py, test_power.py and
test_feedline_catalogue.py. Here: the classification, and that each state reaches the JSON, the
terminal and the worksheet unchanged, with nothing marked checked that was not.
"""

import json
from pathlib import Path

import pytest
from typer.testing import CliRunner

from rfsafe.assess import assess
from rfsafe.cli import app
from rfsafe.station import load_station
from rfsafe.verification import LEGEND, MARKERS, STATES, figure_checks, marker, state_of, weakest

DATA = Path(__file__).parent / "data"
BASE = (DATA / "station_minimal.toml").read_text()


@pytest.mark.parametrize("text,state", [
    ("read in 47 CFR 1.1310(e)(1), Table 1 (eCFR text)", "published text"),
    ("read in a reproduction of OET Bulletin 65 Supplement B: Table 2", "reproduction"),
    ("partly read in a reproduction of MIL-C-17G: 3700 V rms", "partly"),
    ("not confirmed", "not confirmed"),
    ("from memory", "not confirmed"),         # anything else can never read as checked
    ("", "not confirmed"),
    (None, "not confirmed"),
    ("user rating (not a published figure)", "not confirmed"),
])
def test_state_of_the_four_forms(text, state):
    assert state_of(text) == state
    assert marker(text) == MARKERS[state]


def test_weakest_and_legend():
    assert weakest(["read in X", "read in a reproduction of Y: z", "not confirmed"]) == "not confirmed"
    assert weakest(["read in X", "partly read in a reproduction of Y: z"]) == "partly"
    assert weakest([]) == "not confirmed"
    for state in STATES:
        assert f"{MARKERS[state]} = " in LEGEND


def _station(tmp_path, text):
    path = tmp_path / "s.toml"
    path.write_text(text)
    return assess(load_station(path))


def test_evaluation_carries_each_rows_verification(tmp_path):
    res = _station(tmp_path, BASE)
    (c,) = res.configurations
    # 47 CFR 1.1310 Table 1 was read in the eCFR text (published-values reference)
    assert all(cd.limit_verification.startswith("read in 47 CFR 1.1310(e)(1)") for cd in c.compliance_distances)
    assert all(x.limit_verification.startswith("read in 47 CFR 1.1310(e)(1)") for pl in res.places for x in pl.exposures)
    # SSB without processing: OET 65 Supplement B Table 2, read in two reproductions
    assert state_of(c.duty_factor_verification) == "reproduction"
    assert c.line.cable_verification.startswith("partly read")          # RG-213: power rating from memory
    heating = next(p for p in c.line.part_stresses if p.part == "line.heating")
    assert state_of(heating.rating_verification) == "not confirmed"
    checks = res.data_verification
    assert checks == figure_checks(res.configurations, res.places, res.exemption)
    assert {f.kind for f in checks} >= {"limit", "duty factor", "cable"}
    for f in checks:
        assert f.state == state_of(f.verification)
        assert f.used_by


def test_declared_duty_factor_and_voltage_rating_are_not_confirmed(tmp_path):
    text = BASE.replace('mode = "ssb"', 'mode = "ssb"\nduty_factor = 0.3').replace(
        'length_m = 20.0', 'length_m = 20.0\nmax_voltage_v_peak = 2000.0')
    (c,) = _station(tmp_path, text).configurations
    assert state_of(c.duty_factor_verification) == "not confirmed"
    assert "declared in the station file" in c.duty_factor_verification
    assert "voltage rating declared in the station file" in c.line.cable_verification


def test_json_has_the_verification_and_case_fields(tmp_path):
    path = tmp_path / "s.toml"
    path.write_text(BASE)
    result = CliRunner().invoke(app, ["evaluate", str(path), "--json", "--no-remedies"])
    data = json.loads(result.stdout)
    c = data["configurations"][0]
    assert c["duty_factor_verification"].startswith("read in a reproduction of FCC OET Bulletin 65 Supplement B")
    assert all(cd["limit_verification"] for cd in c["compliance_distances"])
    assert all(x["limit_verification"] and x["near_field_case"] for pl in data["places"] for x in pl["exposures"])
    assert c["line"]["cable_verification"] and c["line"]["largest_tolerable_swr_case"]
    assert {f["state"] for f in data["data_verification"]} <= set(STATES)
    assert data["exemption_case"] == "evaluated"


def test_terminal_shows_markers_and_the_legend(tmp_path):
    path = tmp_path / "s.toml"
    path.write_text(BASE)
    result = CliRunner().invoke(app, ["evaluate", str(path), "--no-remedies", "--wide"])
    assert "0.2 R" in result.stdout                # duty factor read in a reproduction
    assert LEGEND.removeprefix("check: ") in " ".join(result.stdout.split())
    assert "published figures used:" in result.stdout
    assert "[thresholds: T]" in result.stdout      # 47 CFR 1.1307(b)(3)(i)(C) Table 1, read in the eCFR


def test_exemption_case_says_why_there_is_no_exemption(tmp_path):
    assert _station(tmp_path, BASE).exemption_case == "evaluated"
    assert _station(tmp_path, BASE.replace('standard = "fcc"', 'standard = "icnirp2020"')).exemption_case == "not_fcc"


def test_near_field_case(tmp_path):
    # a place 2.2 m from the centre of a 14.2 MHz dipole (10 m up) is inside lambda/2pi = 3.36 m: a
    # far-field estimate only (no wire model); the garden 10 m away is outside
    res = _station(tmp_path, BASE.replace("x_m = 3.0\ny_m = 0.0\nheight_m = 1.5", "x_m = 2.0\ny_m = 0.0\nheight_m = 9.0"))
    cases = {pl.label: pl.exposures[0].near_field_case for pl in res.places}
    assert cases == {"Garden": "outside_near_field", "Shack": "no_near_field_model"}


def test_eu1999_evaluates_a_controlled_place_against_the_public_levels(tmp_path):
    # 1999/519/EC has no occupational tier: rfsafe evaluates the controlled "Shack" against the
    # general-public reference levels and says so (documented choice, standards_notes/eu1999.md).
    res = _station(tmp_path, BASE.replace('standard = "fcc"', 'standard = "eu1999"'))
    shack = next(pl for pl in res.places if pl.label == "Shack")
    garden = next(pl for pl in res.places if pl.label == "Garden")
    assert "no occupational tier" in shack.environment_label
    x = shack.exposures[0]
    # ICNIRP 1998 Table 7 / 1999/519/EC at 14.2 MHz (10-400 MHz row): 28 V/m, 0.073 A/m, 2 W/m^2 (READ-2)
    assert (x.e_field_limit_v_m, x.h_field_limit_a_m, x.power_density_limit_w_m2) == (28, 0.073, 2)
    assert (garden.exposures[0].power_density_limit_w_m2) == 2
    assert state_of(x.limit_verification) == "reproduction"
    assert res.exemption is None and res.exemption_case == "not_fcc"


def test_near_field_case_computed_for_a_wire_antenna():
    # the wire demo has places inside lambda/2pi of its wire antenna: the moment-method result is used
    res = assess(load_station(Path(__file__).parent.parent / "reports_demo" / "demo_wire_station.toml"))
    cases = {x.near_field_case for pl in res.places for x in pl.exposures}
    assert "computed" in cases
    for pl in res.places:
        for x in pl.exposures:
            assert (x.near_field_case == "computed") == (x.near_field_ratio is not None)


def test_ask_answers_carry_the_verification_of_their_limits_and_duty_factor():
    r = CliRunner().invoke(app, ["ask", "--power-w", "100", "--mode", "ssb", "--freq-mhz", "14.2",
                                 "--gain-dbi", "2.15", "--json"])
    (a,) = json.loads(r.stdout)["answers"]
    # 47 CFR 1.1310 Table 1 (eCFR text) and OET 65 Supplement B Table 2 (two reproductions)
    assert all(v.startswith("read in 47 CFR 1.1310(e)(1)") for v in a["limit_verification"].values())
    assert state_of(a["duty_factor_verification"]) == "reproduction"
    r = CliRunner().invoke(app, ["ask", "--power-w", "100", "--freq-mhz", "14.2", "--gain-dbi", "2.15",
                                 "--standard", "ieee2019", "--wide"])
    assert "limits: controlled ?, uncontrolled ?" in r.stdout    # IEEE C95.1-2019: nothing could be read
