"""Evaluation results: plain frozen dataclasses, no I/O and no formatting.

The JSON printed by ``rfsafe evaluate --json`` has exactly these field names.
Per-environment values are dicts keyed ``"controlled"`` / ``"uncontrolled"``.
"""

from __future__ import annotations

import _thread
import sys
from dataclasses import dataclass, field, fields
from typing import Any

__all__ = ["VerdictPair", "FigureCheck", "ComplianceDistance", "AntennaSummary", "PlanMap", "WireSummary", "NearFieldMap", "FeedlineShieldResult", "ConfigurationResult", "PlaceExposure", "TransmitterShare",
           "PlaceResult", "EvaluationResult", "CAUTIONS", "Remedy", "PlaceRemedies", "ConfigurationRemedies",
           "GroundKeepOut", "QuickAnswer", "SiteRemedy", "EXPOSURE_VERDICTS", "EQUIPMENT_VERDICTS", "EXIT_COMPLIES",
           "EXIT_EXPOSURE_EXCEEDED", "EXIT_EQUIPMENT_EXCEEDED", "EXIT_NOT_EVALUATED", "EXIT_STATUS_HELP", "exit_status",
           "verdict_headline"]


class _Result:
    """Base of the result dataclasses: the ``repr``, ``==`` and ``hash`` that ``dataclass(frozen=True)``
    generates, written once here instead of compiled anew for every class (start-up, issue 18: most of
    this module's import time is that compilation). The same text, the same comparisons and the same
    hash values as the generated methods: fields with ``repr`` in the repr, fields with ``compare`` in
    ``==`` (instances of the same class only), and those with ``hash`` (or ``compare``) in the hash.
    """

    __slots__ = ()

    def __repr__(self) -> str:
        key = id(self), _thread.get_ident()
        if key in _REPR_RUNNING:        # a result that holds itself: "..." as dataclasses' repr gives
            return "..."
        _REPR_RUNNING.add(key)
        try:
            return self.__class__.__qualname__ + "(" + ", ".join(
                f"{name}={getattr(self, name)!r}" for name in _field_names(self.__class__)[0]) + ")"
        finally:
            _REPR_RUNNING.discard(key)

    def __eq__(self, other):
        if other.__class__ is self.__class__:
            names = _field_names(self.__class__)[1]
            return tuple(getattr(self, n) for n in names) == tuple(getattr(other, n) for n in names)
        return NotImplemented

    def __hash__(self) -> int:
        return hash(tuple(getattr(self, n) for n in _field_names(self.__class__)[2]))


_REPR_RUNNING: set = set()
_FIELD_NAMES: dict = {}


def _field_names(cls: type) -> tuple[tuple[str, ...], tuple[str, ...], tuple[str, ...]]:
    """(repr, compare, hash) field names of a result class, as dataclasses picks them."""
    names = _FIELD_NAMES.get(cls)
    if names is None:
        fs = fields(cls)
        names = _FIELD_NAMES[cls] = (tuple(f.name for f in fs if f.repr), tuple(f.name for f in fs if f.compare),
                                     tuple(f.name for f in fs if (f.compare if f.hash is None else f.hash)))
    return names


#: A frozen result dataclass (``repr``, ``==`` and ``hash`` from :class:`_Result`).
_result = dataclass(frozen=True, eq=False, repr=False)
_result_with_slots = dataclass(frozen=True, eq=False, repr=False, slots=True)


#: Exposure verdicts: every evaluated place within its limits, some place above, or no place declared.
EXPOSURE_VERDICTS = ("COMPLIES", "EXCEEDS", "NOT EVALUATED")
#: Equipment verdicts: line, connector and tuner parts against their ratings.
EQUIPMENT_VERDICTS = ("WITHIN RATINGS", "RATING EXCEEDED", "NOT RATED")

#: Exit statuses of commands that give verdicts. The exposure verdict comes first: people before hardware.
EXIT_COMPLIES = 0
EXIT_EXPOSURE_EXCEEDED = 1
EXIT_EQUIPMENT_EXCEEDED = 4
EXIT_NOT_EVALUATED = 5
#: How the exit status combines the two verdicts (printed by --help and in the README).
EXIT_STATUS_HELP = ("Exit status: 0 exposure complies at every place and no rating is exceeded; 1 an exposure "
                    "limit is exceeded at some place (whatever the equipment); 4 exposure complies but a line, "
                    "connector or tuner rating is exceeded; 5 no place was evaluated (exposure not judged); "
                    "2 bad input; 3 internal error. Both verdicts are always printed.")


def exit_status(exposure_verdict: str, equipment_verdict: str) -> int:
    """Exit status from the two verdicts: exposure first (1 or 5), then equipment (4), else 0."""
    if exposure_verdict == "EXCEEDS":
        return EXIT_EXPOSURE_EXCEEDED
    if exposure_verdict == "NOT EVALUATED":
        return EXIT_NOT_EVALUATED
    if equipment_verdict == "RATING EXCEEDED":
        return EXIT_EQUIPMENT_EXCEEDED
    return EXIT_COMPLIES


def verdict_headline(exposure_verdict: str, equipment_verdict: str) -> str:
    """Both verdicts in one line, e.g. ``EXPOSURE COMPLIES · EQUIPMENT RATING EXCEEDED``."""
    return f"EXPOSURE {exposure_verdict} · EQUIPMENT {equipment_verdict}"


class VerdictPair:
    """The headline and exit status of a result with ``exposure_verdict`` and ``equipment_verdict``
    (station evaluations and site reviews alike)."""

    @property
    def verdict(self) -> str:
        """Both verdicts in one headline (page headers; not a third verdict, not in the JSON)."""
        return verdict_headline(self.exposure_verdict, self.equipment_verdict)

    @property
    def exit_code(self) -> int:
        """Exit status of ``evaluate``/``report``/``site`` (see :data:`EXIT_STATUS_HELP`)."""
        return exit_status(self.exposure_verdict, self.equipment_verdict)


#: Cautions carried by every output (in rfsafe's own words).
CAUTIONS = (
    "This is an estimate under the stated assumptions, not a measurement.",
    "Local regulation and the regulator's own guidance govern; where they differ from this tool, follow them.",
    "Inside the reactive near field a far-field estimate is not valid: such places need near-field "
    "modelling or measurement by a competent person.",
    "Antennas, feedlines and tuners carry high RF voltages: they can cause RF burns and electric shock.",
    "Never touch an antenna or open a tuner while transmitting.",
    "Installations close to a limit should be reviewed by a professional or licensed engineer.",
)


@_result
class FigureCheck(_Result):
    """One published figure an evaluation used, and whether it was read in its published text.

    ``state`` is one of :data:`rfsafe.verification.STATES`; ``verification`` is the data row's own text.
    """

    kind: str               # "limit", "duty factor", "cable", "connector", "exemption threshold"
    figure: str             # what it is (row, mode, cable class ...)
    used_by: tuple[str, ...]   # configurations (or places) that use it
    source: str
    verification: str
    state: str


@_result
class ComplianceDistance(_Result):
    """Distance beyond which one environment's limit is met (peak gain, far-field formula)."""

    environment: str
    environment_label: str
    dist_m: float
    dist_ft: float
    limit_basis: str          # "time-averaged" or "instantaneous"
    governing: str            # which quantity sets it: "power_density", "e_field", "h_field"
    averaging_minutes: float | None
    eirp_w: float             # the EIRP compared with the limit (average, or PEP for instantaneous limits)
    inside_near_field: bool   # the distance itself lies inside lambda/2pi (or 2D^2/lambda)
    limit_source: str
    power_density_limit_w_m2: float | None = None   # the governing limit's values (None: not defined)
    e_field_limit_v_m: float | None = None
    h_field_limit_a_m: float | None = None
    distance_basis: str = ""   # from which part of the antenna dist_m is measured, and where its size comes from
    limit_verification: str = "not confirmed"   # was the limit's row read in its published text (rfsafe.verification)


@_result
class AntennaSummary(_Result):
    """An antenna as declared, with the extent rfsafe takes for it (for the worksheet's plan and table).

    ``segments_m`` are straight pieces ((x, y, z), (x, y, z)) of the radiating structure in the station
    frame: the wire geometry, a textbook length for the named kinds, or the declared aperture; empty when
    no dimension is known (the antenna is then a point at its declared position).
    """

    id: str
    description: str
    kind: str
    x_m: float
    y_m: float
    height_m: float
    azimuth_deg: float
    tilt_deg: float
    polarisation: str
    size_m: float | None                     # largest dimension taken [m]; None: not known
    size_basis: str                          # where the size and its orientation come from
    segments_m: tuple = ()


@_result
class PlanMap(_Result):
    """Plan view of a station: total exposure ratios on a horizontal grid at two levels (for plots).

    ``ratio[(level, env)]`` is a (len(y_m), len(x_m)) array of the total exposure ratio (every
    transmitter its worst configuration, all summed), far-field estimate with the gain each antenna
    uses toward places; ``level`` is ``"ground"`` or ``"head"`` (``heights_m`` of each). Arrays are
    left out of the JSON output (plot data only).
    """

    x_m: tuple[float, ...]
    y_m: tuple[float, ...]
    heights_m: dict[str, tuple[float, ...]]
    max_ratio: dict[str, float]              # "<level> <environment>" -> largest ratio on the grid
    method: str
    ratio: dict = field(repr=False, default_factory=dict)


@_result
class ConfigurationResult(_Result):
    """One operating configuration: power chain, line, gain, compliance distances."""

    id: str
    description: str
    freq_mhz: float
    transmitter: str
    feedline: str
    antenna: str
    mode: str
    pep_w: float
    duty_factor: float
    duty_factor_source: str
    schedule: str
    transmit_fraction: dict[str, float]
    averaging_minutes: dict[str, float | None]
    avg_power_w: dict[str, float]            # at the transmitter
    line_loss_db: float
    loss_fraction: float                     # power at antenna / power into line
    avg_power_at_antenna_w: dict[str, float]
    pep_at_antenna_w: float
    gain_dbi: float                          # peak gain
    gain_source: str
    eirp_w: dict[str, float]                 # time-averaged, peak gain
    erp_w: dict[str, float]
    eirp_pep_w: float
    near_field_distance_m: float             # lambda / 2 pi
    aperture_far_field_m: float | None       # 2 D^2 / lambda where an aperture size is declared
    compliance_distances: tuple[ComplianceDistance, ...]
    line: Any                                # rfsafe.feedline LineResult
    exceeded_parts: tuple[str, ...]
    flags: tuple[str, ...]
    method: str
    wire: WireSummary | None = None          # wire antennas: solver summary
    near_field_map: NearFieldMap | None = None
    limit_distances: tuple[ComplianceDistance, ...] = ()   # every limit's own distance (e.g. SC6 nerve stimulation)
    loads: tuple = ()                        # wire antennas: rfsafe.antenna.wire.loads.LoadStress at the PEP
    feedline_shield: FeedlineShieldResult | None = None   # wire antennas with a modelled feedline shield
    duty_factor_verification: str = "not confirmed"   # was the duty factor read in its published table


@_result_with_slots
class PlaceExposure(_Result):
    """Exposure at one place from one configuration.

    One is kept per place and configuration (up to 500,000 of them): slots instead of an instance
    dictionary, and the texts that repeat from place to place (governing quantity, methods, limit
    source, distance basis) interned, so that each is stored once.
    """

    configuration: str
    transmitter: str
    dist_m: float
    gain_dbi: float
    gain_method: str                         # "peak" or "pattern"
    power_density_w_m2: float
    e_field_v_m: float
    h_field_a_m: float
    exposure_ratio: float
    governing: str                           # e.g. "power_density (time-averaged)"
    margin_db: float
    method: str                              # "far-field estimate" or "near-field (moment method)"
    inside_near_field: bool
    flags: tuple[str, ...]
    far_field_ratio: float | None = None     # when a near-field result replaces the estimate
    near_field_ratio: float | None = None
    power_density_limit_w_m2: float | None = None   # the governing limit at this place
    e_field_limit_v_m: float | None = None
    h_field_limit_a_m: float | None = None
    limit_source: str = ""
    distance_basis: str = ""                 # which distance dist_m and the near-field decision use
    limit_verification: str = "not confirmed"   # was the governing limit's row read in its published text
    #: why near_field_ratio has (no) value: "computed" (moment method), "outside_near_field" (not needed),
    #: "no_near_field_model" (inside the near field, far-field estimate only: flagged)
    near_field_case: str = field(init=False, default="")

    def __post_init__(self):
        case = ("computed" if self.near_field_ratio is not None else
                "no_near_field_model" if self.inside_near_field else "outside_near_field")
        object.__setattr__(self, "near_field_case", case)
        for name in _INTERNED:
            value = getattr(self, name)
            if type(value) is str:
                object.__setattr__(self, name, sys.intern(value))


#: Text fields of :class:`PlaceExposure` whose few distinct values repeat over places.
_INTERNED = ("configuration", "transmitter", "gain_method", "governing", "method", "limit_source", "distance_basis",
             "limit_verification")


@_result_with_slots
class TransmitterShare(_Result):
    """A transmitter's contribution to a place's total (its worst configuration there)."""

    transmitter: str
    configuration: str
    exposure_ratio: float


@_result
class PlaceResult(_Result):
    """One place: every configuration's exposure and the simultaneous total."""

    label: str
    x_m: float
    y_m: float
    height_m: float
    environment: str
    environment_label: str
    exposures: tuple[PlaceExposure, ...]
    total_ratio: float
    total_margin_db: float
    total_rule: str
    contributions: tuple[TransmitterShare, ...]
    verdict: str                             # "complies" or "exceeds"
    flags: tuple[str, ...]
    why: str = ""                            # why the place is in its environment (from the station file)


@_result
class Remedy(_Result):
    """One change that brings a place (or every place) to its limit, everything else unchanged.

    Solved by re-running the whole evaluation with the parameter changed (see :mod:`rfsafe.remedies`).
    """

    parameter: str                 # pep_w, avg_power_w, schedule_on_minutes, line_loss_db, antenna_height_m, distance_m
    applies_to: str                # e.g. "transmitter hf-amp", "configuration 20m-cw", "antenna beam", "place Garden"
    current: float | None          # today's value (None where it has none)
    value: float | None            # the answer; None when no value of the parameter helps (see status)
    status: str                    # "solved", "already complies", "no value helps", "not applicable", "not solved"
    ratio_at_value: float | None   # the total exposure ratio re-evaluated with ``value``
    text: str                      # one sentence for tables and the worksheet


@_result
class PlaceRemedies(_Result):
    """What would make one place that exceeds comply."""

    place: str
    environment: str
    total_ratio: float
    remedies: tuple[Remedy, ...]


@_result
class ConfigurationRemedies(_Result):
    """Per configuration: the values with which every place complies (headroom where it already does)."""

    configuration: str
    transmitter: str
    antenna: str
    remedies: tuple[Remedy, ...]


@_result
class GroundKeepOut(_Result):
    """Horizontal keep-out distance from the antenna's foot at one body level, one configuration alone."""

    configuration: str
    antenna: str
    environment: str
    level: str                     # e.g. "standing person (0.5-2 m)" or "upper floor 4.5 m"
    heights_m: tuple[float, ...]   # heights evaluated, worst taken [m]
    keep_out_m: float              # 0 when no point at these heights exceeds
    compliance_dist_m: float       # the 3-D compliance distance (peak gain, far field) for comparison
    directions: int                # horizontal directions examined (1 where the gain is the same in all)
    method: str
    text: str


#: Why a keep-out distance can be infinite (printed beside the null in JSON).
GroundKeepOut.NONFINITE_NOTES = {"keep_out_m": "the configuration's compliance distance is not finite (see its flags)",
                                 "compliance_dist_m": "the configuration's compliance distance is not finite "
                                                      "(see its flags)"}


@_result
class EvaluationResult(VerdictPair, _Result):
    """The whole evaluation of one station file."""

    title: str
    station: str
    evaluator: str
    evaluation_date: str
    evaluation_date_source: str             # "file" or "today"
    standard: str
    standard_name: str
    environment_labels: dict[str, str]
    rfsafe_version: str
    input_file: str
    input_sha256: str
    ground_reflection: str
    ground_factor: float
    loss_model: str
    configurations: tuple[ConfigurationResult, ...]
    places: tuple[PlaceResult, ...]
    exemption: Any                          # rfsafe.limits.exemption.ExemptionResult or None
    exposure_verdict: str                   # "COMPLIES", "EXCEEDS" or "NOT EVALUATED" (no place declared)
    exposure_reasons: tuple[str, ...]       # why, one sentence each
    equipment_verdict: str                  # "WITHIN RATINGS", "RATING EXCEEDED" or "NOT RATED"
    equipment_reasons: tuple[str, ...]
    exceeded: tuple[str, ...]               # one line per limit or rating exceeded (both verdicts)
    method_notes: tuple[str, ...]
    cautions: tuple[str, ...] = field(default=CAUTIONS)
    # filled by rfsafe.remedies.with_answers (empty unless asked for)
    ground_keep_out: tuple[GroundKeepOut, ...] = ()
    place_remedies: tuple[PlaceRemedies, ...] = ()
    configuration_remedies: tuple[ConfigurationRemedies, ...] = ()
    file_standard: str = ""                 # the standard the station file names
    standard_overridden: bool = False       # True when --standard replaced the file's standard
    call_sign: str = ""
    licence: str = ""
    address: str = ""
    antennas: tuple[AntennaSummary, ...] = ()
    plan: PlanMap | None = None
    #: every published figure the evaluation used, with whether it was read in its text (rfsafe.verification)
    data_verification: tuple[FigureCheck, ...] = ()
    #: why ``exemption`` has (no) value: "evaluated", "not_fcc" (the test belongs to 47 CFR only) or
    #: "no_places" (no separation to a person is known)
    exemption_case: str = field(init=False, default="")

    def __post_init__(self):
        case = ("evaluated" if self.exemption is not None else
                "not_fcc" if self.standard != "fcc" else "no_places")
        object.__setattr__(self, "exemption_case", case)


#: Result classes that only some commands build (wire antennas, ``rfsafe ask``, site remedies): defined
#: on first use (PEP 562 ``__getattr__``), so that every other start-up skips their dataclass creation
#: (about a quarter of this module's import time). ``from rfsafe.results import QuickAnswer`` works as
#: before; each class keeps its module and name (pickling, repr).
_ON_FIRST_USE = ("WireSummary", "NearFieldMap", "FeedlineShieldResult", "QuickAnswer", "SiteRemedy")


def _define_on_first_use() -> None:
    """Define the classes of :data:`_ON_FIRST_USE` in this module (each ``__qualname__`` as at module level)."""

    @_result
    class WireSummary(_Result):
        """Moment-method solution of a wire antenna at the configuration's frequency."""

        __qualname__ = "WireSummary"

        feed_impedance_ohm: complex
        gain_dbi: float
        radiated_over_input_power: float
        #: 0.5 c^H Re(Z) c over the terminal power 0.5 Re V I*: 1 on wires of one radius; results are
        #: scaled to the smaller of the two powers (conservative; see solver.power_basis_w).
        carried_over_input_power: float = 1.0

    @_result
    class NearFieldMap(_Result):
        """Near-field exposure ratios of a wire antenna on a horizontal grid (for plots).

        ``e_ratio[env]`` and ``h_ratio[env]`` are (len(y_m), len(x_m)) arrays of (E/E_lim)^2 and
        (H/H_lim)^2, worst over ``heights_m``; they are left out of the JSON output (plot data only).
        """

        __qualname__ = "NearFieldMap"

        configuration: str
        antenna: str
        plane: str
        x_m: tuple[float, ...]
        y_m: tuple[float, ...]
        heights_m: tuple[float, ...]
        wire_paths_m: tuple[tuple[tuple[float, float], ...], ...]   # each wire's (x, y) vertices, for drawing
        max_e_ratio: dict[str, float]
        max_h_ratio: dict[str, float]
        excluded_points: int                      # grid cells left out because they touch a conductor
        e_ratio: dict = field(repr=False, default_factory=dict)
        h_ratio: dict = field(repr=False, default_factory=dict)

    @_result
    class FeedlineShieldResult(_Result):
        """Common-mode current on a wire antenna's feedline shield and the choke it needs (moment method)."""

        __qualname__ = "FeedlineShieldResult"

        route_length_m: float
        far_end: str                             # "open" or "ground"
        choke_impedance_ohm: complex | None      # the declared choke (None: no choke)
        choke_distance_m: float | None           # along the route from the feed point
        feed_current_a_rms: float                # at the PEP at the antenna
        max_current_a_rms: float                 # largest common-mode current on the route, at the PEP
        max_at_distance_m: float
        places: tuple[str, ...]                  # places within lambda/2pi of the route (judged for the choke)
        worst_ratio: float | None                # this configuration's largest ratio there (worst body height)
        required_choke_ohm: float | None         # smallest |Z| bringing those places to ratio 1 (0: none needed)
        required_choke_note: str

    @_result
    class QuickAnswer(_Result):
        """The answer to a question asked without a station file (``rfsafe ask``), one frequency and power.

        Per-environment values are dicts keyed ``"controlled"`` / ``"uncontrolled"``; ``largest_pep_w`` holds
        ``inf`` where the search found no power that exceeds (printed as null in JSON).
        """

        __qualname__ = "QuickAnswer"

        standard: str
        standard_name: str
        band: str | None
        freq_mhz: float
        pep_w: float
        mode: str
        duty_factor: float
        gain_dbi: float
        gain_source: str
        line_loss_db: float
        avg_power_at_antenna_w: dict[str, float]
        eirp_w: dict[str, float]
        compliance_dist_m: dict[str, float]
        height_m: float | None
        distance_m: float | None
        ground_keep_out_m: dict[str, float] | None      # standing person 0.5-2 m, from the antenna's foot
        ratio_at_distance: dict[str, float] | None
        largest_pep_w: dict[str, float | None] | None
        exemption: str
        near_field_distance_m: float
        flags: tuple[str, ...]
        #: whether the limit rows and the duty factor were read in their published texts (rfsafe.verification)
        limit_verification: dict[str, str] = field(default_factory=dict)
        duty_factor_verification: str = "not confirmed"

    @_result
    class SiteRemedy(_Result):
        """For one site violation and one station (transmitter): the power cut or the move that clears it."""

        __qualname__ = "SiteRemedy"

        violation: str                 # the region's label
        environment: str
        transmitter: str
        power_factor: float | None     # largest fraction of today's power that clears it; None: none does
        power_status: str              # "solved", "no value helps"
        move_m: float | None           # smallest move straight away from the worst point that clears it
        move_status: str               # "solved", "no value helps"
        ratio_after_power: float | None
        ratio_after_move: float | None
        text: str

    #: Why a quick answer's largest PEP can be infinite (``rfsafe ask --json`` prints it beside the null).
    QuickAnswer.NONFINITE_NOTES = {"largest_pep_w": "no power up to a million times the asked PEP reaches the "
                                                    "limit at the distance"}
    globals().update(WireSummary=WireSummary, NearFieldMap=NearFieldMap, FeedlineShieldResult=FeedlineShieldResult,
                     QuickAnswer=QuickAnswer, SiteRemedy=SiteRemedy)


def __getattr__(name: str):
    if name in _ON_FIRST_USE:
        _define_on_first_use()
        return globals()[name]
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
