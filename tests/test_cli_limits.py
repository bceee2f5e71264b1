"""CLI tests of ``rfsafe limits``: published values in JSON, compare mode, exact error lines."""

from __future__ import annotations

import json
import math
import subprocess
import sys

import pytest
from typer.testing import CliRunner

from rfsafe.cli import app

REL = 1e-12  # the CLI prints the library's floats unchanged in JSON


def run(*args):
    return CliRunner().invoke(app, ["limits", *args])


def entries(*args):
    result = run(*args, "--json")
    assert result.exit_code == 0, result.stderr
    return json.loads(result.stdout)


def pick(data, f, env, basis="time-averaged"):
    (e,) = [e for e in data if e["freq_mhz"] == f and e["environment"] == env and e["basis"] == basis]
    return e


def test_fcc_json_published_values():
    data = entries("fcc", "14.2", "144.2", "432")
    assert len(data) == 6  # 3 frequencies x 2 environments
    # 47 CFR 1.1310 Table 1 (B), 1.34-30 MHz: 824/f V/m, 2.19/f A/m, (180/f^2) mW/cm^2, 30 min (from memory)
    e = pick(data, 14.2, "uncontrolled")
    assert e["e_field_v_m"] == pytest.approx(824 / 14.2, rel=REL)
    assert e["h_field_a_m"] == pytest.approx(2.19 / 14.2, rel=REL)
    assert e["power_density_published"] == pytest.approx(180 / 14.2**2, rel=REL)
    assert e["power_density_unit"] == "mW/cm^2"
    assert e["power_density_w_m2"] == pytest.approx(1800 / 14.2**2, rel=REL)
    assert e["averaging_minutes"] == 30
    assert e["environment_label"] == "general population/uncontrolled exposure"
    assert "1.34-30 MHz" in e["source"]
    # 47 CFR 1.1310 Table 1 (A), 3-30 MHz: 1842/f, 4.89/f, (900/f^2), 6 min
    e = pick(data, 14.2, "controlled")
    assert (e["e_field_v_m"], e["power_density_published"], e["averaging_minutes"]) == pytest.approx(
        (1842 / 14.2, 900 / 14.2**2, 6), rel=REL)
    # 47 CFR 1.1310 Table 1 (B), 30-300 MHz: 27.5 V/m, 0.073 A/m, 0.2 mW/cm^2
    e = pick(data, 144.2, "uncontrolled")
    assert (e["e_field_v_m"], e["h_field_a_m"], e["power_density_published"]) == (27.5, 0.073, 0.2)
    assert e["derived"] == []
    # 47 CFR 1.1310 Table 1 (B), 300-1500 MHz: f/1500 mW/cm^2; E and H derived (plane wave, 377 ohm)
    e = pick(data, 432.0, "uncontrolled")
    assert e["power_density_published"] == pytest.approx(432 / 1500, rel=REL)
    assert e["derived"] == ["e_field_v_m", "h_field_a_m"]
    assert e["e_field_v_m"] == pytest.approx(math.sqrt(377 * 4320 / 1500), rel=REL)
    keys = {"freq_mhz", "standard", "environment", "environment_label", "basis", "power_density_w_m2",
            "e_field_v_m", "h_field_a_m", "averaging_minutes", "derived", "source"}
    assert all(keys <= set(x) for x in data)


def test_icnirp2020_json_published_values():
    data = entries("icnirp2020", "14.2", "144.2", "432")
    # ICNIRP 2020 Table 5, general public, 0.1-30 MHz: E 300/f^0.7, H 2.2/f, S NA (from memory)
    e = pick(data, 14.2, "uncontrolled")
    assert e["power_density_w_m2"] is None and e["power_density_published"] is None
    assert e["e_field_v_m"] == pytest.approx(300 / 14.2**0.7, rel=REL)
    assert e["h_field_a_m"] == pytest.approx(2.2 / 14.2, rel=REL)
    assert e["averaging_minutes"] == 30
    # ICNIRP 2020 Table 5, occupational, >30-400 MHz: 61 V/m, 0.16 A/m, 10 W/m^2
    e = pick(data, 144.2, "controlled")
    assert (e["e_field_v_m"], e["h_field_a_m"], e["power_density_w_m2"]) == (61, 0.16, 10)
    assert e["environment_label"] == "occupational"
    # ICNIRP 2020 Table 5, general public, >400-2000 MHz: f/200 W/m^2
    assert pick(data, 432.0, "uncontrolled")["power_density_w_m2"] == pytest.approx(432 / 200, rel=REL)


def test_sc6_json_has_instantaneous_entry_below_10_mhz():
    data = entries("sc6", "3.6")
    # Safety Code 6 (2015) nerve stimulation, uncontrolled: 83 V/m, 90 A/m, not time-averaged (from memory)
    e = pick(data, 3.6, "uncontrolled", "instantaneous")
    assert (e["e_field_v_m"], e["h_field_a_m"], e["averaging_minutes"]) == (83, 90, None)
    assert len(data) == 4


def test_compare_lists_every_standard_and_both_environments():
    data = entries("--compare", "14.2")
    assert sorted({e["standard"] for e in data}) == sorted(["fcc", "icnirp2020", "icnirp1998", "ieee2019", "sc6", "eu1999"])
    assert len(data) == 12   # six standards, two environments each (eu1999 gives the public levels to both)
    assert all(e["freq_mhz"] == 14.2 for e in data)


def test_compare_skips_standards_that_do_not_cover_the_frequency():
    result = run("--compare", "200000", "--json")
    assert result.exit_code == 0
    assert "fcc" not in {e["standard"] for e in json.loads(result.stdout)}
    assert "Not covered at 200000 MHz: fcc (0.3 to 100000 MHz)" in result.stderr


def test_table_mode_shows_units_markers_and_sources():
    result = run("fcc", "432", "--wide")   # --wide: headers and labels unwrapped (the default fits 100 columns)
    assert result.exit_code == 0
    out = result.stdout
    for text in ("S (as published)", "S [W/m^2]", "E [V/m]", "H [A/m]", "avg [min]",
                 "0.288 mW/cm^2", "32.95*", "derived (plane wave, 377 ohm",
                 "47 CFR 1.1310(e)(1) Table 1 (B) general population/uncontrolled, 300-1500 MHz"):
        assert text in out
    assert "Caution:" in result.stderr and "Caution" not in out


@pytest.mark.parametrize("args,line", [
    (["nist", "14.2"], 'Error: STANDARD: "nist" is not a known standard (known: "fcc", "icnirp2020", '
                       '"icnirp1998", "ieee2019", "sc6", "eu1999")'),
    (["fcc", "0.1"], 'Error: FREQ_MHZ: 0.1 is outside the range of standard "fcc" (0.3 to 100000 MHz)'),
    (["icnirp2020", "400000"], 'Error: FREQ_MHZ: 400000 is outside the range of standard "icnirp2020" '
                               '(0.1 to 300000 MHz)'),
    (["fcc", "14.2", "abc"], 'Error: FREQ_MHZ: "abc" is not a number (give the frequency in MHz, e.g. 14.2)'),
    (["fcc"], "Error: FREQ_MHZ: missing; give one or more frequencies in MHz, e.g. rfsafe limits fcc 14.2 144.2"),
    (["fcc", "14.2", "--compare", "14.2"], "Error: --compare: takes one frequency and no STANDARD (use either "
                                           "`rfsafe limits STANDARD FREQ_MHZ...` or `rfsafe limits --compare FREQ_MHZ`)"),
    (["--compare", "500000"], "Error: --compare: 500000 is outside the range of every standard (fcc (0.3 to "
                              "100000 MHz), icnirp2020 (0.1 to 300000 MHz), icnirp1998 (0.1 to 300000 MHz), "
                              "ieee2019 (0.1 to 300000 MHz), sc6 (0.003 to 300000 MHz), eu1999 (0.1 to 300000 MHz))"),
])
def test_bad_input_gives_one_error_line_and_exit_2(args, line):
    result = run(*args)
    assert result.exit_code == 2
    assert result.stderr.strip().splitlines() == [line]
    assert result.stdout == ""


def test_json_error_is_still_one_line():
    result = run("fcc", "0.1", "--json")
    assert result.exit_code == 2 and result.stdout == ""
    assert result.stderr.startswith("Error: FREQ_MHZ: 0.1 is outside")


def test_help_and_module_imports_only_typer_and_stdlib():
    assert run("--help").exit_code == 0
    code = ("import sys, rfsafe.cli.cmd_limits; "
            "print(any(m in sys.modules for m in ('numpy', 'pandas', 'rfsafe.limits')))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "False"


def test_each_row_says_whether_it_was_read_in_the_published_text():
    # 47 CFR 1.1310 Table 1 was read in the eCFR text; IEEE C95.1-2019 could not be read at all
    fcc = entries("fcc", "14.2")
    assert all(e["limit_verification"].startswith("read in 47 CFR 1.1310(e)(1), Table 1") for e in fcc)
    assert all(e["limit_verification"] == "not confirmed" for e in entries("ieee2019", "14.2"))
    result = run("fcc", "14.2")
    assert "[1] T 47 CFR 1.1310(e)(1) Table 1" in result.stdout
    assert "T = read in the published text" in " ".join(result.stdout.split())
    r = run("ieee2019", "14.2")
    assert "rows marked '?' (not confirmed)" in " ".join(r.stderr.split())
