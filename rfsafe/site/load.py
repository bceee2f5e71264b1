"""Site file loading: TOML -> validated site; every problem is one InputError naming the field
path, the value and what is accepted."""

from __future__ import annotations

import hashlib
from pathlib import Path

from rfsafe.errors import InputError, bad_value, format_value
from rfsafe.site.schema import _STATION_TABLES, LoadedSite, Site, SiteStation
from rfsafe.station.schema import Station

__all__ = ["load_site"]


def _prefixed(err: InputError, prefix: str) -> InputError:
    return InputError(f"{prefix}{err}")


def _station_from_tables(i: int, s: SiteStation, site: Site, base: Path):
    from rfsafe.station.load import LoadedStation, check_station

    for key in _STATION_TABLES:
        if getattr(s, key) is None:
            raise InputError(f"stations[{i}].{key}: is required (give the station's tables inline, "
                             'or file = "<station file>")')
    from rfsafe.station.validation import validate_model

    # validated like a station file (an empty table is refused here, never a pydantic traceback)
    station = validate_model(Station, dict(
        transmitters=s.transmitters, feedlines=s.feedlines, antennas=s.antennas,
        configurations=s.configurations, standard=site.standard, ground_reflection=site.ground_reflection,
        exact_line_loss=s.exact_line_loss, station=s.name, title=site.title), prefix=f"stations[{i}].")
    try:
        wire_specs, tables = check_station(station, base)
    except InputError as err:
        raise _prefixed(err, f"stations[{i}].") from None
    return LoadedStation(model=station, path=base / f"{s.name}", sha256="", wire_specs=wire_specs,
                         pattern_tables=tables), ("inline", None)


def _station_from_file(i: int, s: SiteStation, site: Site, base: Path):
    from rfsafe.station.load import LoadedStation, check_station
    from rfsafe.station.validation import read_toml, validate_model

    for key in _STATION_TABLES + ("exact_line_loss",):
        if key in s.model_fields_set:
            raise InputError(f"stations[{i}].{key}: applies only to an inline station (this station is read "
                             f"from {format_value(s.file)})")
    path = base / s.file
    try:
        is_file, exists = path.is_file(), path.exists()
    except OSError as exc:   # a name too long, a path through a file, ...: not a readable file either
        raise bad_value(f"stations[{i}].file", s.file, f"cannot be read ({exc.strerror})") from None
    if not is_file:
        raise bad_value(f"stations[{i}].file", s.file,
                        "does not exist (a path relative to the site file)" if not exists else "is not a file")
    prefix = f"stations[{i}] (file {format_value(s.file)}): "
    try:
        data, raw = read_toml(path)
        if not isinstance(data, dict):
            raise InputError("(file): must be a TOML table")
        data = {**data, "standard": site.standard, "ground_reflection": site.ground_reflection}
        station = validate_model(Station, data)
        wire_specs, tables = check_station(station, path.parent)
    except InputError as err:
        raise _prefixed(err, prefix) from None
    digest = hashlib.sha256(raw).hexdigest()
    return LoadedStation(model=station, path=path, sha256=digest, wire_specs=wire_specs,
                         pattern_tables=tables), (s.file, digest)


def load_site(path: str | Path, *, standard: str | None = None) -> LoadedSite:
    """Read, validate and cross-check a site file and the station files it names.

    ``standard`` overrides the file's standard (the ``--standard`` option).

    Raises
    ------
    InputError
        For any problem, naming the field path, the value and what is accepted.
    """
    from rfsafe.site import Area, validate_polygon
    from rfsafe.station.validation import read_toml, validate_with_standard

    path = Path(path)
    data, raw = read_toml(path)
    site = validate_with_standard(Site, data, standard)
    for k, h in enumerate(site.heights_m):
        if not h >= 0.0:
            raise bad_value(f"heights_m[{k}]", h, "is out of range (accepted: >= 0 m above ground)")
    boundary = validate_polygon(site.boundary, field="boundary")
    seen: dict[str, int] = {}
    for i, s in enumerate(site.stations):
        if s.name in seen:
            raise bad_value(f"stations[{i}].name", s.name,
                            f"is a duplicate name (stations[{seen[s.name]}] has it; each station name must be unique)")
        if "/" in s.name:
            raise bad_value(f"stations[{i}].name", s.name, 'must not contain "/" (used for station/transmitter)')
        seen[s.name] = i
    labels: dict[str, int] = {}
    areas = []
    for i, a in enumerate(site.areas):
        if a.label in labels:
            raise bad_value(f"areas[{i}].label", a.label,
                            f"is a duplicate label (areas[{labels[a.label]}] has it; each area label must be unique)")
        if a.label in ("open ground", "outside the site"):
            raise bad_value(f"areas[{i}].label", a.label, "is reserved for ground in no area (choose another label)")
        labels[a.label] = i
        areas.append(Area(a.label, a.kind, validate_polygon(a.polygon, field=f"areas[{i}].polygon")))
    stations = []
    sources = []
    for i, s in enumerate(site.stations):
        loaded, source = (_station_from_file if s.file is not None else _station_from_tables)(
            i, s, site, path.parent)
        stations.append(loaded)
        sources.append(source)
    return LoadedSite(model=site, path=path, sha256=hashlib.sha256(raw).hexdigest(), stations=tuple(stations),
                      sources=tuple(sources), boundary=boundary, areas=tuple(areas))
