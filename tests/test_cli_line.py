"""`rfsafe line`: exit codes, exact error lines, JSON shape."""

import json
import math

import pytest
from typer.testing import CliRunner

from rfsafe.cli import app

BASE = ["line", "--pep-w", "100", "--freq-mhz", "14.2", "--length-m", "30"]


def run(args):
    return CliRunner().invoke(app, args)


def test_json_shape_and_values():
    r = run(BASE + ["--cable", "rg-213", "--load-ohm", "12-35j", "--tuner", "l", "--json"])
    assert r.exit_code == 0, r.stderr
    doc = json.loads(r.stdout)
    for key in ("line_voltage_v_peak", "line_current_a_peak", "total_loss_db", "matched_loss_db",
                "swr_at_transmitter", "swr_at_antenna", "power_at_antenna_w"):
        assert isinstance(doc[key], float)
    assert set(doc["input_impedance_ohm"]) == {"re", "im"}
    parts = doc["tuner_parts"]
    assert parts and {"name", "value_pf", "value_uh", "voltage_v_peak", "current_a_rms"} <= set(parts[0])
    assert doc["exceeded_parts"] == []
    # power at the antenna from the reported total loss (10 log power ratio)
    assert doc["power_at_antenna_w"] == pytest.approx(100 * 10 ** (-doc["total_loss_db"] / 10), rel=1e-12)


def test_matched_line_table_mode():
    """Common practice: 50 ohm on 50 ohm line -> SWR 1; peak voltage sqrt(2 P Z0) = 100 V at 100 W."""
    r = run(BASE + ["--cable", "rg-213", "--load-ohm", "50", "--json"])
    doc = json.loads(r.stdout)
    assert doc["swr_at_antenna"] == pytest.approx(1.0)
    assert doc["line_voltage_v_peak"] == pytest.approx(math.sqrt(2 * 100 * 50), rel=1e-9)
    t = run(BASE + ["--cable", "rg-213", "--swr", "2"])
    assert t.exit_code == 0
    assert "max line voltage" in t.stdout and "Caution:" in t.stderr


def test_custom_line_and_exceeded_exit_1():
    r = run(["line", "--pep-w", "1500", "--freq-mhz", "7.1", "--length-m", "20", "--z0-ohm", "50",
             "--loss-db-per-100m", "1.5", "--vf", "0.66", "--swr", "3", "--connector", "uhf", "--json"])
    assert r.exit_code == 1
    assert "connector.antenna" in json.loads(r.stdout)["exceeded_parts"]


def test_duty_factor_reduces_heating_only():
    a = json.loads(run(BASE + ["--cable", "rg-58", "--swr", "3", "--json"]).stdout)
    b = json.loads(run(BASE + ["--cable", "rg-58", "--swr", "3", "--duty-factor", "0.25", "--json"]).stdout)
    assert b["line_voltage_v_peak"] == a["line_voltage_v_peak"]
    assert b["line_dissipation_avg_w"] == pytest.approx(0.25 * a["line_dissipation_avg_w"], rel=1e-12)


KNOWN = ('"rg-58", "rg-8x", "rg-213", "rg-174", "twinlead-300", "window-450", "open-wire-600", '
         'or "custom" with z0_ohm, loss_db_per_100m, velocity_factor')


@pytest.mark.parametrize("extra,message", [
    (["--cable", "rg-213", "--swr", "0.8"], "--swr: 0.8 must be a finite number >= 1 and <= 1e+06"),
    (["--cable", "rg-213", "--swr", "2", "--load-ohm", "50"],
     "--swr/--load-ohm: both given; give exactly one (SWR at the antenna end, or the antenna-end impedance)"),
    (["--cable", "rg-213"],
     "--swr/--load-ohm: none given; give exactly one (SWR at the antenna end, or the antenna-end impedance)"),
    (["--cable", "rg-213", "--load-ohm", "-5+3j"], "--load-ohm: -5+3j must have a resistance > 0 ohm (a passive antenna)"),
    (["--cable", "rg-213", "--load-ohm", "12-i35"],
     '--load-ohm: "12-i35" is not an impedance (accepted: R, R+jX, R-jX, R+Xj or R-Xj in ohm, '
     'e.g. 50, 600-j900, 73+42.5j)'),
    (["--cable", "rg-213", "--load-ohm", "12+-j35"],
     '--load-ohm: "12+-j35" is not an impedance (accepted: R, R+jX, R-jX, R+Xj or R-Xj in ohm, '
     'e.g. 50, 600-j900, 73+42.5j)'),
    (["--cable", "rg-213", "--load-ohm", "1e999"], '--load-ohm: "1e999" is not a finite impedance'),
    (["--cable", "rg-213", "--load-ohm", "-j10"], "--load-ohm: 0-10j must have a resistance > 0 ohm (a passive antenna)"),
    (["--cable", "rg-9999", "--swr", "2"], f'--cable: "rg-9999" is not a known cable class (known: {KNOWN})'),
    (["--swr", "2"], "--cable: none given; give --cable CLASS or --z0-ohm, --loss-db-per-100m and --vf"),
    (["--cable", "rg-213", "--z0-ohm", "50", "--swr", "2"],
     '--cable: "rg-213" cannot be combined with --z0-ohm (give a class or a custom line)'),
    (["--z0-ohm", "50", "--loss-db-per-100m", "2", "--swr", "2"],
     "--vf: missing; a custom line needs --z0-ohm, --loss-db-per-100m and --vf"),
    (["--z0-ohm", "50", "--loss-db-per-100m", "2", "--vf", "1.3", "--swr", "2"], "--vf: 1.3 must be > 0 and <= 1"),
    (["--cable", "rg-213", "--swr", "2", "--duty-factor", "1.5"], "--duty-factor: 1.5 must be > 0 and <= 1"),
    (["--cable", "rg-213", "--load-ohm", "12-35j", "--tuner", "x"],
     '--tuner: "x" is not a known network (known: "l", "pi", "t")'),
    (["--cable", "window-450", "--load-ohm", "600-j900", "--connector", "uhf"],
     '--connector: "uhf" puts a coax connector at both ends of a balanced line, which usually has none: declare the '
     'end that has one with connector_at_transmitter or connector_at_antenna (or "none")'),
    (["--cable", "rg-213", "--load-ohm", "50", "--connector-ant", "sma"],
     '--connector-ant: "sma" is not a known connector series (known: "uhf", "n", "bnc")'),
    (["--cable", "rg-213", "--load-ohm", "50", "--tuner", "t", "--capacitor-range-pf", "500,10"],
     '--capacitor-range-pf: "500,10" is not a range (accepted: MIN,MAX in pF with 0 < MIN < MAX)'),
    (["--cable", "rg-213", "--load-ohm", "50", "--tuner", "pi", "--c1-pf", "100"], "--c1-pf: 100.0 applies to --tuner t only"),
    (["--cable", "rg-213", "--load-ohm", "50", "--tuner", "t", "--c1-pf", "100"],
     "--l-uh: is required but missing (give all three T settings c1_pf, l_uh, c2_pf, or none)"),
    (["--cable", "rg-213", "--load-ohm", "10-300j", "--length-m", "0", "--tuner", "t", "--q", "20"],
     "--q: 20.0 must be > 30, the least loaded Q at which a high-pass T (series C, shunt L, series C) matches "
     "10-300j ohm to 50 ohm"),
    (["--cable", "window-450", "--load-ohm", "600-j900", "--balun", "1:4"],
     '--balun: "1:4" is not a balun ratio (accepted: "n:1" with the balanced side first, 1 <= n <= 64, e.g. "1:1", '
     '"4:1", "9:1")'),
    (["--cable", "window-450", "--load-ohm", "600-j900", "--balun-power-w", "1000"],
     "--balun-power-w: 1000.0 describes a balun: give --balun"),
    (["--cable", "rg-213", "--swr", "2", "--tuner", "l"],
     '--tuner: "l" needs load_ohm: a network\'s parts depend on the complex impedance, which an SWR alone does not fix'),
    # 33.02 ohm is the parallel-form resistance of the line input impedance (RG-213 losses as fitted in
    # cables.csv); Q_min = sqrt(50/33.02 - 1)
    (["--cable", "rg-213", "--load-ohm", "12-35j", "--tuner", "pi", "--q", "0.5"],
     "--q: 0.5 must be > 0.717, the least loaded Q that matches 33.02 ohm (parallel form of the load) to 50 ohm"),
    (["--cable", "rg-213", "--swr", "2", "--connector", "sma"],
     '--connector: "sma" is not a known connector series (known: "uhf", "n", "bnc")'),
])
def test_malformed_inputs_exit_2(extra, message):
    r = run(BASE + extra)
    assert r.exit_code == 2
    assert r.stderr == f"Error: {message}\n"
    assert r.stdout == ""


def test_negative_length_and_power():
    r = run(["line", "--pep-w", "100", "--freq-mhz", "14.2", "--length-m", "-3", "--cable", "rg-58", "--swr", "2"])
    assert (r.exit_code, r.stderr) == (2, "Error: --length-m: -3.0 must be a number >= 0 m\n")
    r = run(["line", "--pep-w", "0", "--freq-mhz", "14.2", "--length-m", "3", "--cable", "rg-58", "--swr", "2"])
    assert (r.exit_code, r.stderr) == (2, "Error: --pep-w: 0.0 must be a finite number > 0 W\n")
    r = run(["line", "--pep-w", "100", "--freq-mhz", "-1", "--length-m", "3", "--cable", "rg-58", "--swr", "2"])
    assert (r.exit_code, r.stderr) == (2, "Error: --freq-mhz: -1.0 must be a finite number > 0 MHz\n")
    # a number too large for a float is read as infinity: the message must not read as if inf were accepted
    r = run(["line", "--pep-w", "1e400", "--freq-mhz", "14.2", "--length-m", "3", "--cable", "rg-58", "--swr", "2"])
    assert (r.exit_code, r.stderr) == (2, "Error: --pep-w: inf must be a finite number > 0 W\n")


def test_help():
    r = run(["line", "--help"])
    assert r.exit_code == 0 and "--load-ohm" in r.stdout


@pytest.mark.parametrize("text,value", [
    ("50", 50), ("600-j900", 600 - 900j), ("600-900j", 600 - 900j), ("73+j42.5", 73 + 42.5j),
    ("73 + 42.5j", 73 + 42.5j), ("-j10", -10j), ("10j", 10j), ("1e3-j2e2", 1000 - 200j),
])
def test_impedance_both_ways_of_writing_j(text, value):
    """Engineers write the imaginary unit before or after the number (common practice): both parse alike."""
    from rfsafe.cli.cmd_line import parse_impedance
    assert parse_impedance(text) == value


def test_j_first_and_j_last_give_the_same_result():
    a = json.loads(run(BASE + ["--cable", "rg-213", "--load-ohm", "600-j900", "--json"]).stdout)
    b = json.loads(run(BASE + ["--cable", "rg-213", "--load-ohm", "600-900j", "--json"]).stdout)
    assert a == b and a["load_ohm"] == {"re": 600.0, "im": -900.0}


def test_t_tuner_ladder_line_case_table_and_json():
    """The case an operator meets: a 600 - j900 ohm wire through 15 m of ladder line at 400 W, a T tuner and a
    4:1 balun at the transmitter, no connectors. The table answers which part fails first; JSON carries it."""
    args = ["line", "--pep-w", "400", "--freq-mhz", "3.6", "--length-m", "15", "--cable", "window-450",
            "--load-ohm", "600-j900", "--tuner", "t", "--capacitor-v-peak", "3000", "--inductor-a-rms", "8",
            "--balun", "4:1", "--balun-power-w", "1000"]
    t = run(args)
    assert t.exit_code == 0, t.stderr
    assert "Fails first: balun (equivalent_power_w) fails first, at SWR" in t.stdout
    assert "not rated: line, line.heating" in t.stdout
    assert "transmitter end: none, antenna end: none" in t.stdout
    assert "T network (high-pass) at the transmitter" in t.stdout
    assert " ok" in t.stdout and "not rated" in t.stdout
    doc = json.loads(run(args + ["--json"]).stdout)
    assert doc["first_failure_part"] == "balun" and doc["first_failure"].startswith("balun (")
    assert [p["name"] for p in doc["tuner_parts"]] == ["C1", "L1", "C2"]
    assert {p["part"]: p["status"] for p in doc["part_stresses"]}["line"] == "not rated"
    assert doc["balun"]["label"] == "4:1" and doc["balun"]["location"] == "transmitter"
    assert doc["connector_at_transmitter"] is None and doc["connector_at_antenna"] is None


def test_matchable_region_printed_and_in_json():
    args = BASE + ["--cable", "rg-213", "--load-ohm", "12-35j", "--tuner", "t", "--capacitor-range-pf", "20,250",
                   "--inductor-range-uh", "0.2,12", "--matchable-region"]
    t = run(args)
    assert t.exit_code == 0, t.stderr
    assert "Loads a T network with C 20-250 pF and L 0.2-12 uH can match to 50 ohm at 14.2 MHz" in t.stdout
    rows = [ln for ln in t.stdout.splitlines() if ln.startswith("  X ")]
    assert len(rows) == 25 and sum(ln.count("@") for ln in rows) == 1 and "ranges: declared" in t.stdout
    doc = json.loads(run(args + ["--json"]).stdout)
    reg = doc["tuner"]["matchable_region"]
    assert len(reg["matchable"]) == len(reg["x_ohm"]) and len(reg["matchable"][0]) == len(reg["r_ohm"])


def test_t_tuner_as_set_and_range_flags():
    """Part settings as read off the dials; a setting outside the declared range is flagged in a note."""
    args = BASE + ["--cable", "rg-213", "--load-ohm", "12-35j", "--tuner", "t", "--c1-pf", "120", "--l-uh", "1.2",
                   "--c2-pf", "300", "--capacitor-range-pf", "10,250", "--json"]
    doc = json.loads(run(args).stdout)
    assert doc["tuner"]["network"]["form"] == "high-pass, as set"
    assert any("C2 = 300 pF is above this tuner's declared range 10-250 pF" in n for n in doc["notes"])


@pytest.mark.parametrize("freq, hint", [("3600", "did you mean 3.6 MHz?"), ("14200", "did you mean 14.2 MHz?"),
                                        ("0.0142", "did you mean 14.2 MHz?")])
def test_frequency_unit_slip_is_refused_with_a_hint(freq, hint):
    """3600 typed for 3.6 MHz would evaluate 3.6 GHz on RG-58 (tens of dB of invented loss): refused, with the
    MHz value it most likely meant (kHz or GHz for MHz: unit conversion, common practice)."""
    args = ["line", "--pep-w", "100", "--freq-mhz", freq, "--length-m", "30", "--cable", "rg-58", "--swr", "1.5"]
    r = run(args)
    assert r.exit_code == 2 and r.stdout == ""
    line = r.stderr.strip()
    assert line.startswith(f"Error: --freq-mhz: {float(freq)!r} is outside 0.1-3000 MHz, where the loss figures "
                           'of cable class "rg-58" hold') and hint in line


def test_t_rebuilt_from_the_printed_table():
    """The part values as the terminal prints them (4 significant figures), rebuilt with scikit-rf's lumped
    elements (ideal inductor: --inductor-q 1e12), match the line's input impedance to 50 ohm within the
    rounding: |Gamma| < 0.01 (4 figures move each reactance by at most 5e-4 relative)."""
    skrf = pytest.importorskip("skrf")
    from skrf.media import DefinedGammaZ0
    args = ["line", "--pep-w", "400", "--freq-mhz", "7.1", "--length-m", "12", "--cable", "rg-213",
            "--load-ohm", "20-j60", "--tuner", "t", "--q", "6", "--inductor-q", "1e12"]
    t = run(args)
    assert t.exit_code == 0, t.stderr
    values = {}
    for ln in t.stdout.splitlines():
        cells = ln.split()
        if cells and cells[0] in ("C1", "L1", "C2") and len(cells) > 4:
            values[cells[0]] = float(cells[-6])     # "value unit V peak V rms A rms loss W": value is 6th from end
            assert cells[-5] == ("uH" if cells[0] == "L1" else "pF")
    zin = complex(json.loads(run(args + ["--json"]).stdout)["tuner"]["network"]["load_ohm"]["re"],
                  json.loads(run(args + ["--json"]).stdout)["tuner"]["network"]["load_ohm"]["im"])
    media = DefinedGammaZ0(skrf.Frequency(7.1e6, 7.1e6, 1, unit="Hz"), z0=50.0)
    ntw = (media.capacitor(values["C1"] * 1e-12) ** media.shunt_inductor(values["L1"] * 1e-6)
           ** media.capacitor(values["C2"] * 1e-12) ** media.load((zin - 50) / (zin + 50)))
    assert abs(complex(ntw.s[0, 0, 0])) < 0.01


def test_part_beyond_usual_range_marked_in_the_table():
    """A pi network for a 5 ohm load on 160 m needs several nF at its input: marked ! and explained (common
    practice: tuner variable capacitors about 10-500 pF)."""
    t = run(["line", "--pep-w", "100", "--freq-mhz", "1.85", "--length-m", "10", "--cable", "rg-213", "--load-ohm", "5",
             "--tuner", "pi"])
    assert t.exit_code == 0, t.stderr
    c1 = next(ln for ln in t.stdout.splitlines() if ln.startswith("C1 "))
    assert " pF !" in c1
    assert "  ! C1 = " in t.stdout and "is above the usual 10-500 pF of tuner variable capacitors (common practice)" in t.stdout
