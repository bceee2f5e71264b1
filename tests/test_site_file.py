"""Site file validation: malformed inputs give one exact error line, exit 2, and nothing written."""

from __future__ import annotations

import math

import pytest
from typer.testing import CliRunner

from rfsafe.cli import app
from rfsafe.errors import InputError
from rfsafe.site import DEFAULT_HEIGHTS_M, load_site

BASE = '''title = "Test site"
evaluation_date = 2026-07-18
standard = "fcc"
grid_spacing_m = 0.5
boundary = [[0.0, 0.0], [40.0, 0.0], [40.0, 30.0], [0.0, 30.0]]

[[stations]]
name = "A"
x_m = 10.0
y_m = 10.0

  [[stations.transmitters]]
  id = "tx"
  pep_w = 100.0

  [[stations.feedlines]]
  id = "coax"
  cable = "rg-213"
  length_m = 10.0

  [[stations.antennas]]
  id = "ant"
  kind = "isotropic"
  height_m = 1.5
  aperture_m = 0.3

  [[stations.configurations]]
  id = "c1"
  freq_mhz = 14.2
  transmitter = "tx"
  feedline = "coax"
  antenna = "ant"
  mode = "fm"

[[areas]]
label = "Rope"
kind = "no-access"
polygon = [[7.0, 7.0], [13.0, 7.0], [13.0, 13.0], [7.0, 13.0]]

[[areas]]
label = "Lawn"
kind = "public"
polygon = [[20.0, 0.0], [40.0, 0.0], [40.0, 30.0], [20.0, 30.0]]
'''

STATION_FILE = '''title = "Other"
[[transmitters]]
id = "rig"
pep_w = 50.0
[[feedlines]]
id = "line"
cable = "rg-8x"
length_m = 5.0
[[antennas]]
id = "vert"
kind = "quarter-wave-vertical"
x_m = 1.0
y_m = 2.0
height_m = 4.0
polarisation = "vertical"
[[configurations]]
id = "2m"
freq_mhz = 145.0
transmitter = "rig"
feedline = "line"
antenna = "vert"
mode = "fm"
'''

BEAM = ('kind = "beam"\n  gain_dbi = 20.0\n  front_to_back_db = 20.0\n  beamwidth_h_deg = 70.0\n'
        '  beamwidth_v_deg = 70.0\n  use_pattern = true')

CASES = [
    ("unknown top-level key", ('title = "Test site"', 'title = "Test site"\ncolour = "red"'),
     "colour: is not a known key (accepted keys: title, site, evaluator, evaluation_date, standard, "
     "ground_reflection, heights_m, grid_spacing_m, boundary, stations, areas)"),
    ("boundary missing", ('boundary = [[0.0, 0.0], [40.0, 0.0], [40.0, 30.0], [0.0, 30.0]]\n', ''),
     "boundary: is required but missing"),
    ("boundary on one line", ('[[0.0, 0.0], [40.0, 0.0], [40.0, 30.0], [0.0, 30.0]]',
                              '[[0.0, 0.0], [10.0, 0.0], [20.0, 0.0]]'),
     "boundary: [[0.0, 0.0], [10.0, 0.0], [20.0, 0.0]] encloses no area (vertices on one line)"),
    ("boundary vertex with three numbers", ('[40.0, 30.0], [0.0, 30.0]]', '[40.0, 30.0, 1.0], [0.0, 30.0]]'),
     "boundary[2]: [40.0, 30.0, 1.0] must be a pair of numbers [x_m, y_m]"),
    ("negative grid spacing", ("grid_spacing_m = 0.5", "grid_spacing_m = -1.0"),
     "grid_spacing_m: -1.0 is out of range (accepted: > 0)"),
    ("grid spacing as text", ("grid_spacing_m = 0.5", 'grid_spacing_m = "fine"'),
     'grid_spacing_m: "fine" must be a number'),
    ("negative height", ("grid_spacing_m = 0.5", "grid_spacing_m = 0.5\nheights_m = [0.5, -1.0]"),
     "heights_m[1]: -1.0 is out of range (accepted: >= 0 m above ground)"),
    ("unknown area kind", ('kind = "public"', 'kind = "visitors"'),
     "areas[1].kind: \"visitors\" is not accepted (accepted: 'public', 'operators' or 'no-access')"),
    ("duplicate area label", ('label = "Lawn"', 'label = "Rope"'),
     'areas[1].label: "Rope" is a duplicate label (areas[0] has it; each area label must be unique)'),
    ("reserved area label", ('label = "Lawn"', 'label = "open ground"'),
     'areas[1].label: "open ground" is reserved for ground in no area (choose another label)'),
    ("station without feedlines", ('  [[stations.feedlines]]\n  id = "coax"\n  cable = "rg-213"\n'
                                   '  length_m = 10.0\n', ''),
     'stations[0].feedlines: is required (give the station\'s tables inline, or file = "<station file>")'),
    ("file and inline tables", ('name = "A"', 'name = "A"\nfile = "other.toml"'),
     'stations[0].transmitters: applies only to an inline station (this station is read from "other.toml")'),
    ("unknown station key", ('name = "A"', 'name = "A"\nheight_m = 3.0'),
     "stations[0].height_m: is not a known key (accepted keys: name, description, x_m, y_m, file, "
     "transmitters, feedlines, antennas, configurations, exact_line_loss)"),
    ("unknown mode", ('mode = "fm"', 'mode = "morse"'),
     'stations[0].configurations[0].mode: "morse" is not a known mode (accepted: "cw", "ssb", '
     '"ssb-processed", "fm", "am", "am-full", "rtty", "afsk", "digital", "carrier")'),
    ("undeclared antenna", ('antenna = "ant"', 'antenna = "yagi"'),
     'stations[0].configurations[0].antenna: "yagi" is not a declared antenna (declared: "ant")'),
    ("beam gain larger than its lobe allows", ('kind = "isotropic"', BEAM),
     "stations[0].antennas[0].gain_dbi: 20.0 is more than a main lobe of 70 x 70 deg with 20 dB "
     "front-to-back can have (at most 9.19 dBi in rfsafe's beam model); check that the gain is in dBi "
     "(not dBd) and the beamwidths"),
    ("slash in a station name", ('name = "A"', 'name = "A/B"'),
     'stations[0].name: "A/B" must not contain "/" (used for station/transmitter)'),
    ("date in quotes", ("evaluation_date = 2026-07-18", 'evaluation_date = "18 July"'),
     'evaluation_date: "18 July" must be a TOML date (YYYY-MM-DD, no quotes)'),
]


def _write(tmp_path, text, name="site.toml"):
    p = tmp_path / name
    p.write_text(text)
    return p


def test_base_site_is_valid_and_compliant(tmp_path):
    site = _write(tmp_path, BASE)
    r = CliRunner().invoke(app, ["site", str(site)])
    assert r.exit_code == 0, r.stderr
    assert "VERDICT: COMPLIES" in r.stdout


@pytest.mark.parametrize("what, edit, message", CASES, ids=[c[0] for c in CASES])
def test_malformed_site_file(tmp_path, what, edit, message):
    old, new = edit
    assert old in BASE
    site = _write(tmp_path, BASE.replace(old, new, 1))
    pdf, csv = tmp_path / "out.pdf", tmp_path / "out.csv"
    r = CliRunner().invoke(app, ["site", str(site), "-o", str(pdf), "--csv", str(csv)])
    assert r.exit_code == 2
    assert r.stderr == f"Error: {message}\n"
    assert r.stdout == ""
    assert sorted(x.name for x in tmp_path.iterdir()) == ["site.toml"]   # nothing written, no temp files
    with pytest.raises(InputError) as exc:
        load_site(site)
    assert str(exc.value) == message


def test_duplicate_station_name(tmp_path):
    site = _write(tmp_path, BASE + '\n[[stations]]\nname = "A"\nfile = "other.toml"\n')
    with pytest.raises(InputError) as exc:
        load_site(site)
    assert str(exc.value) == ('stations[1].name: "A" is a duplicate name (stations[0] has it; each station '
                              'name must be unique)')


def test_missing_station_file(tmp_path):
    site = _write(tmp_path, BASE + '\n[[stations]]\nname = "B"\nfile = "nowhere.toml"\n')
    r = CliRunner().invoke(app, ["site", str(site)])
    assert r.exit_code == 2
    assert r.stderr == 'Error: stations[1].file: "nowhere.toml" does not exist (a path relative to the site file)\n'


def test_error_inside_a_station_file_names_the_station_and_file(tmp_path):
    _write(tmp_path, STATION_FILE.replace('mode = "fm"', 'mode = "fm"\npower = 3'), "other.toml")
    site = _write(tmp_path, BASE + '\n[[stations]]\nname = "B"\nfile = "other.toml"\n')
    with pytest.raises(InputError) as exc:
        load_site(site)
    assert str(exc.value) == ('stations[1] (file "other.toml"): configurations[0].power: is not a known key '
                              '(accepted keys: id, description, freq_mhz, transmitter, feedline, antenna, mode, '
                              'duty_factor, schedule, swr, load_r_ohm, load_x_ohm, tuner)')


def test_toml_syntax_error(tmp_path):
    site = _write(tmp_path, BASE.replace("grid_spacing_m = 0.5", "grid_spacing_m = "))
    r = CliRunner().invoke(app, ["site", str(site)])
    assert r.exit_code == 2
    assert r.stderr.startswith(f"Error: {site}: TOML syntax error: ")


def test_station_file_is_moved_onto_the_site(tmp_path):
    """A referenced station's antennas sit at the site position plus their own offsets."""
    from rfsafe.site import assess_site

    _write(tmp_path, STATION_FILE, "other.toml")
    site = _write(tmp_path, BASE + '\n[[stations]]\nname = "B"\nfile = "other.toml"\nx_m = 30.0\ny_m = 20.0\n')
    loaded = load_site(site)
    assert loaded.model.heights_m == list(DEFAULT_HEIGHTS_M)   # the file gives none: the default applies
    assert loaded.sources[1][0] == "other.toml" and len(loaded.sources[1][1]) == 64
    res = assess_site(loaded)
    b = next(e for e in res.emitters if e.transmitter == "B")
    assert (b.x_m, b.y_m, b.height_m) == (31.0, 22.0, 4.0)
    assert b.pattern.kind == "isotropic"   # use_pattern not set: peak gain in every direction (conservative)
    assert b.pattern.peak_gain_dbi == pytest.approx(5.16)
    # the site's standard and ground reflection apply to the station file
    assert b.ground_factor == 4.0
    assert math.isfinite(b.limit_w_m2[0])
