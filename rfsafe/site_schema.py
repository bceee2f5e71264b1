"""Site description file: the pydantic models and the loader (TOML -> validated site).

A site file describes an event site: its boundary, the stations on it (each
written inline with the station file's own tables, or read from a station
file and moved to a position on the site), the areas where people are
(public, operators, no-access), the evaluation heights, the grid spacing and
the standard. Validation works like the station file's: strict types,
unknown keys rejected, and every problem is one
:class:`~rfsafe.errors.InputError` naming the field path, the value and what
is accepted.
"""

from __future__ import annotations

import datetime as dt
import hashlib
from dataclasses import dataclass
from pathlib import Path
from typing import Literal

from pydantic import BaseModel, ConfigDict, Field

from rfsafe.errors import InputError, bad_value, format_value
from rfsafe.station.schema import Antenna, Configuration, Feedline, Station, Transmitter

__all__ = ["SiteStation", "SiteArea", "Site", "LoadedSite", "load_site", "DEFAULT_HEIGHTS_M",
           "DEFAULT_GRID_SPACING_M"]

#: Evaluation heights of a standing person, feet to head, worst taken [m] (common practice).
DEFAULT_HEIGHTS_M = (0.5, 1.0, 1.5, 2.0)
#: Default grid spacing [m].
DEFAULT_GRID_SPACING_M = 0.25
_STATION_TABLES = ("transmitters", "feedlines", "antennas", "configurations")


class _Strict(BaseModel):
    model_config = ConfigDict(strict=True, extra="forbid", frozen=True, allow_inf_nan=False)


class SiteStation(_Strict):
    """A station on the site: inline tables (as in a station file) or a station file moved to (x_m, y_m)."""

    name: str = Field(min_length=1, description="Label of the station on the site (unique).")
    description: str = ""
    x_m: float = Field(default=0.0, description="East position of the station's origin on the site [m]; "
                                                "its antennas' x_m/y_m are offsets from here.")
    y_m: float = Field(default=0.0, description="North position of the station's origin on the site [m].")
    file: str | None = Field(default=None, description="Station file (relative to the site file) to read "
                                                       "instead of inline tables.")
    transmitters: list[Transmitter] | None = None
    feedlines: list[Feedline] | None = None
    antennas: list[Antenna] | None = None
    configurations: list[Configuration] | None = None
    exact_line_loss: bool = Field(default=False, description="As in a station file.")


class SiteArea(_Strict):
    """An area of the site and who may be in it while the stations transmit."""

    label: str = Field(min_length=1)
    kind: Literal["public", "operators", "no-access"] = Field(
        description="public (uncontrolled limit), operators (controlled limit), no-access (roped off, nobody).")
    polygon: list[list[float]] = Field(min_length=3, description="Vertices [[x_m, y_m], ...], not closed.")


class Site(_Strict):
    """An event site: boundary, stations, areas, evaluation heights, grid and standard."""

    title: str = "Event site RF exposure review"
    site: str = Field(default="", description="Site label shown on outputs.")
    evaluator: str = ""
    evaluation_date: dt.date | None = Field(default=None, description="Date of the evaluation (TOML date).")
    standard: Literal["fcc", "icnirp2020", "icnirp1998", "ieee2019", "sc6"] = "fcc"
    ground_reflection: Literal["none", "typical", "full"] = Field(
        default="full", description="Ground-reflection factor for every station: none (F=1), typical (F=2.56), "
                                    "full (F=4; default, conservative).")
    heights_m: list[float] = Field(default=list(DEFAULT_HEIGHTS_M), min_length=1,
                                   description="Evaluation heights above ground, worst taken [m].")
    grid_spacing_m: float = Field(default=DEFAULT_GRID_SPACING_M, gt=0, description="Grid spacing [m].")
    boundary: list[list[float]] = Field(min_length=3, description="Site boundary [[x_m, y_m], ...], not closed.")
    stations: list[SiteStation] = Field(min_length=1)
    areas: list[SiteArea] = Field(default_factory=list)


@dataclass(frozen=True)
class LoadedSite:
    """A validated site and where it came from.

    ``stations`` holds one :class:`rfsafe.station.LoadedStation` per site
    station (antenna positions still relative to the station's origin) and
    ``sources`` a (label, SHA-256) pair per station ("inline" or the file).
    """

    model: Site
    path: Path
    sha256: str
    stations: tuple
    sources: tuple[tuple[str, str | None], ...]
    boundary: tuple[tuple[float, float], ...]
    areas: tuple


def _prefixed(err: InputError, prefix: str) -> InputError:
    return InputError(f"{prefix}{err}")


def _station_from_tables(i: int, s: SiteStation, site: Site, base: Path):
    from rfsafe.station.load import LoadedStation, check_station

    for key in _STATION_TABLES:
        if getattr(s, key) is None:
            raise InputError(f"stations[{i}].{key}: is required (give the station's tables inline, "
                             'or file = "<station file>")')
    station = Station(transmitters=s.transmitters, feedlines=s.feedlines, antennas=s.antennas,
                      configurations=s.configurations, standard=site.standard,
                      ground_reflection=site.ground_reflection, exact_line_loss=s.exact_line_loss,
                      station=s.name, title=site.title)
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
    if not path.is_file():
        raise bad_value(f"stations[{i}].file", s.file,
                        "does not exist (a path relative to the site file)" if not path.exists()
                        else "is not a file")
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
