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

from pydantic import ConfigDict, Field

from rfsafe.errors import InputError, bad_value, format_value
from rfsafe.station.validation import StrictModel

__all__ = [
    "WireSpec", "FeedSpec", "CircuitSpec", "LoadSpec", "ChokeSpec", "ShieldSpec", "WireAntennaSpec", "PointSpec", "WireFile",
    "check_wire_antenna", "validate_wire_antenna", "load_wire_file", "wire_label",
    "check_circuit", "along_fraction", "load_places", "load_label", "soil_of",
]

#: Three coordinates (x east, y north, z up) [m].
Vec3 = Annotated[list[float], Field(min_length=3, max_length=3)]


class _Strict(StrictModel):
    """Strict, unknown keys refused, finite and bounded numbers (see rfsafe.bounds)."""


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


class CircuitSpec(_Strict):
    """A lumped two-terminal circuit in series with a conductor, described at the operating frequency.

    ``circuit = "series"``: Z = R + jX + (omega L / Q + j omega L) + 1 / (j omega C), any subset
    (R + jX; a series R-L-C; a loading coil as ``inductance_uh`` with its ``coil_q``).
    ``circuit = "parallel"``: 1/Z = 1/R + 1/(omega L / Q + j omega L) + j omega C, any subset (a trap;
    a choke's parallel R-L-C model). ``coil_q`` adds the coil's loss as its series resistance.
    """

    circuit: Literal["series", "parallel"] = Field(
        default="series", description='"series" (R, X, L, C in series) or "parallel" (R, L, C in parallel: a trap).')
    resistance_ohm: float | None = Field(default=None, ge=0,
                                         description="Resistance [ohm] (series: in series; parallel: shunt loss).")
    reactance_ohm: float | None = Field(default=None,
                                        description="Series circuit only: a fixed reactance at the frequency [ohm].")
    inductance_uh: float | None = Field(default=None, gt=0, description="Inductance [uH].")
    capacitance_pf: float | None = Field(default=None, gt=0, description="Capacitance [pF].")
    coil_q: float | None = Field(default=None, gt=0,
                                 description="Unloaded Q of the inductance (its loss; default: lossless).")


class LoadSpec(CircuitSpec):
    """A lumped load (trap, loading coil, resistor, R + jX) in series with a wire at one place."""

    label: str | None = Field(default=None, min_length=1, description="Name shown in results (default: loads[i]).")
    wire: str | int = Field(description="Wire label, or index into [[wires]] (from 0).")
    position: float | None = Field(default=None, ge=0, le=1,
                                   description="Fraction of the wire length from its first point (0..1).")
    distance_m: float | None = Field(default=None, ge=0,
                                     description="Distance along the wire from its first point [m] (instead of position).")
    voltage_rating_v_peak: float | None = Field(default=None, gt=0,
                                                description="Rated voltage across the load [V peak] (default: not rated).")


class ChokeSpec(CircuitSpec):
    """A common-mode choke on the feedline shield, at a place along its route."""

    position: float | None = Field(default=None, ge=0, le=1,
                                   description="Fraction of the route length from the feed point (default 0: at the feed).")
    distance_m: float | None = Field(default=None, ge=0,
                                     description="Distance along the route from the feed point [m] (instead of position).")


class ShieldSpec(_Strict):
    """The outer surface of a coaxial feedline's shield, modelled as a wire carrying common-mode current.

    The fed wire is cut at the feed: the shield joins the part named by ``joins`` (the braid's side),
    the source sits between the other part and that junction. The route runs from the feed point
    through ``route_m`` to the far end, which is either open (equipment not grounded) or on the ground.
    """

    feed: int = Field(default=0, ge=0, description="Index of the feed (into [[feeds]]) this feedline drives.")
    joins: Literal["start-side", "end-side"] = Field(
        description='Part of the fed wire the shield (braid) connects to: "start-side" (toward the wire\'s '
                    'first point) or "end-side".')
    route_m: list[Vec3] = Field(min_length=1,
                                description="Route of the feedline after the feed point [[x, y, z], ...] [m].")
    radius_m: float = Field(gt=0, description="Outer radius of the shield [m].")
    far_end: Literal["open", "ground"] = Field(
        description='"open" (ends at ungrounded equipment) or "ground" (last route point on the ground, z = 0).')
    segments: int | None = Field(default=None, ge=1, description="Total number of segments on the route.")
    max_segment_m: float | None = Field(default=None, gt=0,
                                        description="Longest segment on the route [m] (default rule: wavelength/40).")
    choke: ChokeSpec | None = Field(default=None, description="Common-mode choke on the shield (default: none).")


class WireAntennaSpec(_Strict):
    """Wire antenna geometry for the moment-method solver (no frequency; see ``solve``)."""

    ground: Literal["free-space", "perfect", "real"] = Field(
        default="free-space",
        description='"free-space", "perfect" (perfectly conducting plane z = 0) or "real" (lossy soil below '
                    'z = 0, given by soil or by soil_relative_permittivity and soil_conductivity_s_m).')
    soil: str | None = Field(
        default=None, description='Ground class for ground = "real": sea-water, fresh-water, wet-ground, '
                                  'medium-dry-ground, very-dry-ground (ITU-R P.527-3 Fig. 1 values, from memory).')
    soil_relative_permittivity: float | None = Field(
        default=None, ge=1, description='Relative permittivity of the soil for ground = "real" (instead of soil).')
    soil_conductivity_s_m: float | None = Field(
        default=None, ge=0, description='Conductivity of the soil [S/m] for ground = "real" (instead of soil).')
    wires: list[WireSpec] = Field(min_length=1)
    feeds: list[FeedSpec] = Field(min_length=1)
    loads: list[LoadSpec] = Field(default_factory=list,
                                  description="Lumped loads in series with wires (traps, loading coils, resistors).")
    shield: ShieldSpec | None = Field(
        default=None, description="The coax shield's outer surface as a conductor (common-mode current).")


class PointSpec(_Strict):
    """An observation point for the near field."""

    model_config = ConfigDict(defer_build=True)   # built when a wire file is first read (not by station files)

    label: str = Field(min_length=1)
    position_m: Vec3 = Field(description="[x, y, z] in the station frame [m].")


class WireFile(WireAntennaSpec):
    """A file for ``rfsafe wire``: geometry plus frequency, input power and observation points."""

    model_config = ConfigDict(defer_build=True)   # built when a wire file is first read (not by station files)

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


#: Largest conductor radius accepted [m]: thicker than the tubing of any wire antenna, so a larger value is
#: most likely millimetres typed as metres (a 2 mm wire as radius_m = 2).
MAX_WIRE_RADIUS_M = 0.1


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
        if w.radius_m > MAX_WIRE_RADIUS_M:
            raise bad_value(f"{path}.radius_m", w.radius_m,
                            f"is thicker than any wire or tube of an antenna (at most {MAX_WIRE_RADIUS_M:g} m); did you "
                            f"mean {w.radius_m / 1000:g} m ({w.radius_m:g} mm)? (the radius is in metres)")
        for j in range(1, len(w.points_m)):
            a, b = w.points_m[j - 1], w.points_m[j]
            if math.dist(a, b) <= 1e-6:
                raise bad_value(f"{path}.points_m[{j}]", b,
                                "repeats the previous point (pieces must be longer than 1e-6 m)")
        if spec.ground == "real":
            for j, p in enumerate(w.points_m):
                if p[2] <= 0:
                    raise bad_value(f"{path}.points_m[{j}]", p,
                                    "is on or below the real ground (accepted: z > 0 m; wires touching or buried "
                                    "in the soil, ground rods and buried radials are not modelled: use elevated "
                                    'radials, or ground = "perfect" for a ground screen)')
        if spec.ground == "perfect":
            for j, p in enumerate(w.points_m):
                if p[2] < 0:
                    raise bad_value(f"{path}.points_m[{j}]", p,
                                    "is below the perfect ground (accepted: z >= 0 m)")
                if 0 < j < len(w.points_m) - 1 and p[2] <= 1e-6:
                    raise bad_value(f"{path}.points_m[{j}]", p,
                                    "touches the ground at an interior point (only wire ends may touch z = 0)")
    soil_of(spec, prefix=prefix)
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
    load_places(spec, prefix=prefix)
    if spec.shield is not None:
        from rfsafe.antenna.wire.shield import check_shield

        check_shield(spec, tuple(out), prefix=prefix)
    return tuple(out)


def soil_of(spec: WireAntennaSpec, *, prefix: str = ""):
    """The soil of a ``ground = "real"`` antenna (``ground.Soil``), or None for the other grounds.

    Raises
    ------
    InputError
        Soil keys with another ground, an unknown class, a class and values both given, one value missing.
    """
    keys = {"soil": spec.soil, "soil_relative_permittivity": spec.soil_relative_permittivity,
            "soil_conductivity_s_m": spec.soil_conductivity_s_m}
    given = {k: v for k, v in keys.items() if v is not None}
    if spec.ground != "real":
        if given:
            k, v = next(iter(given.items()))
            raise bad_value(f"{prefix}{k}", v, f'applies only to ground = "real" (ground is "{spec.ground}")')
        return None
    from rfsafe.antenna.wire.ground import Soil, soil_classes   # real soil only (the module is large)

    classes = soil_classes()
    if spec.soil is not None:
        if len(given) > 1:
            k = next(k for k in given if k != "soil")
            raise bad_value(f"{prefix}{k}", given[k], "give either soil (a class) or the soil's values, not both")
        if spec.soil not in classes:
            raise bad_value(f"{prefix}soil", spec.soil, f"is not a ground class (accepted: {', '.join(classes)})")
        return classes[spec.soil]
    if spec.soil_relative_permittivity is None or spec.soil_conductivity_s_m is None:
        missing = "soil_relative_permittivity" if spec.soil_relative_permittivity is None else "soil_conductivity_s_m"
        raise InputError(f'{prefix}{missing}: is required with ground = "real" (or give soil = one of '
                         f"{', '.join(classes)})")
    if spec.soil_conductivity_s_m > 1e3:
        raise bad_value(f"{prefix}soil_conductivity_s_m", spec.soil_conductivity_s_m,
                        'is a metal, not soil (accepted: 0 to 1000 S/m; sea water is about 5; use ground = "perfect")')
    return Soil(spec.soil_relative_permittivity, spec.soil_conductivity_s_m, "declared soil",
                "declared in the input file", "user value")


def _wire_length_m(w: WireSpec) -> float:
    return sum(math.dist(a, b) for a, b in zip(w.points_m[:-1], w.points_m[1:]))


def check_circuit(c: CircuitSpec, path: str) -> None:
    """Refuse circuits without elements and element combinations that have no meaning."""
    if c.coil_q is not None and c.inductance_uh is None:
        raise bad_value(f"{path}.coil_q", c.coil_q, "needs inductance_uh (the Q belongs to the coil)")
    if c.circuit == "parallel":
        if c.reactance_ohm is not None:
            raise bad_value(f"{path}.reactance_ohm", c.reactance_ohm,
                            'applies only to circuit = "series" (a parallel circuit takes inductance_uh, '
                            "capacitance_pf and resistance_ohm)")
        if c.resistance_ohm is not None and c.resistance_ohm == 0:
            raise bad_value(f"{path}.resistance_ohm", c.resistance_ohm,
                            "shorts a parallel circuit (accepted: > 0 ohm, or leave it out for no shunt loss)")
    if all(x is None for x in (c.resistance_ohm, c.reactance_ohm, c.inductance_uh, c.capacitance_pf)):
        raise InputError(f"{path}: gives no circuit element (accepted: one or more of resistance_ohm, "
                         "reactance_ohm, inductance_uh, capacitance_pf)")


def along_fraction(item, length_m: float, path: str, what: str, default: float | None = None) -> float:
    """Fraction 0..1 along a conductor from ``position`` or ``distance_m`` (exactly one given)."""
    if item.position is not None and item.distance_m is not None:
        raise InputError(f"{path}.distance_m: give either position or distance_m, not both")
    if item.distance_m is not None:
        if item.distance_m > length_m * (1 + 1e-9):
            raise bad_value(f"{path}.distance_m", item.distance_m,
                            f"is beyond the end of {what} (accepted: 0 to {length_m:.6g} m)")
        return min(item.distance_m / length_m, 1.0)
    if item.position is not None:
        return item.position
    if default is None:
        raise InputError(f"{path}.position: is required (or give distance_m along {what})")
    return default


def load_places(spec: WireAntennaSpec, *, prefix: str = "") -> tuple[tuple[int, float], ...]:
    """Check the loads of ``spec``; returns (wire index, fraction from the wire's first point) of each.

    Raises
    ------
    InputError
        Unknown wires, missing or doubled positions, duplicate labels or places, empty circuits.
    """
    out = []
    seen: dict[str, int] = {}
    where: dict[tuple[int, float], int] = {}
    for n, load in enumerate(spec.loads):
        path = f"{prefix}loads[{n}]"
        if load.label is not None:
            if load.label in seen:
                raise bad_value(f"{path}.label", load.label,
                                f"is a duplicate label (loads[{seen[load.label]}] has it; labels must be unique)")
            seen[load.label] = n
        iw = _wire_index(spec, load, f"{path}.wire")
        frac = along_fraction(load, _wire_length_m(spec.wires[iw]), path, f"wire {wire_label(spec, iw)!r}")
        key = (iw, round(frac, 9))
        if key in where:
            raise bad_value(f"{path}.position", frac,
                            f"is the place of loads[{where[key]}] on the same wire (one load per place; "
                            "combine them into one circuit)")
        where[key] = n
        check_circuit(load, path)
        out.append((iw, frac))
    return tuple(out)


def load_label(spec: WireAntennaSpec, n: int) -> str:
    """Display name of load ``n``: its label, else ``loads[n]``."""
    return spec.loads[n].label or f"loads[{n}]"


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
