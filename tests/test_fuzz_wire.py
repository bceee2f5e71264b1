"""Fuzz: malformed and extreme wire files keep rfsafe's promise (see tests/fuzz_support.py).

Mutations of the demo wire antennas (degenerate geometry, coincident and crossing wires, huge segment
counts, tiny radii, feeds at ends, points on the wire, extreme frequencies and powers), and wire stations.
Every failure the fuzz ever found is kept below as an explicit case.
"""

from __future__ import annotations

import pytest
from fuzz_support import (
    DEMO,
    damaged_text,
    fuzz_settings,
    mutated,
    read,
    run_file,
    to_toml,
    work_dir,
)
from hypothesis import example, given
from hypothesis import strategies as st

from rfsafe.antenna.wire.model import WireFile
from rfsafe.station.schema import Station

FIELDS = tuple(WireFile.model_fields)
WORK = work_dir("rfsafe-fuzz-wire-")

INVERTED_V = read(DEMO / "wire_inverted_v_40m.toml")
GROUND_PLANE = read(DEMO / "wire_ground_plane_20m.toml")
BEAM = read(DEMO / "wire_beam_3el_20m.toml")
WIRE_STATION = read(DEMO / "demo_wire_station.toml")


def _run(doc_or_text, command="wire", fields=FIELDS):
    text = doc_or_text if isinstance(doc_or_text, str) else to_toml(doc_or_text)
    return run_file(WORK, "w.toml", text, [command], fields=fields, extra_args=["--json"])


def test_valid_bases_solve():
    for doc in (INVERTED_V, GROUND_PLANE, BEAM):
        code, _, err = _run(doc)
        assert code == 0, err


@fuzz_settings(120)
@given(mutated(INVERTED_V) | mutated(GROUND_PLANE))
@example({**INVERTED_V, "freq_mhz": 1e-300})   # found by the fuzz: overflow warnings in the kernel
@example({**INVERTED_V, "freq_mhz": "\x85"})   # found by the fuzz: a Unicode line break split the Error line
def test_wire_file_mutations(doc):
    _run(doc)


@fuzz_settings(40)
@given(mutated(BEAM))
@example({**BEAM, "wires": [{**BEAM["wires"][0], "points_m": [[-5.107, -4.238, 12.0], [5.107, -4.238, 359.999]]},
                            *BEAM["wires"][1:]]})  # found by the fuzz: 700 unknowns ran for minutes
def test_beam_mutations(doc):
    _run(doc)


@fuzz_settings(60)
@given(damaged_text((DEMO / "wire_ground_plane_20m.toml").read_text(encoding="utf-8")))
def test_damaged_wire_text(text):
    _run(text)


@fuzz_settings(80)
@given(st.sampled_from([1e-6, 0.001, 1.0, 7.1, 30.0, 1e3, 3e4, 3e5]),
       st.sampled_from([1e-12, 1e-9, 1e-6, 0.001, 0.1, 1.0, 10.0]),
       st.sampled_from([None, 1, 2, 3, 7, 200, 1500, 1501, 10**6, 10**12]),
       st.sampled_from([0.0, 0.5, 1.0]),
       st.sampled_from([[0.0, 0.0, 7.0], [0.0, 0.0, 1e-9], [0.0, 1e-9, 7.0], [5.0, 0.0, 7.0], [1e5, 1e5, 0.0]]))
def test_extreme_frequencies_radii_segments_and_points(freq_mhz, radius_m, segments, position, point):
    """A straight 10 m dipole at 7 m height with observation points on, next to and far from it."""
    wire = {"label": "d", "points_m": [[-5.0, 0.0, 7.0], [5.0, 0.0, 7.0]], "radius_m": radius_m}
    if segments is not None:
        wire["segments"] = segments
    doc = {"freq_mhz": freq_mhz, "input_power_w": 100.0, "ground": "free-space", "wires": [wire],
           "feeds": [{"wire": "d", "position": position}], "points": [{"label": "p", "position_m": point}]}
    _run(doc)


@pytest.mark.parametrize("freq_mhz, segments", [(3e5, None), (7.1, 10**6)])
def test_segment_count_refused_before_allocation(freq_mhz, segments):
    """Found by the fuzz: 300 GHz on a 16 m wire asked for 640,000 segments and was killed for memory."""
    wire = {**INVERTED_V["wires"][0], **({"segments": segments} if segments else {})}
    code, _, err = _run({**INVERTED_V, "freq_mhz": freq_mhz, "wires": [wire]})
    assert code == 2 and "wires[0].segments" in err, err


@fuzz_settings(30)
@given(mutated(WIRE_STATION))
def test_wire_station_mutations(doc):
    _run(doc, command="evaluate", fields=tuple(Station.model_fields) + ("--standard",))
