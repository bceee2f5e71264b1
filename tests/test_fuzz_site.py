"""Fuzz: malformed and extreme site files keep rfsafe's promise (see tests/fuzz_support.py).

Mutations of the demo event site and the wire-antenna test site (boundaries and areas, grid spacing,
heights, inline and file stations, dangling and duplicated names); bounded grid size and memory. Every
failure the fuzz ever found is kept below as an explicit case.
"""

from __future__ import annotations

import shutil

import pytest
from fuzz_support import (
    DATA,
    DEMO,
    damaged_text,
    fuzz_settings,
    mutated,
    read,
    run_file,
    to_toml,
    work_dir,
)
from hypothesis import given
from hypothesis import strategies as st

from rfsafe.site.schema import Site

FIELDS = tuple(Site.model_fields) + ("--standard", "-o", "--csv")
WORK = work_dir("rfsafe-fuzz-site-")
for _name in ("demo_station.toml", "event_field_day_vhf.toml"):
    shutil.copy(DEMO / _name, WORK / _name)

#: The demo event site at a 1 m grid (the 0.25 m grid of the demo takes longer than a fuzz example should).
EVENT = {**read(DEMO / "event_field_day.toml"), "grid_spacing_m": 1.0}
WIRE_SITE = read(DATA / "site_wire_vertical.toml")
#: A site whose one station is read from a station file.
FILE_SITE = {"title": "File site", "boundary": [[0.0, 0.0], [60.0, 0.0], [60.0, 50.0], [0.0, 50.0]],
             "grid_spacing_m": 1.0, "heights_m": [1.0, 2.0],
             "stations": [{"name": "Demo", "file": "demo_station.toml", "x_m": 30.0, "y_m": 10.0}],
             "areas": [{"label": "Lawn", "kind": "public", "polygon": [[0.0, 0.0], [20.0, 0.0], [20.0, 20.0]]}]}


def _run(doc_or_text, extra=("--json",)):
    text = doc_or_text if isinstance(doc_or_text, str) else to_toml(doc_or_text)
    out_pdf, out_csv = WORK / "out.pdf", WORK / "grid.csv"
    extra = list(extra)
    written = []
    if "-o" in extra:
        extra[extra.index("-o") + 1] = str(out_pdf)
        written.append(out_pdf)
    if "--csv" in extra:
        extra[extra.index("--csv") + 1] = str(out_csv)
        written.append(out_csv)
    return run_file(WORK, "site.toml", text, ["site"], fields=FIELDS, extra_args=extra, written=written)


def test_valid_bases_evaluate():
    for doc in (EVENT, WIRE_SITE, FILE_SITE):
        code, _, err = _run(doc)
        assert code in (0, 1, 4), err


@fuzz_settings(60)
@given(mutated(EVENT))
def test_event_site_mutations(doc):
    _run(doc)


@fuzz_settings(25)
@given(mutated(WIRE_SITE))
def test_wire_site_mutations(doc):
    _run(doc)


@fuzz_settings(40)
@given(mutated(FILE_SITE))
def test_file_site_mutations(doc):
    _run(doc)


@fuzz_settings(60)
@given(damaged_text(to_toml(FILE_SITE)))
def test_damaged_site_text(text):
    _run(text)


@fuzz_settings(60)
@given(st.sampled_from([1e-9, 1e-4, 0.01, 0.05, 1.0, 1e3, 1e5]),
       st.sampled_from([(0.0, 60.0), (0.0, 1e-9), (0.0, 1e5), (-1e5, 1e5), (0.0, 0.0)]),
       st.sampled_from([1e-3, 1.0, 1e4, 1e8]))
def test_grid_spacing_boundary_and_power_extremes(spacing, span, pep_w):
    """Tiny spacings over huge or degenerate boundaries, and huge powers (their keep-out margins)."""
    lo, hi = span
    doc = {**FILE_SITE, "grid_spacing_m": spacing,
           "boundary": [[lo, lo], [hi, lo], [hi, hi], [lo, hi]],
           "stations": [{"name": "S", "x_m": 1.0, "y_m": 1.0, **{k: WIRE_SITE["stations"][0][k] for k in
                         ("feedlines", "configurations")},
                         "transmitters": [{"id": "tx", "pep_w": pep_w}],
                         "antennas": [{"id": "vert", "kind": "isotropic", "height_m": 3.0}]}]}
    _run(doc)


def test_station_file_name_too_long():
    """Found by the long fuzz: a station file name over the system's limit raised OSError (exit 3)."""
    station = {"name": "S", "file": "=[" * 300 + "demo_station.toml", "x_m": 1.0, "y_m": 1.0}
    code, _, err = _run({**FILE_SITE, "stations": [station]})
    assert code == 2 and err.startswith("Error: stations[0].file: "), err
    assert "cannot be read" in err, err


def test_inline_station_name_longer_than_a_file_name():
    """Found by the long fuzz: an inline station named with 400 characters: its stand-in path beside the site file
    was checked as an input file and raised OSError (file name too long, exit 3); an inline station's name is
    no file. 400 characters: past the 255-byte file-name limit of common Linux file systems (common practice)."""
    station = {**WIRE_SITE["stations"][0], "name": "a" * 400}
    code, _, err = _run({**WIRE_SITE, "stations": [station]})
    assert code in (0, 1, 4, 5), err


def test_area_edge_a_subnormal_apart():
    """Found by the long fuzz: an area vertex 5e-324 m above its neighbour raised a RuntimeWarning (0 * inf)."""
    area = {"label": "Lawn", "kind": "public", "polygon": [[0.0, 0.0], [20.0, 5e-324], [20.0, 20.0]]}
    code, _, err = _run({**FILE_SITE, "areas": [area]})
    assert code in (0, 1, 4, 5), err


def test_subnormal_power():
    """Found by the long fuzz: pep_w = 5e-324 W underflowed to 0 W (ZeroDivisionError, exit 3)."""
    station = {**WIRE_SITE["stations"][0], "transmitters": [{"id": "tx", "pep_w": 5e-324}]}
    code, _, err = _run({**WIRE_SITE, "stations": [station]})
    assert code == 2 and "pep_w: 5e-324 is out of range (accepted: at least 1e-09 W)" in err, err


def test_subnormal_grid_spacing():
    """Found by the long fuzz: grid_spacing_m = 5e-324 made the margin over it infinite (OverflowError, exit 3);
    sizes below a nanometre are now refused with the other bounds (rfsafe.bounds.MIN_SIZE_M)."""
    code, _, err = _run({**EVENT, "grid_spacing_m": 5e-324})
    assert code == 2 and err.startswith("Error: grid_spacing_m: 5e-324 is out of range (accepted: at least 1e-09 m)"), err


def test_beam_narrower_than_the_model_resolves():
    """Found by the long fuzz: a beam of beamwidth_h_deg = 6.4e-8 divided by zero in its exponents (exit 3);
    beamwidths below rfsafe.bounds.MIN_BEAMWIDTH_DEG are now refused with the other bounds. The numbers are
    rfsafe's own bound (0.1 deg, a dish ~700 wavelengths across by the 70 lambda / D rule of thumb, from memory)
    and the fuzz's value, not a published figure."""
    station = EVENT["stations"][1]
    antenna = {**station["antennas"][0], "beamwidth_h_deg": 6.4e-8}
    code, _, err = _run({**EVENT, "stations": [{**station, "antennas": [antenna]}]})
    assert code == 2 and err.startswith("Error: stations[0].antennas[0].beamwidth_h_deg: 6.4e-08 is out of range "
                                        "(accepted: at least 0.1 deg"), err


@pytest.mark.parametrize("key", ["transmitters", "feedlines", "antennas", "configurations"])
def test_empty_inline_station_table(key):
    """Found by the fuzz: an empty inline table escaped as a pydantic ValidationError (exit 3)."""
    station = {**WIRE_SITE["stations"][0], key: []}
    code, _, err = _run({**WIRE_SITE, "stations": [station]})
    assert code == 2 and err.startswith(f"Error: stations[0].{key}: [] has too few items"), err


def test_area_far_outside_the_site():
    """Found by the fuzz: a 2e10 m area vertex asked for a 447 GiB array of edge points."""
    area = {"label": "Lawn", "kind": "public", "polygon": [[0.0, 0.0], [20.0, 0.0], [2e10, 20.0]]}
    code, _, err = _run({**FILE_SITE, "areas": [area]})
    assert code == 2 and err.startswith("Error: areas[0].polygon: "), err


def test_pdf_and_csv_not_written_on_bad_input():
    doc = {**FILE_SITE, "grid_spacing_m": -1.0}
    code, _, _ = _run(doc, extra=("-o", "X", "--csv", "Y"))
    assert code == 2
