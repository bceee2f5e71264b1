"""A question without a station file: one transmitter, one feedline, one antenna, a person at a distance.

The question is turned into an in-memory station model (the same schema and cross-checks as a station
file) and evaluated by :func:`rfsafe.assess.assess`, so an answer equals that of the equivalent station
file. Sweeps repeat the same question over frequencies (or amateur bands) and powers.
"""

from __future__ import annotations

import dataclasses
import hashlib
import math
from collections.abc import Sequence
from pathlib import Path

from rfsafe.errors import InputError, bad_value
from rfsafe.results import QuickAnswer

__all__ = ["AMATEUR_BANDS", "BAND_SOURCE", "QuickQuestion", "question_station", "answer", "sweep", "band_edges"]

#: Common amateur allocations (band name -> lower and upper edge [MHz]): the widest allocations as commonly
#: published for ITU Region 2 (common practice; edges from memory; many countries allocate less).
#: A band is evaluated at both edges and the worse answer kept (limits depend on frequency).
AMATEUR_BANDS = {
    "160m": (1.8, 2.0), "80m": (3.5, 4.0), "60m": (5.3305, 5.4065), "40m": (7.0, 7.3), "30m": (10.1, 10.15),
    "20m": (14.0, 14.35), "17m": (18.068, 18.168), "15m": (21.0, 21.45), "12m": (24.89, 24.99),
    "10m": (28.0, 29.7), "6m": (50.0, 54.0), "2m": (144.0, 148.0), "1.25m": (222.0, 225.0),
    "70cm": (420.0, 450.0), "33cm": (902.0, 928.0), "23cm": (1240.0, 1300.0),
}
BAND_SOURCE = ("amateur band edges: common practice, from memory (widest ITU Region 2 allocations; check "
               "your own licence's band plan)")
_BAND_GROUPS = {"hf": ("160m", "80m", "60m", "40m", "30m", "20m", "17m", "15m", "12m", "10m"),
                "vhf": ("6m", "2m", "1.25m"), "uhf": ("70cm", "33cm", "23cm")}
_BAND_GROUPS["all"] = tuple(AMATEUR_BANDS)
#: Body heights of a standing person, worst taken [m] (common practice; as the site review's default).
PERSON_HEIGHTS_M = (0.5, 1.0, 1.5, 2.0)


@dataclasses.dataclass(frozen=True)
class QuickQuestion:
    """The inputs of a quick question (SI except where the name says otherwise)."""

    pep_w: float
    freq_mhz: float
    mode: str = "carrier"
    antenna: str | None = None          # a named kind; None: "other" with the declared gain
    gain_dbi: float | None = None
    gain_dbd: float | None = None
    cable: str | None = None            # None: no line loss (conservative)
    length_m: float | None = None
    swr: float | None = None
    height_m: float | None = None       # antenna height; None: the person level with the antenna
    distance_m: float | None = None     # horizontal distance from the antenna's foot to the person
    standard: str = "fcc"
    ground_reflection: str = "full"
    band: str | None = None
    size_m: float | None = None         # largest dimension of the antenna (the station file's aperture_m)


def band_edges(names: Sequence[str]) -> list[tuple[str, float, float]]:
    """Bands by name (or the groups hf, vhf, uhf, all) -> [(name, low MHz, high MHz)]."""
    out = []
    for n in names:
        key = n.strip().lower()
        if key in _BAND_GROUPS:
            out += [(b, *AMATEUR_BANDS[b]) for b in _BAND_GROUPS[key]]
        elif key in AMATEUR_BANDS:
            out.append((key, *AMATEUR_BANDS[key]))
        else:
            raise bad_value("--bands", n, f"is not a known band (accepted: {', '.join(AMATEUR_BANDS)}, "
                                          f"or {', '.join(_BAND_GROUPS)})")
    return list(dict.fromkeys(out))


def question_station(q: QuickQuestion):
    """The station model equivalent to a quick question, validated like a station file.

    One transmitter (``tx``), one feedline (``line``: the catalogue cable, or a lossless custom line when
    no cable is given), one antenna (``antenna``) at the origin, one configuration (``question``), and,
    when a distance is given, two places at that horizontal distance east of the antenna's foot (one per
    environment), each evaluated over a standing person's heights (or level with the antenna when no
    antenna height is given).
    """
    from pydantic import ValidationError

    from rfsafe.station.load import LoadedStation, check_station
    from rfsafe.station.schema import Station
    from rfsafe.station.validation import validation_to_input_error

    if q.cable is None and q.length_m is not None:
        raise bad_value("--length-m", q.length_m, "needs --cable (the cable class the length is of)")
    if q.cable is not None and q.length_m is None:
        raise InputError("--length-m: is required with --cable")
    if q.antenna in (None, "other", "beam") and q.gain_dbi is None and q.gain_dbd is None:
        raise InputError("--gain-dbi: is required unless --antenna names a kind with a textbook gain "
                         "(isotropic, short-dipole, half-wave-dipole, quarter-wave-vertical)")
    if q.gain_dbi is not None and q.gain_dbd is not None:
        raise InputError("--gain-dbd: give either --gain-dbi or --gain-dbd, not both")
    height = q.height_m if q.height_m is not None else 10.0
    if q.cable is None:
        feed = {"id": "line", "cable": "custom", "length_m": 0.0, "z0_ohm": 50.0, "velocity_factor": 1.0,
                "loss_db_per_100m": 0.0, "description": "no feedline loss (conservative)"}
    else:
        feed = {"id": "line", "cable": q.cable, "length_m": q.length_m}
    ant = {"id": "antenna", "kind": q.antenna or "other", "height_m": height}
    if q.gain_dbi is not None:
        ant["gain_dbi"] = q.gain_dbi
    if q.gain_dbd is not None:
        ant["gain_dbd"] = q.gain_dbd
    if q.size_m is not None:
        ant["aperture_m"] = q.size_m
    cfg = {"id": "question", "freq_mhz": q.freq_mhz, "transmitter": "tx", "feedline": "line",
           "antenna": "antenna", "mode": q.mode}
    if q.swr is not None:
        cfg["swr"] = q.swr
    places = []
    if q.distance_m is not None:
        for env in ("controlled", "uncontrolled"):
            place = {"label": f"person ({env})", "x_m": q.distance_m, "y_m": 0.0, "environment": env}
            if q.height_m is None:
                place["height_m"] = height
            else:
                place["height_m"] = PERSON_HEIGHTS_M[-1]
                place["body_heights_m"] = list(PERSON_HEIGHTS_M)
            places.append(place)
    data = {"title": "Quick question", "standard": q.standard, "ground_reflection": q.ground_reflection,
            "transmitters": [{"id": "tx", "pep_w": q.pep_w}], "feedlines": [feed], "antennas": [ant],
            "configurations": [cfg], "places": places}
    try:
        model = Station.model_validate(data)
    except ValidationError as err:
        raise _option_error(validation_to_input_error(err, Station)) from None
    try:
        specs, tables = check_station(model, Path("."))
    except InputError as err:
        raise _option_error(err) from None
    digest = hashlib.sha256(repr(sorted(data.items())).encode()).hexdigest()
    return LoadedStation(model=model, path=Path("quick question"), sha256=digest, wire_specs=specs,
                         pattern_tables=tables)


_OPTION_OF = {"transmitters[0].pep_w": "--power-w", "configurations[0].freq_mhz": "--freq-mhz",
              "configurations[0].mode": "--mode", "configurations[0].swr": "--swr", "antennas[0].kind": "--antenna",
              "antennas[0].height_m": "--height-m", "feedlines[0].cable": "--cable",
              "feedlines[0].length_m": "--length-m", "antennas[0].gain_dbi": "--gain-dbi",
              "antennas[0].gain_dbd": "--gain-dbd", "standard": "--standard", "ground_reflection": "--ground",
              "places[0]": "--distance-m", "places[0].x_m": "--distance-m", "antennas[0].aperture_m": "--size-m",
              "antennas[0]": "--antenna"}


def _option_error(err: InputError) -> InputError:
    """Name the command-line option instead of the station-file field it became."""
    text = str(err)
    for path, option in sorted(_OPTION_OF.items(), key=lambda kv: -len(kv[0])):
        if text.startswith(path + ":") or text.startswith(path + " "):
            return InputError(option + text[len(path):])
    return err


def answer(q: QuickQuestion) -> QuickAnswer:
    """Evaluate one quick question (see :func:`question_station`)."""
    from rfsafe.assess import assess_with_emitters
    from rfsafe.remedies import largest_pep_w

    loaded = question_station(q)
    res, _ = assess_with_emitters(loaded, near_field_maps=False)   # no plot data: the answer draws none
    cfg = res.configurations[0]
    dist = {d.environment: d.dist_m for d in cfg.compliance_distances}
    ratio = largest = None
    if res.places:
        ratio = {p.environment: p.total_ratio for p in res.places}
        largest = {}
        for p in res.places:
            status, pep, _ = largest_pep_w(loaded, p.label)
            largest[p.environment] = pep if status == "solved" else (math.inf if status == "already complies" else None)
    keep = None
    if q.height_m is not None:
        from rfsafe.remedies import ground_keep_out

        alone = dataclasses.replace(loaded, model=loaded.model.model_copy(update={"places": []}))
        r2, ems = assess_with_emitters(alone, near_field_maps=False)
        keep = {k.environment: k.keep_out_m for k in ground_keep_out(loaded, r2, ems)
                if k.level.startswith("standing")}
    exemption = "not applicable (FCC only)" if res.standard != "fcc" else "needs --distance-m"
    if res.exemption is not None:
        exemption = ("exempt" if res.exemption.exempt else "not exempt") + f" ({res.exemption.criterion})"
    flags = tuple(dict.fromkeys(list(cfg.flags) + [f for p in res.places for f in p.flags]))
    return QuickAnswer(
        standard=res.standard, standard_name=res.standard_name, band=q.band, freq_mhz=q.freq_mhz, pep_w=q.pep_w,
        mode=q.mode, duty_factor=cfg.duty_factor, gain_dbi=cfg.gain_dbi, gain_source=cfg.gain_source,
        line_loss_db=cfg.line_loss_db, avg_power_at_antenna_w=dict(cfg.avg_power_at_antenna_w),
        eirp_w=dict(cfg.eirp_w), compliance_dist_m=dist, height_m=q.height_m, distance_m=q.distance_m,
        ground_keep_out_m=keep, ratio_at_distance=ratio, largest_pep_w=largest, exemption=exemption,
        near_field_distance_m=cfg.near_field_distance_m, flags=flags,
        limit_verification={cd.environment: cd.limit_verification for cd in cfg.compliance_distances},
        duty_factor_verification=cfg.duty_factor_verification)


def _worse(a: QuickAnswer, b: QuickAnswer) -> QuickAnswer:
    """Of two answers for the edges of a band, the one with the larger uncontrolled compliance distance."""
    return a if a.compliance_dist_m["uncontrolled"] >= b.compliance_dist_m["uncontrolled"] else b


def sweep(base: QuickQuestion, *, freqs_mhz: Sequence[float] = (), bands: Sequence[str] = (),
          powers_w: Sequence[float] = (), standards: Sequence[str] = ()) -> list[QuickAnswer]:
    """The same question over frequencies and/or bands, powers and standards (one answer per row).

    A band is answered at both edges and the worse edge kept (its frequency is in the answer).
    """
    powers = list(powers_w) or [base.pep_w]
    stds = list(standards) or [base.standard]
    points: list[tuple[str | None, tuple[float, ...]]] = [(None, (f,)) for f in freqs_mhz]
    points += [(name, (lo, hi)) for name, lo, hi in band_edges(bands)]
    if not points:
        points = [(base.band, (base.freq_mhz,))]
    out = []
    for std in stds:
        for band, freqs in points:
            for p in powers:
                answers = [answer(dataclasses.replace(base, freq_mhz=f, pep_w=p, standard=std, band=band))
                           for f in freqs]
                best = answers[0]
                for a in answers[1:]:
                    best = _worse(best, a)
                out.append(best)
    return out
