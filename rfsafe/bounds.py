"""Resource bounds and physical ranges of every input, in one place.

Each bound keeps one run of rfsafe within seconds and a few hundred MiB on a small machine, and is
far beyond any real station or event site; the README ("Limits of the input") lists the same
numbers (tests/test_bounds.py checks that it does). A value beyond a bound is refused as bad input
(``Error: <field>: <value> <what is accepted>``, exit 2), before any computation.
"""

from __future__ import annotations

import math
from typing import Any

from rfsafe.errors import InputError, bad_value

__all__ = [
    "MAX_FILE_BYTES", "MAX_PATTERN_FILE_BYTES", "MAX_TOML_NESTING", "MAX_LIST_ITEMS", "MAX_PLACES",
    "MAX_CONFIGURATIONS", "MAX_PLACE_CONFIGURATIONS", "check_place_configurations", "MAX_BODY_HEIGHTS",
    "MAX_SITE_STATIONS", "MAX_POLYGON_VERTICES",
    "MAX_GRID_POINTS", "MAX_WIRE_SEGMENTS", "MAX_WIRE_POINTS", "MAX_PATTERN_ROWS", "MAX_POWER_W",
    "MAX_DISTANCE_M", "MIN_SIZE_M", "MIN_POWER_W", "MIN_BEAMWIDTH_DEG", "MAX_FRONT_TO_BACK_DB", "MAX_LENGTH_M",
    "MAX_SWR", "MAX_IMPEDANCE_OHM",
    "MAX_TEXT_CHARS", "MAX_GAIN_DBI", "MIN_GAIN_DBI", "MAX_LOSS_DB", "MAX_Q", "check_nesting", "nesting_error",
    "nesting_depth", "finite_in_range", "field_bound_problem", "MAX_ANY_NUMBER",
    "check_file_size", "bounds_table",
]

#: Largest station, site or wire file [bytes] (a station with 10,000 places, each a table with a label,
#: coordinates, an environment and a short reason, is about 2 MB).
MAX_FILE_BYTES = 4_000_000
#: Largest pattern-table CSV [bytes] (a 0.5-degree table of the whole sphere is about 2.6 MB).
MAX_PATTERN_FILE_BYTES = 5_000_000
#: Deepest nesting of tables and arrays in a TOML file (a station file needs 5).
MAX_TOML_NESTING = 16
#: Most items in any list of a file not bounded more tightly below (transmitters, feedlines, antennas,
#: simultaneous groups, wires, feeds, areas).
MAX_LIST_ITEMS = 200
#: Most places in a station file, and observation points in a wire file.
MAX_PLACES = 10_000
#: Most place-configuration pairs of a station (places x configurations): each pair is one exposure
#: evaluated, tabulated and drawn, and this keeps a worksheet or an evaluation within seconds and a few
#: hundred MB (10,000 places x 50 configurations).
MAX_PLACE_CONFIGURATIONS = 500_000
#: Most configurations in a station (or per site station).
MAX_CONFIGURATIONS = 200
#: Most evaluation heights of a place or a site.
MAX_BODY_HEIGHTS = 50
#: Most stations on a site.
MAX_SITE_STATIONS = 50
#: Most vertices of a site boundary or area polygon.
MAX_POLYGON_VERTICES = 1000
#: Most points of a site's evaluation grid (boundary extent plus margin, divided by the spacing).
MAX_GRID_POINTS = 2_000_000
#: Most segments of one wire antenna (the moment-method matrix grows with their square).
MAX_WIRE_SEGMENTS = 2000
#: Most vertices of one wire's polyline.
MAX_WIRE_POINTS = 1000
#: Most data rows of a pattern table (a 0.5-degree table of the whole sphere has 259,920).
MAX_PATTERN_ROWS = 300_000
#: Largest transmitter power (peak envelope) [W]: above the largest broadcast transmitters.
MAX_POWER_W = 1e8
#: Largest coordinate, height or distance on a station or site [m].
MAX_DISTANCE_M = 1e5
#: Longest feedline [m].
MAX_LENGTH_M = 1e5
#: Largest SWR accepted as a number (a short or open load is given as load_r_ohm/load_x_ohm).
MAX_SWR = 1e6
#: Largest |R| or |X| of a load, and of any impedance in a file [ohm].
MAX_IMPEDANCE_OHM = 1e9
#: Longest text value (labels, titles, descriptions) [characters].
MAX_TEXT_CHARS = 2000
#: Range of a declared antenna gain [dBi].
MAX_GAIN_DBI = 60.0
MIN_GAIN_DBI = -60.0
#: Largest declared loss [dB] (line loss per 100 m or 100 ft, connector loss).
MAX_LOSS_DB = 1000.0
#: Largest quality factor (loaded or unloaded) of a tuner part.
MAX_Q = 1e6

def nesting_depth(value: Any) -> int:
    """Depth of nested dicts/lists (a scalar is 0), without recursion."""
    deepest = 0
    stack = [(value, 0)]
    while stack:
        v, d = stack.pop()
        if isinstance(v, dict):
            stack.extend((x, d + 1) for x in v.values())
            deepest = max(deepest, d + 1)
        elif isinstance(v, list):
            stack.extend((x, d + 1) for x in v)
            deepest = max(deepest, d + 1)
    return deepest


def nesting_error(*, field: str, path: str) -> InputError:
    """The error for a file nested deeper than :data:`MAX_TOML_NESTING`."""
    return bad_value(field, path, f"nests tables and arrays more than {MAX_TOML_NESTING} levels deep "
                     f"(accepted: at most {MAX_TOML_NESTING})")


def check_nesting(data: Any, *, field: str, path: str) -> None:
    """Refuse a parsed document nested deeper than :data:`MAX_TOML_NESTING`."""
    if nesting_depth(data) > MAX_TOML_NESTING:
        raise nesting_error(field=field, path=path)


def check_file_size(size_bytes: int, *, field: str, path: str, limit: int = MAX_FILE_BYTES) -> None:
    """Refuse a file larger than ``limit`` bytes before reading it."""
    if size_bytes > limit:
        raise bad_value(field, path, f"is larger than {limit:,} bytes (accepted: at most {limit:,} bytes)")


def check_place_configurations(n_places: int, n_configurations: int) -> None:
    """Refuse a station whose places x configurations exceed :data:`MAX_PLACE_CONFIGURATIONS`."""
    pairs = n_places * n_configurations
    if pairs > MAX_PLACE_CONFIGURATIONS:
        raise bad_value("places", n_places, f"places with {n_configurations} configurations make {pairs:,} "
                        f"place-configuration pairs (accepted: at most {MAX_PLACE_CONFIGURATIONS:,})")


def finite_in_range(field: str, value: float, lo: float | None, hi: float | None, unit: str = "", *,
                    lo_open: bool = False) -> float:
    """``value`` as a float, refused unless finite and within [lo, hi] (``lo`` exclusive if ``lo_open``)."""
    ok = isinstance(value, (int, float)) and not isinstance(value, bool) and math.isfinite(value)
    if ok and lo is not None:
        ok = value > lo if lo_open else value >= lo
    if ok and hi is not None:
        ok = value <= hi
    if not ok:
        u = f" {unit}" if unit else ""
        parts = []
        if lo is not None:
            parts.append(f"{'>' if lo_open else '>='} {lo:g}{u}")
        if hi is not None:
            parts.append(f"<= {hi:g}{u}")
        raise bad_value(field, value, f"is out of range (accepted: a finite number {' and '.join(parts)})"
                        if parts else "must be a finite number")
    return float(value)


#: Upper bounds on a number by the unit suffix of its field name (rfsafe names every field with its
#: unit, so one table covers every file): suffix -> (largest magnitude, unit shown).
_BY_SUFFIX = (
    ("_rating", 1e9, ""),
    ("_w", MAX_POWER_W, "W"),
    ("_s_m", 1e3, "S/m"),
    ("_m", MAX_DISTANCE_M, "m"),
    ("_ohm", MAX_IMPEDANCE_OHM, "ohm"),
    ("_mhz", 3e5, "MHz"),
    ("_dbi", MAX_GAIN_DBI, "dBi"),
    ("_dbd", MAX_GAIN_DBI, "dBd"),
    ("_db", MAX_LOSS_DB, "dB"),
    ("_deg", 360.0, "deg"),
    ("_minutes", 1e6, "minutes"),
    ("_q", MAX_Q, ""),
    ("_v_peak", 1e9, "V peak"),
    ("swr", MAX_SWR, ""),
)
#: Any other number: a magnitude no input of rfsafe needs.
MAX_ANY_NUMBER = 1e12
#: Lowest frequency [MHz]: 3 kHz, the lower end of the radio spectrum (ITU Radio Regulations, common
#: practice). Below it nothing here applies, and a wire antenna would be a vanishing fraction of a wavelength.
MIN_FREQ_MHZ = 0.003
#: Smallest wire radius, segment length or grid spacing [m]: a nanometre, far below any real one, and far above
#: the subnormal numbers (5e-324) whose squares and quotients underflow or overflow. Coordinates are not bounded
#: below (a computed 6e-16 is a zero).
MIN_SIZE_M = 1e-9
#: The sizes MIN_SIZE_M applies to.
_SIZE_FIELDS = ("radius_m", "max_segment_m", "grid_spacing_m")
#: Smallest transmitter or input power [W]: a nanowatt, far below any transmitter, and far above the
#: subnormal numbers whose products underflow to 0 W (common practice: no physical meaning).
MIN_POWER_W = 1e-9
#: The powers MIN_POWER_W applies to.
_POWER_FIELDS = ("pep_w", "input_power_w")
#: Narrowest half-power beamwidth of the beam model [deg]: a dish some 700 wavelengths across (beamwidth about
#: 70 lambda / D degrees, from memory), narrower than the antennas of this trade. Narrower, the model's exponents
#: grow past 10^6 (q = ln(1/2) / ln cos(bw_v / 2)): the site grid's single-precision tilted beam, whose vertical
#: term is q/2 times a logarithm good to a few float32 ulps, fell up to 99 % below the float64 pattern at
#: vertical beamwidths under about 0.03 deg (measured; tests/test_site.py checks from this bound up), and below
#: about 2e-6 deg the exponents divided by zero (cos rounds to 1). A beam that narrow is given as a pattern table.
MIN_BEAMWIDTH_DEG = 0.1
#: Largest front-to-back ratio of the beam model [dB]: the site grid's single-precision kernels keep the
#: float64 pattern only down to lobes about 1e-9 of the peak; past 60 dB the tilted beam fell below it (by 2e-5
#: to 7e-4 at 63-97 dB, and to 0 where float32 underflows, measured). Real beams claim less (common practice);
#: a larger ratio given as 60 dB only raises the back lobe, which cannot understate exposure.
MAX_FRONT_TO_BACK_DB = 60.0
#: The beamwidths MIN_BEAMWIDTH_DEG applies to.
_BEAMWIDTH_FIELDS = ("beamwidth_h_deg", "beamwidth_v_deg")
#: Longest lists by field name; any other list holds at most MAX_LIST_ITEMS.
_LIST_BOUNDS = {
    "places": MAX_PLACES, "points": MAX_PLACES, "configurations": MAX_CONFIGURATIONS,
    "body_heights_m": MAX_BODY_HEIGHTS, "heights_m": MAX_BODY_HEIGHTS, "stations": MAX_SITE_STATIONS,
    "boundary": MAX_POLYGON_VERTICES, "polygon": MAX_POLYGON_VERTICES, "points_m": MAX_WIRE_POINTS,
}


#: Fields in metres whose name has no unit suffix (polygons of [x_m, y_m] vertices).
_METRE_FIELDS = ("polygon", "boundary")


def _number_bound(name: str) -> tuple[float, str]:
    if name in _METRE_FIELDS:
        return MAX_DISTANCE_M, "m"
    for suffix, hi, unit in _BY_SUFFIX:
        if name.endswith(suffix):
            return hi, unit
    return MAX_ANY_NUMBER, ""


def _numbers(value, where=""):
    """(index text, number) for every number in a value (nested lists included)."""
    if isinstance(value, bool):
        return
    if isinstance(value, (int, float)):
        yield where, value
    elif isinstance(value, (list, tuple)):
        for i, v in enumerate(value):
            yield from _numbers(v, f"{where}[{i}]")


def field_bound_problem(name: str, value: Any) -> str | None:
    """What is wrong with ``value`` of field ``name`` under the bounds above, or None.

    Numbers (also inside lists) are checked by the unit suffix of the field name; lists by their
    length; ``segments`` against :data:`MAX_WIRE_SEGMENTS`.
    """
    if isinstance(value, (list, tuple)):
        most = _LIST_BOUNDS.get(name, MAX_LIST_ITEMS)
        if len(value) > most:
            return f"has {len(value)} items (accepted: at most {most})"
    if name == "segments" and isinstance(value, int) and not isinstance(value, bool):
        if value > MAX_WIRE_SEGMENTS:
            return f"is out of range (accepted: at most {MAX_WIRE_SEGMENTS} segments per wire antenna)"
        return None
    hi, unit = _number_bound(name)
    for where, x in _numbers(value):
        if isinstance(x, float) and not math.isfinite(x):
            return f"{where + ' ' if where else ''}must be a finite number".lstrip()
        if abs(x) > hi:
            shown = f"{x:g}" if isinstance(x, float) else str(x)
            lead = f"has {shown} at {where}, " if where else "is "
            return f"{lead}out of range (accepted: magnitude at most {hi:g}{' ' + unit if unit else ''})"
        if name.endswith("_mhz") and 0 < abs(x) < MIN_FREQ_MHZ:
            shown = f"{x:g}" if isinstance(x, float) else str(x)
            lead = f"has {shown} at {where}, " if where else "is "
            return f"{lead}out of range (accepted: frequencies of at least {MIN_FREQ_MHZ:g} MHz)"
        if name in _SIZE_FIELDS and 0 < abs(x) < MIN_SIZE_M:
            shown = f"{x:g}" if isinstance(x, float) else str(x)
            lead = f"has {shown} at {where}, " if where else "is "
            return f"{lead}out of range (accepted: at least {MIN_SIZE_M:g} m)"
        if name in _POWER_FIELDS and 0 < abs(x) < MIN_POWER_W:
            shown = f"{x:g}" if isinstance(x, float) else str(x)
            lead = f"has {shown} at {where}, " if where else "is "
            return f"{lead}out of range (accepted: at least {MIN_POWER_W:g} W)"
        if name == "front_to_back_db" and x > MAX_FRONT_TO_BACK_DB:
            return (f"is out of range (accepted: at most {MAX_FRONT_TO_BACK_DB:g} dB; for a larger ratio give "
                    f"{MAX_FRONT_TO_BACK_DB:g}: a higher back lobe is the conservative side)")
        if name in _BEAMWIDTH_FIELDS and abs(x) < MIN_BEAMWIDTH_DEG:
            return (f"is out of range (accepted: at least {MIN_BEAMWIDTH_DEG:g} deg; a narrower beam is described "
                    'by a pattern table, kind = "table")')
    return None


def bounds_table() -> tuple[tuple[str, str], ...]:
    """(what, bound) rows of the README's "Limits of the input" table, made from the values above."""
    rows = [
        ("station, site or wire file", f"{MAX_FILE_BYTES:,} bytes"),
        ("pattern-table CSV", f"{MAX_PATTERN_FILE_BYTES:,} bytes, {MAX_PATTERN_ROWS:,} data rows"),
        ("nesting of tables and arrays in a TOML file", f"{MAX_TOML_NESTING} levels"),
        ("places of a station, points of a wire file", f"{MAX_PLACES:,}"),
        ("configurations of a station", f"{MAX_CONFIGURATIONS}"),
        ("places x configurations of a station", f"{MAX_PLACE_CONFIGURATIONS:,} pairs"),
        ("body heights of a place, evaluation heights of a site", f"{MAX_BODY_HEIGHTS}"),
        ("stations on a site", f"{MAX_SITE_STATIONS}"),
        ("vertices of a site boundary or area, of one wire", f"{MAX_POLYGON_VERTICES:,}"),
        ("any other list (transmitters, feedlines, antennas, wires, feeds, areas, ...)", f"{MAX_LIST_ITEMS}"),
        ("points of a site's evaluation grid (boundary plus keep-out margin)", f"{MAX_GRID_POINTS:,}"),
        ("segments of one wire antenna", f"{MAX_WIRE_SEGMENTS:,}"),
        ("text values", f"{MAX_TEXT_CHARS:,} characters"),
        ("SWR (given, or of a load impedance on its line)", f"{MAX_SWR:g}"),
        ("matched loss of a whole feedline", f"{MAX_LOSS_DB:g} dB"),
    ]
    names = {"_rating": "ratings (`*_rating`)", "_w": "powers (`*_w`)",
             "_s_m": "conductivities (`*_s_m`)", "_m": "coordinates, heights, lengths (`*_m`)",
             "_ohm": "impedances (`*_ohm`)", "_mhz": "frequencies (`*_mhz`)", "_dbi": "gains (`*_dbi`)",
             "_dbd": "gains (`*_dbd`)", "_db": "losses and ratios in dB (`*_db`)", "_deg": "angles (`*_deg`)",
             "_minutes": "times (`*_minutes`)", "_q": "quality factors (`*_q`)", "_v_peak": "voltages (`*_v_peak`)"}
    for suffix, hi, unit in _BY_SUFFIX:
        if suffix in names:
            low = f"{MIN_FREQ_MHZ:g} MHz <= " if suffix == "_mhz" else ""
            rows.append((names[suffix], f"{low}magnitude <= {hi:g}{' ' + unit if unit else ''}"))
    rows.append(("wire radius, segment length, grid spacing (`radius_m`, `max_segment_m`, `grid_spacing_m`)",
                 f">= {MIN_SIZE_M:g} m"))
    rows.append(("transmitter and input power (`pep_w`, `input_power_w`)", f">= {MIN_POWER_W:g} W"))
    rows.append(("beam half-power beamwidths (`beamwidth_h_deg`, `beamwidth_v_deg`)", f">= {MIN_BEAMWIDTH_DEG:g} deg"))
    rows.append(("beam front-to-back ratio (`front_to_back_db`)", f"<= {MAX_FRONT_TO_BACK_DB:g} dB"))
    rows.append(("any other number", f"magnitude <= {MAX_ANY_NUMBER:g}"))
    return tuple(rows)
