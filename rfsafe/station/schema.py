"""Station description file: the pydantic models (strict, unknown keys rejected).

Key names are rfsafe's own, plain English, with units in the names. The JSON
Schema printed by ``rfsafe schema`` is generated from these models.
"""

# No ``from __future__ import annotations``: pydantic would evaluate every annotation string again (one
# compile each, about 95 at each start-up); the annotations here are plain types, evaluated once.
import datetime as dt
from typing import Literal

from pydantic import Field

from rfsafe.antenna.wire.model import WireAntennaSpec
from rfsafe.bounds import MAX_FRONT_TO_BACK_DB, MIN_BEAMWIDTH_DEG
from rfsafe.station.validation import StrictModel

__all__ = [
    "ANTENNA_KINDS", "GROUND_REFLECTION", "Transmitter", "Balun", "Feedline", "Antenna", "Schedule",
    "Tuner", "Configuration", "Place", "SimultaneousGroup", "Station",
]

#: Ground-reflection choices and their power-density factor F (OET Bulletin 65, section 2).
GROUND_REFLECTION = {"none": 1.0, "typical": 2.56, "full": 4.0}

ANTENNA_KINDS = ("isotropic", "short-dipole", "half-wave-dipole", "quarter-wave-vertical",
                 "beam", "table", "wire", "other")


class _Strict(StrictModel):
    """Strict, unknown keys refused, finite and bounded numbers (see rfsafe.bounds)."""


class Transmitter(_Strict):
    """A transmitter (or amplifier) and its peak envelope power."""

    id: str = Field(min_length=1, description="Identifier used by configurations.")
    description: str = ""
    pep_w: float = Field(gt=0, description="Peak envelope power delivered into the feedline [W].")


class Balun(_Strict):
    """A balun between the unbalanced and the balanced part of a feed system."""

    ratio: str = Field(description='Impedance ratio, balanced side first: "1:1", "4:1", "9:1".')
    location: Literal["transmitter", "antenna"] = Field(
        description="transmitter: at the transmitter or tuner output, feeding a balanced line; antenna: at the "
                    "feedpoint, fed by coax.")
    power_rating_w: float | None = Field(default=None, gt=0,
                                         description="Power rating at its design impedance [W]; absent: not rated.")
    loss_db: float = Field(default=0.0, ge=0, le=10,
                           description="Its own matched loss [dB] (default 0: nothing subtracted, conservative).")


class Feedline(_Strict):
    """A feedline: a catalogue cable class or a custom line, its length and connectors."""

    id: str = Field(min_length=1)
    description: str = ""
    cable: str = Field(description='Cable class from the catalogue (see "rfsafe line --help"), or "custom".')
    length_m: float = Field(ge=0, description="Length of the line [m].")
    connector_loss_db: float = Field(default=0.0, ge=0, description="Total loss of connectors/adapters [dB].")
    connector: str | None = Field(default=None,
                                  description='Connector series at both ends of a coax line: "uhf", "n" or "bnc".')
    connector_at_transmitter: str | None = Field(
        default=None, description='Connector series at the transmitter end only, or "none" (ladder line usually '
                                  'has no connector).')
    connector_at_antenna: str | None = Field(default=None,
                                             description='Connector series at the antenna end only, or "none".')
    balun: Balun | None = Field(default=None, description="A balun in this feed system.")
    connector_v_peak_rating: float | None = Field(default=None, gt=0,
                                                  description="Override of the connector peak-voltage rating [V peak].")
    z0_ohm: float | None = Field(default=None, gt=0, description="Custom cable: characteristic impedance [ohm].")
    velocity_factor: float | None = Field(default=None, gt=0, le=1, description="Custom cable: velocity factor.")
    loss_db_per_100m: float | None = Field(default=None, ge=0,
                                           description="Custom cable: matched loss at the operating frequency [dB/100 m].")
    loss_db_per_100ft: float | None = Field(default=None, ge=0,
                                            description="Custom cable: matched loss at the operating frequency [dB/100 ft].")
    max_voltage_v_peak: float | None = Field(default=None, gt=0,
                                             description="Override of the cable's voltage rating [V peak].")


class Antenna(_Strict):
    """An antenna: kind, gain, position and pointing."""

    id: str = Field(min_length=1)
    description: str = ""
    kind: Literal["isotropic", "short-dipole", "half-wave-dipole", "quarter-wave-vertical",
                  "beam", "table", "wire", "other"] = "other"
    gain_dbi: float | None = Field(default=None, description="Peak gain over isotropic [dBi].")
    gain_dbd: float | None = Field(default=None, description="Peak gain over a half-wave dipole [dBd].")
    x_m: float = Field(default=0.0, description="Position east of the station origin [m].")
    y_m: float = Field(default=0.0, description="Position north of the station origin [m].")
    height_m: float = Field(ge=0, description="Height of the antenna's centre of radiation above ground [m].")
    azimuth_deg: float = Field(default=0.0, ge=-360, le=360, description="Main-beam bearing, clockwise from north [deg].")
    tilt_deg: float = Field(default=0.0, ge=-90, le=90, description="Main-beam elevation above horizontal [deg].")
    polarisation: Literal["horizontal", "vertical"] = "horizontal"
    use_pattern: bool = Field(default=False,
                              description="Use the pattern gain toward each place instead of the peak gain (opt-in).")
    # the model's range (rfsafe.bounds, checked with the other bounds) stated in the JSON Schema too
    front_to_back_db: float | None = Field(default=None, gt=0, description="Beam: front-to-back ratio [dB].",
                                           json_schema_extra={"maximum": MAX_FRONT_TO_BACK_DB})
    beamwidth_h_deg: float | None = Field(default=None, gt=0, lt=360, description="Beam: horizontal half-power beamwidth [deg].",
                                          json_schema_extra={"minimum": MIN_BEAMWIDTH_DEG})
    beamwidth_v_deg: float | None = Field(default=None, gt=0, lt=180, description="Beam: vertical half-power beamwidth [deg].",
                                          json_schema_extra={"minimum": MIN_BEAMWIDTH_DEG})
    pattern_file: str | None = Field(default=None,
                                     description="Table: CSV of azimuth_deg, elevation_deg, gain_dbi (relative to this file).")
    aperture_m: float | None = Field(default=None, gt=0,
                                     description="Largest dimension D of an aperture antenna (far field beyond 2 D^2/lambda) [m].")
    element_span_m: float | None = Field(
        default=None, gt=0, description="Beam: length of its longest element [m] (default: a conservative size for the band).")
    boom_length_m: float | None = Field(
        default=None, gt=0, description="Beam: length of its boom, along the main beam [m] (default: a conservative size for the band).")
    wire: WireAntennaSpec | None = Field(
        default=None, description="Wire geometry (station frame, metres) for the moment-method near-field solver.")


class Schedule(_Strict):
    """A periodic transmit schedule: on for ``on_minutes``, then off for ``off_minutes``."""

    on_minutes: float = Field(gt=0)
    off_minutes: float = Field(ge=0)


class Tuner(_Strict):
    """A matching network (tuner) in a configuration."""

    kind: Literal["l", "pi", "t"] = Field(description="l, pi, or t (series C, shunt L, series C).")
    location: Literal["transmitter", "antenna"] = "transmitter"
    loaded_q: float | None = Field(default=None, gt=0, description="Pi or T network: loaded Q.")
    c1_pf: float | None = Field(default=None, gt=0, description="T network as set: source-side capacitor [pF].")
    l_uh: float | None = Field(default=None, gt=0, description="T network as set: shunt inductor [uH].")
    c2_pf: float | None = Field(default=None, gt=0, description="T network as set: load-side capacitor [pF].")
    capacitor_range_pf: list[float] | None = Field(
        default=None, min_length=2, max_length=2, description="The tuner's capacitor range [min, max] [pF].")
    inductor_range_uh: list[float] | None = Field(
        default=None, min_length=2, max_length=2, description="The tuner's inductor range [min, max] [uH].")
    inductor_q: float = Field(default=100.0, gt=0, description="Unloaded Q of the inductor (loss).")
    capacitor_v_peak_rating: float | None = Field(default=None, gt=0, description="Capacitor rating [V peak].")
    inductor_a_rms_rating: float | None = Field(default=None, gt=0, description="Inductor rating [A rms].")


class Configuration(_Strict):
    """One way the station is operated: frequency, chain, mode and schedule."""

    id: str = Field(min_length=1)
    description: str = ""
    freq_mhz: float = Field(gt=0, description="Operating frequency [MHz].")
    transmitter: str
    feedline: str
    antenna: str
    mode: str = Field(description="Mode whose duty factor applies (see the README table).")
    duty_factor: float | None = Field(default=None, gt=0, le=1, description="Override of the mode duty factor.")
    schedule: Schedule | None = Field(default=None, description="Transmit schedule; absent means continuous (conservative).")
    swr: float | None = Field(default=None, ge=1, description="SWR at the antenna end of the feedline.")
    load_r_ohm: float | None = Field(default=None, gt=0, description="Antenna feedpoint resistance [ohm].")
    load_x_ohm: float | None = Field(default=None, description="Antenna feedpoint reactance [ohm].")
    tuner: Tuner | None = None


class Place(_Strict):
    """A place where a person can be."""

    label: str = Field(min_length=1)
    x_m: float
    y_m: float
    height_m: float = Field(ge=0, description="Height of the evaluation point above ground [m].")
    body_heights_m: list[float] | None = Field(
        default=None, min_length=1,
        description="Heights above ground at which to evaluate, worst taken (e.g. feet to head of a standing "
                    "person, [0.5, 1.0, 1.5, 2.0]); default: height_m only.")
    environment: Literal["controlled", "uncontrolled"]
    why: str = Field(default="", description="Why the place is in this environment (e.g. \"public pavement\", "
                                             "\"operator's own desk, trained and aware\"); shown on the worksheet.")


class SimultaneousGroup(_Strict):
    """Configurations that can transmit at the same time."""

    configurations: list[str] = Field(min_length=1)


class Station(_Strict):
    """A station description: what transmits, through what, from where, and who is near."""

    title: str = "RF exposure evaluation"
    station: str = Field(default="", description="Station label shown on outputs.")
    evaluator: str = ""
    call_sign: str = Field(default="", description="Call sign of the station, shown on the worksheet.")
    licence: str = Field(default="", description="Licence (number or class) under which the station operates.")
    address: str = Field(default="", description="Address of the station, shown on the worksheet.")
    evaluation_date: dt.date | None = Field(default=None, description="Date of the evaluation (TOML date).")
    standard: Literal["fcc", "icnirp2020", "icnirp1998", "ieee2019", "sc6", "eu1999"] = "fcc"
    ground_reflection: Literal["none", "typical", "full"] = Field(
        default="full", description="Ground-reflection factor: none (F=1), typical (F=2.56), full (F=4; default, conservative).")
    near_field_spatial_average: bool = Field(
        default=False,
        description="Near-field places: compare the average of E^2 and H^2 over the place's body_heights_m "
                    "(the whole-body spatial average the standards allow) instead of the worst height "
                    "(default false: worst point, conservative).")
    exact_line_loss: bool = Field(default=False,
                                  description="Use the exact complex-Z0 mismatched-line loss instead of the closed form.")
    transmitters: list[Transmitter] = Field(min_length=1)
    feedlines: list[Feedline] = Field(min_length=1)
    antennas: list[Antenna] = Field(min_length=1)
    configurations: list[Configuration] = Field(min_length=1)
    places: list[Place] = Field(default_factory=list)
    simultaneous: list[SimultaneousGroup] = Field(default_factory=list)
