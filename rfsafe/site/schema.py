"""Site file schema: the pydantic models of a site description file.

A site file describes an event site: its boundary, the stations on it (each
written inline with the station file's own tables, or read from a station
file and moved to a position on the site), the areas where people are
(public, operators, no-access), the evaluation heights, the grid spacing and
the standard. Validation works like the station file's: strict types,
unknown keys rejected.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass
from pathlib import Path
from typing import Literal

from pydantic import Field

from rfsafe.station.schema import Antenna, Configuration, Feedline, Transmitter
from rfsafe.station.validation import StrictModel

__all__ = ["SiteStation", "SiteArea", "Site", "LoadedSite", "DEFAULT_HEIGHTS_M", "DEFAULT_GRID_SPACING_M"]



#: Evaluation heights of a standing person, feet to head, worst taken [m] (common practice).
DEFAULT_HEIGHTS_M = (0.5, 1.0, 1.5, 2.0)
#: Default grid spacing [m].
DEFAULT_GRID_SPACING_M = 0.25
_STATION_TABLES = ("transmitters", "feedlines", "antennas", "configurations")


class _Strict(StrictModel):
    """Strict, unknown keys refused, finite and bounded numbers (see rfsafe.bounds)."""


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
    standard: Literal["fcc", "icnirp2020", "icnirp1998", "ieee2019", "sc6", "eu1999"] = "fcc"
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

    def input_paths(self) -> tuple[Path, ...]:
        """Every file this site was read from: the site file, station files and pattern tables."""
        paths = [Path(self.path)]
        for spec, st in zip(self.model.stations, self.stations):
            # an inline station's path is only a name beside the site file (it may not exist, may be longer than
            # the system allows, or may name an unrelated file): only its pattern tables were read
            own = st.input_paths()
            for p in own if spec.file is not None else own[1:]:
                try:
                    if p.is_file():
                        paths.append(p)
                except OSError:       # not a file that was read (found by the long fuzz: a 400-character name)
                    pass
        return tuple(dict.fromkeys(paths))


