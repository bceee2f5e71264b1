"""Load a station file: TOML -> strict model -> cross-reference checks.

Every problem is an :class:`~rfsafe.errors.InputError` naming the field path,
the value and what is accepted.
"""

from __future__ import annotations

import hashlib
import math
from dataclasses import dataclass
from pathlib import Path

from rfsafe.errors import InputError, bad_value, format_value
from rfsafe.station.schema import Antenna, Configuration, Feedline, Station
from rfsafe.station.validation import read_toml, validate_with_standard
from rfsafe.units import dbd_to_dbi

__all__ = ["LoadedStation", "load_station", "check_station", "quoted_list"]

#: Intrinsic peak gains of the analytic antenna kinds [dBi] (used when no gain is declared).
INTRINSIC_GAIN_DBI = {
    "isotropic": 0.0,
    "short-dipole": 1.76,            # 10 log10(1.5), Balanis, Antenna Theory, sec. 4.2
    "half-wave-dipole": 2.15,        # 10 log10(1.64), Balanis sec. 4.6
    "quarter-wave-vertical": 5.16,   # monopole over perfect ground, image theory (Balanis sec. 4.7)
}
_CUSTOM_ONLY = ("z0_ohm", "velocity_factor", "loss_db_per_100m", "loss_db_per_100ft")


@dataclass(frozen=True)
class LoadedStation:
    """A validated station and where it came from."""

    model: Station
    path: Path
    sha256: str
    wire_specs: dict  # antenna id -> validated wire geometry (solver spec)
    pattern_tables: dict  # antenna id -> loaded pattern table
    file_standard: str = ""  # the standard the file itself names (differs from model.standard under --standard)

    def input_paths(self) -> tuple[Path, ...]:
        """Every file this station was read from: the station file and its pattern tables."""
        base = Path(self.path).parent
        tables = [base / a.pattern_file for a in self.model.antennas if getattr(a, "pattern_file", None)]
        return (Path(self.path), *tables)


#: A place closer than this fraction of an antenna's size to its structure is "on the antenna"
#: (relative, so the test does not depend on where the station sits in its coordinate frame).
ON_ANTENNA_REL_TOL = 1e-6


def _check_place_off_antenna(p_index: int, place, a: Antenna, wire_spec, size_m: float) -> None:
    """Refuse a place that lies on an antenna: inside a wire's conductor, or (an antenna without
    declared conductors) within ``ON_ANTENNA_REL_TOL`` of its size ``size_m`` [m] (half a wavelength
    at its highest frequency) from its reference point.

    Distances are taken in coordinates relative to the antenna (its position subtracted first), so
    the same geometry gives the same answer wherever it sits.
    """
    origin = (a.x_m, a.y_m, a.height_m)
    heights = place.body_heights_m or [place.height_m]
    rel = [(place.x_m - origin[0], place.y_m - origin[1], z - origin[2]) for z in heights]
    if wire_spec is not None:
        from rfsafe.antenna.wire.geometry import point_segment_distances
        import numpy as np

        pts = np.asarray(rel, dtype=float)
        for w in wire_spec.wires:
            v = np.asarray(w.points_m, dtype=float) - np.asarray(origin, dtype=float)
            d = point_segment_distances(pts[:, None, :], v[:-1], v[1:]).min()
            if d <= w.radius_m:
                raise bad_value(f"places[{p_index}]", place.label,
                                f"lies inside a conductor of antenna {a.id!r} ({d:.3g} m from a wire of radius "
                                f"{w.radius_m:.3g} m): a place must be outside the antenna's conductors")
        return
    if min(math.hypot(*r) for r in rel) < ON_ANTENNA_REL_TOL * size_m:
        raise bad_value(f"places[{p_index}]", place.label,
                        f"is at the position of antenna {a.id!r}: a place must be away from the antenna")


def quoted_list(names) -> str:
    return ", ".join(format_value(n) for n in names)


def _unique(items, key: str, section: str) -> None:
    seen = set()
    for i, item in enumerate(items):
        value = getattr(item, key)
        if value in seen:
            raise bad_value(f"{section}[{i}].{key}", value, f"is a duplicate {key} (each {key} in {section} must be unique)")
        seen.add(value)


def _ref(value: str, declared: list[str], path: str, what: str) -> None:
    if value not in declared:
        raise bad_value(path, value, f"is not a declared {what} (declared: {quoted_list(declared)})")


def _check_feedline(i: int, f: Feedline) -> None:
    from rfsafe import feedline as fl

    path = f"feedlines[{i}]"
    if f.cable == "custom":
        if f.z0_ohm is None:
            raise InputError(f"{path}.z0_ohm: is required for a custom cable")
        if f.velocity_factor is None:
            raise InputError(f"{path}.velocity_factor: is required for a custom cable")
        if (f.loss_db_per_100m is None) == (f.loss_db_per_100ft is None):
            raise InputError(f"{path}.loss_db_per_100m: a custom cable needs exactly one of "
                             "loss_db_per_100m or loss_db_per_100ft")
    else:
        fl.cable_class(f.cable, field=f"{path}.cable")
        for key in _CUSTOM_ONLY:
            if getattr(f, key) is not None:
                raise bad_value(f"{path}.{key}", getattr(f, key),
                                f'applies only to cable = "custom" (this feedline uses {format_value(f.cable)})')
    from rfsafe.feedline.stress import connector_ends

    balanced = f.cable != "custom" and fl.cable_class(f.cable).balanced
    connector_ends(path, f.connector, f.connector_at_transmitter, f.connector_at_antenna, f.connector_v_peak_rating,
                   balanced)
    if f.balun is not None:
        from rfsafe.feedline.balun import parse_balun_ratio

        parse_balun_ratio(f.balun.ratio, field=f"{path}.balun.ratio")


def _check_antenna(i: int, a: Antenna, base: Path, wire_specs: dict, tables: dict) -> None:
    path = f"antennas[{i}]"
    if a.gain_dbi is not None and a.gain_dbd is not None:
        raise InputError(f"{path}.gain_dbd: give either gain_dbi or gain_dbd, not both")
    has_gain = a.gain_dbi is not None or a.gain_dbd is not None
    if a.kind in ("beam", "other") and not has_gain:
        raise InputError(f"{path}.gain_dbi: is required for an antenna of kind {format_value(a.kind)} "
                         "(give gain_dbi or gain_dbd)")
    for key in ("element_span_m", "boom_length_m"):
        if a.kind != "beam" and getattr(a, key) is not None:
            raise bad_value(f"{path}.{key}", getattr(a, key), 'applies only to kind = "beam"')
    if a.kind == "beam" and a.use_pattern:
        for key in ("front_to_back_db", "beamwidth_h_deg", "beamwidth_v_deg"):
            if getattr(a, key) is None:
                raise InputError(f"{path}.{key}: is required for a beam antenna with use_pattern = true")
    if a.kind == "table":
        if a.pattern_file is None:
            raise InputError(f'{path}.pattern_file: is required for an antenna of kind "table"')
        from rfsafe.antenna.patterns import load_pattern_table

        tables[a.id] = load_pattern_table(base / a.pattern_file, field=f"{path}.pattern_file")
    elif a.pattern_file is not None:
        raise bad_value(f"{path}.pattern_file", a.pattern_file, 'applies only to kind = "table"')
    if a.kind in ("other", "wire") and a.use_pattern:
        raise bad_value(f"{path}.use_pattern", True, f'needs a pattern model: kind {format_value(a.kind)} has none '
                        '(use a named kind, "beam" or "table"; wire antennas use the solver near them)')
    if a.use_pattern or a.kind == "table":
        from rfsafe.antenna.patterns import make_pattern

        gain = a.gain_dbi if a.gain_dbi is not None else (dbd_to_dbi(a.gain_dbd) if a.gain_dbd is not None else None)
        make_pattern(a.kind, peak_gain_dbi=gain, front_to_back_db=a.front_to_back_db,
                     beamwidth_h_deg=a.beamwidth_h_deg, beamwidth_v_deg=a.beamwidth_v_deg,
                     table=tables.get(a.id), field=path)
    if a.kind == "wire":
        if a.wire is None:
            raise InputError(f'{path}.wire: is required for an antenna of kind "wire"')
        from rfsafe.antenna.wire.model import check_wire_antenna

        check_wire_antenna(a.wire, prefix=f"{path}.wire.")
        wire_specs[a.id] = a.wire
    elif a.wire is not None:
        raise InputError(f'{path}.wire: applies only to kind = "wire"')


def _check_configuration(i: int, c: Configuration, station: Station) -> None:
    from rfsafe.limits import limits_at
    from rfsafe.power import mode_duty_factor

    path = f"configurations[{i}]"
    _ref(c.transmitter, [t.id for t in station.transmitters], f"{path}.transmitter", "transmitter")
    _ref(c.feedline, [f.id for f in station.feedlines], f"{path}.feedline", "feedline")
    _ref(c.antenna, [a.id for a in station.antennas], f"{path}.antenna", "antenna")
    mode_duty_factor(c.mode, field=f"{path}.mode")
    if c.swr is not None and c.load_r_ohm is not None:
        raise InputError(f"{path}.swr: give either swr or load_r_ohm/load_x_ohm, not both")
    if c.load_x_ohm is not None and c.load_r_ohm is None:
        raise InputError(f"{path}.load_r_ohm: is required when load_x_ohm is given")
    if c.tuner is not None and c.load_r_ohm is None:
        raise InputError(f"{path}.tuner: a tuner needs the antenna's impedance (give load_r_ohm and "
                         "load_x_ohm instead of swr)")
    if c.tuner is not None and c.tuner.kind == "l" and c.tuner.loaded_q is not None:
        raise bad_value(f"{path}.tuner.loaded_q", c.tuner.loaded_q,
                        "applies only to a pi or T network (an L network's Q is set by the impedances)")
    if c.tuner is not None:
        settings = {k: getattr(c.tuner, k) for k in ("c1_pf", "l_uh", "c2_pf")}
        given = [k for k, v in settings.items() if v is not None]
        if given and c.tuner.kind != "t":
            raise bad_value(f"{path}.tuner.{given[0]}", settings[given[0]], "applies to a T network (kind = \"t\") only")
        if given and len(given) != 3:
            missing = next(k for k in settings if k not in given)
            raise InputError(f"{path}.tuner.{missing}: is required but missing (give all three T settings c1_pf, "
                             "l_uh, c2_pf, or none)")
        for key in ("capacitor_range_pf", "inductor_range_uh"):
            rng = getattr(c.tuner, key)
            if rng is not None and not 0 < rng[0] < rng[1]:
                raise bad_value(f"{path}.tuner.{key}", rng, "must be [min, max] with 0 < min < max")
    for env in ("controlled", "uncontrolled"):
        limits_at(station.standard, c.freq_mhz * 1e6, env, field=f"{path}.freq_mhz")
    fline = next((f for f in station.feedlines if f.id == c.feedline), None)
    if fline is not None and fline.cable != "custom":
        from rfsafe.feedline.catalogue import _cables, check_catalogue_frequency

        if fline.cable in _cables():
            check_catalogue_frequency(_cables()[fline.cable], c.freq_mhz, field=f"{path}.freq_mhz")


def check_station(station: Station, base: Path) -> tuple[dict, dict]:
    """Cross-reference and consistency checks the schema alone cannot express."""
    _unique(station.transmitters, "id", "transmitters")
    _unique(station.feedlines, "id", "feedlines")
    _unique(station.antennas, "id", "antennas")
    _unique(station.configurations, "id", "configurations")
    _unique(station.places, "label", "places")
    from rfsafe.bounds import check_place_configurations

    check_place_configurations(len(station.places), len(station.configurations))
    for i, f in enumerate(station.feedlines):
        _check_feedline(i, f)
    wire_specs: dict = {}
    tables: dict = {}
    for i, a in enumerate(station.antennas):
        _check_antenna(i, a, base, wire_specs, tables)
    for i, c in enumerate(station.configurations):
        _check_configuration(i, c, station)
    for p_index, place in enumerate(station.places):
        for a in station.antennas:
            freqs = [c.freq_mhz for c in station.configurations if c.antenna == a.id]
            size_m = 299.792458 / (2.0 * max(freqs)) if freqs else 1.0   # half a wavelength [m]
            _check_place_off_antenna(p_index, place, a, wire_specs.get(a.id), size_m)
    by_id = {c.id: c for c in station.configurations}
    for g, group in enumerate(station.simultaneous):
        used: dict[str, str] = {}
        for j, cid in enumerate(group.configurations):
            path = f"simultaneous[{g}].configurations[{j}]"
            _ref(cid, list(by_id), path, "configuration")
            tx = by_id[cid].transmitter
            if tx in used:
                raise bad_value(path, cid, f"uses transmitter {format_value(tx)} like {format_value(used[tx])}: "
                                "a transmitter sends one configuration at a time")
            used[tx] = cid
    return wire_specs, tables


def load_station(path: str | Path, *, standard: str | None = None) -> LoadedStation:
    """Read, validate and cross-check a station file.

    ``standard`` overrides the file's standard (the ``--standard`` option).

    Raises
    ------
    InputError
        For any problem, naming the field path, the value and what is accepted.
    """
    path = Path(path)
    data, raw = read_toml(path)
    station = validate_with_standard(Station, data, standard)
    wire_specs, tables = check_station(station, path.parent)
    own = data.get("standard", Station.model_fields["standard"].default) if isinstance(data, dict) else ""
    return LoadedStation(model=station, path=path, sha256=hashlib.sha256(raw).hexdigest(),
                         wire_specs=wire_specs, pattern_tables=tables, file_standard=str(own))
