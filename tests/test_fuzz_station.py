"""Fuzz: malformed and extreme station files keep rfsafe's promise (see tests/fuzz_support.py).

Mutations of the valid test and demo station files (wrong types, extremes, NaN/inf, huge and tiny
numbers, unicode, deep nesting, duplicated and dangling ids, unknown keys, degenerate geometry,
band-edge frequencies, extreme SWR and loads, damaged pattern CSVs, damaged TOML text). Every failure
the fuzz ever found is kept below as an explicit case.
"""

from __future__ import annotations

import pytest
from fuzz_support import (
    DATA,
    DEMO,
    FUZZ,
    damaged_text,
    mutated,
    read,
    run_file,
    to_toml,
    work_dir,
)
from hypothesis import given
from hypothesis import strategies as st

from rfsafe.station.schema import Station

FIELDS = tuple(Station.model_fields) + ("--standard",)
WORK = work_dir("rfsafe-fuzz-station-")

MINIMAL = read(DATA / "station_minimal.toml")
DEMO_STATION = read(DEMO / "demo_station.toml")

#: A table-pattern antenna (an invented 2 x 3 direction grid) beside the minimal station.
PATTERN_CSV = ("azimuth_deg,elevation_deg,gain_dbi\n"
               "0,-90,0\n180,-90,0\n0,0,6\n180,0,-10\n0,90,0\n180,90,0\n")
TABLE_STATION = {**MINIMAL, "antennas": MINIMAL["antennas"] + [
    {"id": "tab", "kind": "table", "pattern_file": "pattern.csv", "height_m": 8.0, "use_pattern": True}],
    "configurations": MINIMAL["configurations"] + [
    {"id": "tab", "freq_mhz": 21.2, "transmitter": "tx", "feedline": "coax", "antenna": "tab", "mode": "cw",
     "load_r_ohm": 30.0, "load_x_ohm": -20.0, "tuner": {"kind": "pi", "loaded_q": 10.0}}]}


def _run(doc_or_text, command=("evaluate",), extra=("--json",)):
    text = doc_or_text if isinstance(doc_or_text, str) else to_toml(doc_or_text)
    (WORK / "pattern.csv").write_text(PATTERN_CSV, encoding="utf-8")
    return run_file(WORK, "station.toml", text, list(command), fields=FIELDS, extra_args=list(extra))


def test_valid_bases_evaluate():
    """The unmutated bases are valid, so the mutations start from real inputs."""
    for doc in (MINIMAL, DEMO_STATION, TABLE_STATION):
        code, _, err = _run(doc)
        assert code in (0, 1), err


@FUZZ
@given(mutated(MINIMAL, extra_keys=("pep_watt",)))
def test_minimal_station_mutations(doc):
    _run(doc)


@FUZZ
@given(mutated(DEMO_STATION))
def test_demo_station_mutations(doc):
    _run(doc)


@FUZZ
@given(mutated(TABLE_STATION))
def test_table_and_tuner_station_mutations(doc):
    _run(doc)


@FUZZ
@given(damaged_text((DEMO / "demo_station.toml").read_text(encoding="utf-8")))
def test_damaged_toml_text(text):
    _run(text, command=("check",), extra=())


@FUZZ
@given(st.sampled_from(["fcc", "icnirp2020", "icnirp1998", "ieee2019", "sc6"]),
       st.sampled_from([0.003, 0.1, 0.3, 1.34, 3.0, 10.0, 30.0, 100.0, 300.0, 1500.0, 2000.0, 6000.0, 1e5, 3e5,
                        0.09999999, 3e5 + 1e-6]) | st.floats(1e-3, 4e5),
       st.sampled_from([1.0, 1.0000001, 50.0, 1e6, 1e12, 1e300]),
       st.sampled_from([1e-9, 1e-3, 1.0, 1e3, 1e6, 1e9]))
def test_band_edges_extreme_swr_and_power(standard, freq_mhz, swr, pep_w):
    doc = {**MINIMAL, "standard": standard,
           "transmitters": [{"id": "tx", "pep_w": pep_w}],
           "configurations": [{**MINIMAL["configurations"][0], "freq_mhz": freq_mhz, "swr": swr}]}
    _run(doc)


@FUZZ
@given(st.sampled_from([1e-12, 1e-6, 0.001, 1.0, 50.0, 1e6, 1e12, 1e300]),
       st.sampled_from([-1e300, -1e6, -50.0, 0.0, 50.0, 1e6, 1e300]),
       st.sampled_from([None, "l", "pi"]), st.sampled_from([1e-6, 0.5, 100.0, 1e9]),
       st.sampled_from([0.0, 1e-9, 20.0, 1e4, 1e7]))
def test_extreme_loads_tuners_and_lengths(r_ohm, x_ohm, tuner, inductor_q, length_m):
    conf = {**MINIMAL["configurations"][0], "load_r_ohm": r_ohm, "load_x_ohm": x_ohm}
    del conf["swr"]
    if tuner:
        conf["tuner"] = {"kind": tuner, "inductor_q": inductor_q}
    doc = {**MINIMAL, "configurations": [conf], "feedlines": [{**MINIMAL["feedlines"][0], "length_m": length_m}]}
    _run(doc)


@FUZZ
@given(st.lists(st.tuples(st.sampled_from([0.0, 1e-9, 1e-4, 0.5, 10.0, 1e6, -1e6]),
                          st.sampled_from([0.0, 1e-9, 10.0, -3.0]), st.sampled_from([0.0, 10.0, 10.000001, 1e5])),
                min_size=1, max_size=4))
def test_places_on_and_near_the_antenna(points):
    """Places at, next to and very far from the antennas (the dipole stands at (0, 0, 10 m))."""
    places = [{"label": f"P{i}", "x_m": x, "y_m": y, "height_m": z, "environment": "uncontrolled"}
              for i, (x, y, z) in enumerate(points)]
    _run({**MINIMAL, "places": places})


@FUZZ
@given(damaged_text(PATTERN_CSV) | st.sampled_from([
    "", "azimuth_deg,elevation_deg,gain_dbi\n", "a,b,c\n1,2,3\n", "azimuth_deg,elevation_deg,gain_dbi\n0,0,nan\n",
    "azimuth_deg,elevation_deg,gain_dbi\n0,-90,1e308\n0,90,1e308\n0,0,1e308\n",
    "azimuth_deg,elevation_deg,gain_dbi\n0,-90,-1e308\n0,90,-1e308\n",
    "\ufeffazimuth_deg,elevation_deg,gain_dbi\n0,-90,0\n0,90,0\n"]))
def test_damaged_pattern_csv(csv_text):
    (WORK / "pattern.csv").write_text(csv_text, encoding="utf-8")
    path = WORK / "station.toml"
    path.write_text(to_toml(TABLE_STATION), encoding="utf-8")
    from fuzz_support import check_promise, run_cli

    args = ["evaluate", str(path), "--json"]
    code, out, err, seconds = run_cli(args)
    check_promise(args, code, out, err, seconds, fields=FIELDS + ("FILE",), files=(str(path),))


@pytest.mark.parametrize("depth", [200, 1000, 5000])
def test_deep_nesting_is_an_input_error(depth):
    """tomllib recurses per nesting level: deep nesting must be refused, not a RecursionError."""
    code, _, err = _run("title = " + "[" * depth + "]" * depth + "\n", command=("check",), extra=())
    assert code == 2 and "nest" in err, err
