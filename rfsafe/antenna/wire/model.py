"""Input model of a wire antenna: wires as polylines, delta-gap feeds, ground, observation points.

Two models: :class:`WireAntennaSpec` (geometry only, no frequency; embedded by a station file under
``[antennas.wire]``) and :class:`WireFile` (a file for ``rfsafe wire``: the geometry plus
``freq_mhz``, ``input_power_w`` and ``[[points]]``). Both are strict pydantic v2 models with
``extra="forbid"``. Checks that need the whole model (labels, feed references) are in
:func:`check_wire_antenna`; checks that need the frequency (segment lengths) happen in ``solve``.
"""

from __future__ import annotations

import math
from pathlib import Path
from typing import Annotated, Literal

from pydantic import BaseModel, ConfigDict, Field

from rfsafe.errors import InputError, bad_value, format_value

__all__ = [
    "WireSpec", "FeedSpec", "WireAntennaSpec", "PointSpec", "WireFile",
    "check_wire_antenna", "validate_wire_antenna", "load_wire_file", "wire_label",
]

#: Three coordinates (x east, y north, z up) [m].
Vec3 = Annotated[list[float], Field(min_length=3, max_length=3)]


class _Strict(BaseModel):
    model_config = ConfigDict(strict=True, extra="forbid", frozen=True, allow_inf_nan=False)


class WireSpec(_Strict):
    """One wire: a polyline of straight pieces with one radius."""

    label: str | None = Field(default=None, min_length=1,
                              description="Name used by feeds and messages (default: wires[i]).")
    points_m: list[Vec3] = Field(min_length=2,
                                 description="Polyline vertices [[x, y, z], ...] in the station frame [m].")
    radius_m: float = Field(gt=0, description="Conductor radius [m].")
    segments: int | None = Field(default=None, ge=1, description="Total number of segments on this wire.")
    max_segment_m: float | None = Field(default=None, gt=0,
                                        description="Longest segment [m] (default rule: wavelength/40).")


class FeedSpec(_Strict):
    """A delta-gap voltage source in series with a wire."""

    wire: str | int = Field(description="Wire label, or index into [[wires]] (from 0).")
    position: float = Field(default=0.5, ge=0, le=1,
                            description="Fraction of the wire length from its first point (0..1).")
    amplitude: float = Field(default=1.0, gt=0, description="Relative source voltage amplitude.")
    phase_deg: float = Field(default=0.0, description="Source voltage phase [deg].")


class WireAntennaSpec(_Strict):
    """Wire antenna geometry for the moment-method solver (no frequency; see ``solve``)."""

    ground: Literal["free-space", "perfect"] = Field(
        default="free-space", description='"free-space" or "perfect" (perfectly conducting plane z = 0).')
    wires: list[WireSpec] = Field(min_length=1)
    feeds: list[FeedSpec] = Field(min_length=1)


class PointSpec(_Strict):
    """An observation point for the near field."""

    label: str = Field(min_length=1)
    position_m: Vec3 = Field(description="[x, y, z] in the station frame [m].")


class WireFile(WireAntennaSpec):
    """A file for ``rfsafe wire``: geometry plus frequency, input power and observation points."""

    description: str = ""
    freq_mhz: float = Field(gt=0, description="Frequency [MHz].")
    input_power_w: float = Field(default=1.0, gt=0, description="Power delivered to the antenna [W].")
    points: list[PointSpec] = Field(default_factory=list)


def wire_label(spec: WireAntennaSpec, i: int) -> str:
    """Display name of wire ``i``: its label, else ``wires[i]``."""
    return spec.wires[i].label or f"wires[{i}]"


def _wire_index(spec: WireAntennaSpec, feed: FeedSpec, path: str) -> int:
    labels = [w.label for w in spec.wires]
    if isinstance(feed.wire, int):
        if not 0 <= feed.wire < len(spec.wires):
            raise bad_value(path, feed.wire, f"is not a wire index (accepted: 0 to {len(spec.wires) - 1})")
        return feed.wire
    if feed.wire not in labels:
        declared = ", ".join(format_value(x) for x in labels if x is not None) or "none"
        raise bad_value(path, feed.wire, f"is not a wire label (declared labels: {declared}; "
                        "or give the index from 0)")
    return labels.index(feed.wire)


def check_wire_antenna(spec: WireAntennaSpec, *, prefix: str = "") -> tuple[int, ...]:
    """Consistency checks the schema cannot express; returns the wire index of each feed.

    Parameters
    ----------
    spec : WireAntennaSpec
        Validated model.
    prefix : str
        Field-path prefix for messages, e.g. ``"antennas[2].wire."``.

    Raises
    ------
    InputError
        Duplicate labels, unknown feed wires, two feeds at one place, zero-length pieces,
        both ``segments`` and ``max_segment_m`` on a wire, wires below a perfect ground.
    """
    seen: dict[str, int] = {}
    for i, w in enumerate(spec.wires):
        path = f"{prefix}wires[{i}]"
        if w.label is not None:
            if w.label in seen:
                raise bad_value(f"{path}.label", w.label,
                                f"is a duplicate label (wires[{seen[w.label]}] has it; labels must be unique)")
            seen[w.label] = i
        if w.segments is not None and w.max_segment_m is not None:
            raise InputError(f"{path}.max_segment_m: give either segments or max_segment_m, not both")
        for j in range(1, len(w.points_m)):
            a, b = w.points_m[j - 1], w.points_m[j]
            if math.dist(a, b) <= 1e-6:
                raise bad_value(f"{path}.points_m[{j}]", b,
                                "repeats the previous point (pieces must be longer than 1e-6 m)")
        if spec.ground == "perfect":
            for j, p in enumerate(w.points_m):
                if p[2] < 0:
                    raise bad_value(f"{path}.points_m[{j}]", p,
                                    "is below the perfect ground (accepted: z >= 0 m)")
                if 0 < j < len(w.points_m) - 1 and p[2] <= 1e-6:
                    raise bad_value(f"{path}.points_m[{j}]", p,
                                    "touches the ground at an interior point (only wire ends may touch z = 0)")
    where: dict[tuple[int, float], int] = {}
    out = []
    for f, feed in enumerate(spec.feeds):
        path = f"{prefix}feeds[{f}]"
        iw = _wire_index(spec, feed, f"{path}.wire")
        key = (iw, round(feed.position, 9))
        if key in where:
            raise bad_value(f"{path}.position", feed.position,
                            f"is the place of feeds[{where[key]}] on the same wire (one feed per place)")
        where[key] = f
        out.append(iw)
    return tuple(out)


def validate_wire_antenna(data: object, *, prefix: str = "") -> WireAntennaSpec:
    """Validate a ``[antennas.wire]``-style table into a :class:`WireAntennaSpec` and check it.

    Parameters
    ----------
    data : dict
        Parsed TOML table.
    prefix : str
        Field-path prefix for messages.
    """
    from rfsafe.station.validation import validate_model

    spec = validate_model(WireAntennaSpec, data, prefix=prefix)
    check_wire_antenna(spec, prefix=prefix)
    return spec


def load_wire_file(path: str | Path) -> WireFile:
    """Read and validate a wire file for ``rfsafe wire``.

    Raises
    ------
    InputError
        TOML syntax errors (with tomllib's line and column), unknown keys, wrong types or values,
        each naming the field path and the value.
    """
    from rfsafe.station.validation import read_toml, validate_model

    data, _raw = read_toml(Path(path))
    spec = validate_model(WireFile, data)
    check_wire_antenna(spec)
    seen: dict[str, int] = {}
    for i, p in enumerate(spec.points):
        if p.label in seen:
            raise bad_value(f"points[{i}].label", p.label,
                            f"is a duplicate label (points[{seen[p.label]}] has it)")
        seen[p.label] = i
    return spec
