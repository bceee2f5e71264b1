"""Station files: strict validation with one exact message per problem, nothing written."""

from pathlib import Path

import pytest
from typer.testing import CliRunner

from rfsafe.cli import app
from rfsafe.errors import InputError
from rfsafe.station import load_station

BASE = (Path(__file__).parent / "data" / "station_minimal.toml").read_text()

# (what is broken, replacement (old, new) in the base file, exact message after "Error: ")
CASES = [
    ("TOML syntax error", ('pep_w = 100.0', 'pep_w = = 100.0'),
     "{path}: TOML syntax error: Invalid value (at line 11, column 9)"),
    ("unknown key (typo)", ('pep_w = 100.0', 'pep_watts = 100.0'),
     "transmitters[0].pep_watts: is not a known key (accepted keys: id, description, pep_w)"),
    ("missing key", ('pep_w = 100.0', ''),
     "transmitters[0].pep_w: is required but missing"),
    ("wrong type: bool for a number", ('pep_w = 100.0', 'pep_w = true'),
     "transmitters[0].pep_w: true must be a number"),
    ("wrong type: string for a number", ('length_m = 20.0', 'length_m = "20"'),
     'feedlines[0].length_m: "20" must be a number'),
    ("negative power", ('pep_w = 100.0', 'pep_w = -5.0'),
     "transmitters[0].pep_w: -5.0 is out of range (accepted: > 0)"),
    ("SWR below 1", ('swr = 1.5', 'swr = 0.8'),
     "configurations[0].swr: 0.8 is out of range (accepted: >= 1)"),
    ("duty factor above 1", ('swr = 1.5', 'swr = 1.5\nduty_factor = 1.5'),
     "configurations[0].duty_factor: 1.5 is out of range (accepted: <= 1)"),
    ("frequency outside the standard", ('freq_mhz = 14.2', 'freq_mhz = 0.1'),
     None),  # message from rfsafe.limits, checked to name the field below
    ("dangling antenna reference", ('antenna = "dipole-80"', 'antenna = "yagi-3"'),
     'configurations[0].antenna: "yagi-3" is not a declared antenna (declared: "dipole-80", "beam")'),
    ("dangling transmitter reference", ('transmitter = "tx"', 'transmitter = "tx2"'),
     'configurations[0].transmitter: "tx2" is not a declared transmitter (declared: "tx")'),
    ("duplicate id", ('id = "beam"', 'id = "dipole-80"'),
     'antennas[1].id: "dipole-80" is a duplicate id (each id in antennas must be unique)'),
    ("unknown environment", ('environment = "controlled"', 'environment = "staff"'),
     "places[1].environment: \"staff\" is not accepted (accepted: 'controlled' or 'uncontrolled')"),
    ("unknown standard", ('standard = "fcc"', 'standard = "fcc2"'),
     "standard: \"fcc2\" is not accepted (accepted: 'fcc', 'icnirp2020', 'icnirp1998', 'ieee2019', 'sc6' or 'eu1999')"),
    ("unknown cable class", ('cable = "rg-213"', 'cable = "rg-999"'),
     None),  # message from rfsafe.feedline, checked to name the field below
    ("unknown mode", ('mode = "ssb"', 'mode = "olivia-x"'),
     'configurations[0].mode: "olivia-x" is not a known mode (accepted: "cw", "ssb", "ssb-processed", '
     '"fm", "am", "am-full", "rtty", "afsk", "digital", "carrier")'),
    ("gain given twice", ('gain_dbi = 8.0', 'gain_dbi = 8.0\ngain_dbd = 5.85'),
     "antennas[1].gain_dbd: give either gain_dbi or gain_dbd, not both"),
    ("SWR and load together", ('swr = 1.5', 'swr = 1.5\nload_r_ohm = 50.0'),
     "configurations[0].swr: give either swr or load_r_ohm/load_x_ohm, not both"),
    ("custom-cable key on a catalogue cable", ('length_m = 20.0', 'length_m = 20.0\nz0_ohm = 75.0'),
     'feedlines[0].z0_ohm: 75.0 applies only to cable = "custom" (this feedline uses "rg-213")'),
    ("negative length", ('length_m = 20.0', 'length_m = -1.0'),
     "feedlines[0].length_m: -1.0 is out of range (accepted: >= 0)"),
    ("date as a string", ('evaluation_date = 2026-01-15', 'evaluation_date = "2026-01-15"'),
     'evaluation_date: "2026-01-15" must be a TOML date (YYYY-MM-DD, no quotes)'),
    ("beam without gain", ('gain_dbi = 8.0', ''),
     'antennas[1].gain_dbi: is required for an antenna of kind "beam" (give gain_dbi or gain_dbd)'),
    ("infinite power", ('pep_w = 100.0', 'pep_w = inf'),
     "transmitters[0].pep_w: inf must be a finite number"),
    ("NaN frequency", ('freq_mhz = 14.2', 'freq_mhz = nan'),
     "configurations[0].freq_mhz: nan must be a finite number"),
    ("place on the antenna", ('x_m = 10.0\ny_m = 0.0\nheight_m = 1.5', 'x_m = 0.0\ny_m = 0.0\nheight_m = 10.0'),
     "places[0]: \"Garden\" is at the position of antenna 'dipole-80': a place must be away from the antenna"),
    ("section that must be an array of tables", ('[[transmitters]]\nid = "tx"\npep_w = 100.0',
                                                  'transmitters = "tx"'),
     'transmitters: "tx" must be an array'),
    ("coax connector at both ends of ladder line", ('cable = "rg-213"', 'cable = "window-450"\nconnector = "uhf"'),
     'feedlines[0].connector: "uhf" puts a coax connector at both ends of a balanced line, which usually has none: '
     'declare the end that has one with connector_at_transmitter or connector_at_antenna (or "none")'),
    ("unknown connector at one end", ('length_m = 20.0', 'length_m = 20.0\nconnector_at_antenna = "pl"'),
     'feedlines[0].connector_at_antenna: "pl" is not a known connector series (known: "uhf", "n", "bnc")'),
    ("balun ratio written the wrong way round",
     ('length_m = 20.0', 'length_m = 20.0\nbalun = { ratio = "1:4", location = "antenna" }'),
     'feedlines[0].balun.ratio: "1:4" is not a balun ratio (accepted: "n:1" with the balanced side first, '
     '1 <= n <= 64, e.g. "1:1", "4:1", "9:1")'),
    ("T settings incomplete", ('swr = 1.5', 'load_r_ohm = 20.0\nload_x_ohm = -30.0\n'
                                            'tuner = { kind = "t", c1_pf = 100.0 }'),
     "configurations[0].tuner.l_uh: is required but missing (give all three T settings c1_pf, l_uh, c2_pf, or none)"),
]


def _write(tmp_path: Path, old_new) -> Path:
    old, new = old_new
    assert old in BASE, old
    path = tmp_path / "station.toml"
    path.write_text(BASE.replace(old, new, 1))
    return path


def test_base_file_is_valid():
    loaded = load_station(Path(__file__).parent / "data" / "station_minimal.toml")
    assert loaded.model.configurations[0].id == "hf"
    assert len(loaded.sha256) == 64


@pytest.mark.parametrize("what, old_new, message", CASES, ids=[c[0] for c in CASES])
@pytest.mark.parametrize("command", ["check", "evaluate"])
def test_malformed_station(tmp_path, what, old_new, message, command):
    path = _write(tmp_path, old_new)
    before = sorted(p.name for p in tmp_path.iterdir())
    result = CliRunner().invoke(app, [command, str(path)])
    assert result.exit_code == 2, (what, result.stdout, result.stderr)
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("Error: "), result.stderr
    assert result.stdout == ""
    if message is not None:
        assert lines[0] == "Error: " + message.format(path=path)
    elif what.startswith("frequency"):
        assert lines[0].startswith("Error: configurations[0].freq_mhz: 0.1")
    else:
        assert lines[0].startswith('Error: feedlines[0].cable: "rg-999"')
    assert sorted(p.name for p in tmp_path.iterdir()) == before  # nothing written


def test_missing_file_is_input_error(tmp_path):
    with pytest.raises(InputError, match=r'^FILE: ".*nope.toml" does not exist$'):
        load_station(tmp_path / "nope.toml")


def test_standard_override(tmp_path):
    path = tmp_path / "s.toml"
    path.write_text(BASE)
    assert load_station(path, standard="icnirp2020").model.standard == "icnirp2020"
    result = CliRunner().invoke(app, ["check", str(path), "--standard", "nope"])
    assert result.exit_code == 2
    assert result.stderr.startswith('Error: --standard: "nope" is not accepted')


def test_init_writes_a_file_that_evaluates(tmp_path):
    path = tmp_path / "starter.toml"
    runner = CliRunner()
    assert runner.invoke(app, ["init", str(path)]).exit_code == 0
    again = runner.invoke(app, ["init", str(path)])
    assert again.exit_code == 2 and "already exists (use --force to overwrite)" in again.stderr
    result = runner.invoke(app, ["evaluate", str(path), "--json"])
    assert result.exit_code in (0, 1), result.stderr


def test_schema_is_json_schema():
    import json

    result = CliRunner().invoke(app, ["schema"])
    assert result.exit_code == 0
    schema = json.loads(result.stdout)
    assert schema["$schema"].startswith("https://json-schema.org/")
    assert "transmitters" in schema["required"]
    assert schema["additionalProperties"] is False


def _wire_station(dy_m: float, offset_m: float) -> str:
    """A 20 m wire dipole at y = dy_m and a place offset_m above its middle (invented test geometry)."""
    return f"""
standard = "fcc"
[[transmitters]]
id = "tx"
pep_w = 100.0
[[feedlines]]
id = "line"
cable = "rg-213"
length_m = 10.0
[[antennas]]
id = "dipole"
kind = "wire"
x_m = 0.0
y_m = {dy_m!r}
height_m = 8.0
[antennas.wire]
ground = "free-space"
[[antennas.wire.wires]]
label = "dipole"
points_m = [[-10.05, {dy_m!r}, 8.0], [10.05, {dy_m!r}, 8.0]]
radius_m = 0.001
[[antennas.wire.feeds]]
wire = "dipole"
position = 0.5
[[configurations]]
id = "c"
freq_mhz = 7.1
transmitter = "tx"
feedline = "line"
antenna = "dipole"
mode = "cw"
[[places]]
label = "P"
x_m = 3.0
y_m = {dy_m!r}
height_m = {8.0 + offset_m!r}
environment = "uncontrolled"
"""


@pytest.mark.parametrize("dy_m", [0.0, 12.0, 12345.0])
def test_on_antenna_test_does_not_depend_on_where_the_station_sits(tmp_path, dy_m):
    # A place inside the 1 mm conductor is refused, one just outside it is accepted, wherever the
    # same geometry sits in the station frame (issue: the test used absolute coordinates).
    from rfsafe.station import load_station

    inside = tmp_path / "inside.toml"
    inside.write_text(_wire_station(dy_m, 1e-16))
    with pytest.raises(InputError, match="lies inside a conductor of antenna 'dipole'"):
        load_station(inside)
    outside = tmp_path / "outside.toml"
    outside.write_text(_wire_station(dy_m, 0.01))
    load_station(outside)


def test_ladder_line_balun_and_t_tuner_in_a_station_file(tmp_path):
    """Ladder line with no connectors, a 4:1 balun at the transmitter and a rated T tuner: the evaluation carries
    the balun, the per-end connectors, "not rated" for the unrated line, and the part that fails first."""
    text = BASE.replace('cable = "rg-213"', 'cable = "window-450"\nconnector_at_transmitter = "none"\n'
                        'balun = { ratio = "4:1", location = "transmitter", power_rating_w = 1000.0, loss_db = 0.2 }')
    text = text.replace("swr = 1.5", 'load_r_ohm = 600.0\nload_x_ohm = -900.0\ntuner = { kind = "t", '
                        "capacitor_v_peak_rating = 3000.0, inductor_a_rms_rating = 8.0, "
                        "capacitor_range_pf = [10.0, 500.0], inductor_range_uh = [0.1, 30.0] }")
    path = tmp_path / "station.toml"
    path.write_text(text)
    from rfsafe.assess import assess
    line = assess(load_station(path)).configurations[0].line
    assert line.balun is not None and line.balun.label == "4:1" and line.balun.location == "transmitter"
    assert (line.connector_at_transmitter, line.connector_at_antenna) == (None, None)
    assert [p.name for p in line.tuner_parts] == ["C1", "L1", "C2"]
    status = {p.part: p.status for p in line.part_stresses}
    assert status["line"] == "not rated" and status["balun"] in ("ok", "EXCEEDED")
    assert line.first_failure_part in status and line.first_failure
