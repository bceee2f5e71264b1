"""Evaluation of a loaded site file: every station's power chain from rfsafe.assess, placed on the site."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Callable

from rfsafe.antenna.extent import shifted
from rfsafe.errors import InputError
from rfsafe.site.analysis import (
    AXIS_FRACTION,
    LOCAL_FRACTION,
    LOCAL_SPACINGS,
    RegionSite,
    SiteGrid,
    TransmitterSite,
    Violation,
    analyse_site,
)
from rfsafe.site.constants import ENVIRONMENTS, ROPE_STEP_M
from rfsafe.site.geometry import Area, points_in_polygon
from rfsafe.site.grid import SiteEmitter, limit_equivalent_w_m2, site_pattern
from rfsafe.verification import figure_checks
from rfsafe.results import VerdictPair

#: Cautions specific to event sites, printed after the general ones.
SITE_CAUTIONS = (
    "Rope off every keep-out zone before transmitting, with the rope at or beyond the suggested radius, "
    "and keep people out of it while any station transmits.",
    "Re-run this review whenever a station, antenna, power, band, mode or the site layout changes.",
    "Grid results are sampled: between samples (the grid spacing, finer next to each antenna) nothing is evaluated.",
)

__all__ = ["SITE_CAUTIONS", "SiteStationResult", "SiteResult", "limit_equivalent_w_m2", "site_emitters", "assess_site"]



@dataclass(frozen=True)
class SiteStationResult:
    """One station of the site file: where it came from and its configurations' power chain."""

    name: str
    description: str
    source: str                        # "inline" or the station file's path as written
    source_sha256: str | None
    x_m: float
    y_m: float
    transmitters: tuple[str, ...]      # names used on the site ("station" or "station/transmitter")
    configurations: tuple              # rfsafe.results.ConfigurationResult, antenna positions station-relative
    pattern_used: dict[str, str]       # antenna id -> how its gain toward each point is taken
    exceeded_parts: tuple[str, ...]


@dataclass(frozen=True)
class SiteResult(VerdictPair):
    """The whole review of one site file (no I/O, no formatting)."""

    title: str
    site: str
    evaluator: str
    evaluation_date: str
    evaluation_date_source: str
    standard: str
    standard_name: str
    environment_labels: dict[str, str]
    rfsafe_version: str
    input_file: str
    input_sha256: str
    ground_reflection: str
    ground_factor: float
    heights_m: tuple[float, ...]
    grid_spacing_m: float
    grid_info: dict
    boundary: tuple[tuple[float, float], ...]
    areas: tuple[Area, ...]
    stations: tuple[SiteStationResult, ...]
    transmitters: tuple[TransmitterSite, ...]
    regions: tuple[RegionSite, ...]
    violations: tuple[Violation, ...]
    keep_out_points: dict[str, int]
    exceeded: tuple[str, ...]          # violations, then line/tuner ratings exceeded
    exposure_verdict: str              # "COMPLIES" or "EXCEEDS" (people in the areas against their limits)
    exposure_reasons: tuple[str, ...]
    equipment_verdict: str             # "WITHIN RATINGS", "RATING EXCEEDED" or "NOT RATED"
    equipment_reasons: tuple[str, ...]
    method_notes: tuple[str, ...]
    flags: tuple[str, ...]
    cautions: tuple[str, ...]
    emitters: tuple = field(default=(), repr=False)
    grid: SiteGrid | None = field(default=None, repr=False)
    remedies: tuple = ()               # rfsafe.results.SiteRemedy per violation and transmitter (rfsafe.remedies)
    #: 47 CFR 1.1307(b)(3) over every configuration of every station (FCC sites only, else None)
    exemption: object = None
    #: every published figure the review used (limits, duty factors, cables ...), and whether it was read
    #: in its published text (rfsafe.verification)
    data_verification: tuple = ()


def site_emitters(loaded_site) -> tuple[list[SiteEmitter], list[SiteStationResult], list[str]]:
    """Every configuration of every station, placed on the site, with its power chain from rfsafe.assess."""
    from rfsafe.assess import assess_with_emitters

    out: list[SiteEmitter] = []
    stations: list[SiteStationResult] = []
    flags: list[str] = []
    for i, (s, loaded, (source, digest)) in enumerate(zip(loaded_site.model.stations, loaded_site.stations,
                                                          loaded_site.sources)):
        prefix = f"stations[{i}]." if source == "inline" else f"stations[{i}] (file {source!r}): "
        try:
            evaluation, ems = assess_with_emitters(loaded)
        except InputError as err:
            raise InputError(f"{prefix}{err}") from None
        tx_ids = [t.id for t in loaded.model.transmitters]
        name_of = {t: (s.name if len(tx_ids) == 1 else f"{s.name}/{t}") for t in tx_ids}
        used = {}
        for em in ems:
            k = next(j for j, a in enumerate(loaded.model.antennas) if a.id == em.antenna.id)
            pat, how = site_pattern(em.antenna, em.peak_gain_dbi, loaded.pattern_tables, f"{prefix}antennas[{k}]")
            used[em.antenna.id] = how
            cfg = next(c for c in evaluation.configurations if c.id == em.configuration)
            # measured from the nearest part of the antenna, as the station evaluation measures it (the
            # kernel takes the structure relative to the declared position, so that it moves with it)
            nf = max(cfg.near_field_distance_m, cfg.aperture_far_field_m or 0.0)
            extent = None if em.extent is None else shifted(em.extent, (-em.x_m, -em.y_m, -em.height_m))
            power = tuple(em.avg_power_at_antenna_w[e] for e in ENVIRONMENTS)
            limit = tuple(limit_equivalent_w_m2(em.limits[e], em.avg_power_at_antenna_w[e], em.pep_at_antenna_w)
                          for e in ENVIRONMENTS)
            out.append(SiteEmitter(
                transmitter=name_of[em.transmitter], configuration=em.configuration,
                x_m=s.x_m + em.x_m, y_m=s.y_m + em.y_m, height_m=em.height_m, pattern=pat, freq_hz=em.freq_hz,
                power_w=power, limit_w_m2=limit, ground_factor=em.ground_factor,
                azimuth_deg=em.antenna.azimuth_deg, tilt_deg=em.antenna.tilt_deg,
                polarisation=em.antenna.polarisation, near_field_m=nf, extent=extent))
            if em.antenna.kind == "wire":
                flags.append(f"{s.name}: wire antenna {em.antenna.id!r} is mapped with its solver peak gain in every "
                             "direction from the nearest point of its wires (far field); its moment-method near-field map is in the site PDF, and rfsafe "
                             "evaluate gives its near field at declared places")
        exceeded = tuple(f"station {s.name}, configuration {c.id}: {part} exceeds its rating"
                         for c in evaluation.configurations for part in c.exceeded_parts)
        flags.extend(f"{s.name}, configuration {c.id}: {f}" for c in evaluation.configurations for f in c.flags)
        stations.append(SiteStationResult(
            name=s.name, description=s.description, source=source, source_sha256=digest, x_m=s.x_m, y_m=s.y_m,
            transmitters=tuple(name_of[t] for t in tx_ids), configurations=evaluation.configurations,
            pattern_used=used, exceeded_parts=exceeded))
    return out, stations, flags


def _site_verdicts(analysis, stations) -> dict:
    """Exposure verdict from the areas' violations; equipment verdict from every station's line results."""
    from rfsafe.assess import equipment_verdict

    if analysis.violations:
        exposure, why = "EXCEEDS", tuple(v.text for v in analysis.violations)
    else:
        rope = [t.transmitter for t in analysis.transmitters if t.rope_off_radius_m]
        why = ("no area above the limit of the people allowed there"
               + (f"; keep-out zones to rope off: {', '.join(rope)}" if rope else "; no keep-out zone"),)
        exposure = "COMPLIES"
    near = [r.label for r in analysis.regions if r.near_field_points and r.checked_environment]
    if near:
        why += ("far-field estimate inside some antenna's near field in " + ", ".join(repr(n) for n in near)
                + ": confirm by near-field analysis or measurement",)
    equipment, reasons = equipment_verdict([(f"station {s.name}, configuration {c.id}", c.line)
                                            for s in stations for c in s.configurations])
    return dict(exposure_verdict=exposure, exposure_reasons=why, equipment_verdict=equipment,
                equipment_reasons=reasons)


#: Grid points nearest to each antenna used to find its separation from where people may be.
_EXEMPTION_POINTS = 400
#: Separation taken where a person can reach the antenna itself [m] (smaller is never less conservative).
_TOUCH_M = 1e-3


def site_exemption(loaded_site, stations, grid, areas):
    """The 47 CFR 1.1307(b)(3) test over all configurations of all stations of an FCC site, else None.

    R of each source is the smallest distance from the radiating structure to a point where a person
    may be: every grid point outside the no-access areas, at the site's evaluation heights (the same
    rule as a station's declared places, measured to the nearest part of the antenna).
    """
    import dataclasses
    from types import SimpleNamespace

    import numpy as np

    from rfsafe.assess import _separation_m
    from rfsafe.limits.exemption import ExemptionSource, fcc_exemption

    if loaded_site.model.standard != "fcc":
        return None
    barred = [2 + i for i, a in enumerate(areas) if a.kind == "no-access"]
    xx, yy = np.meshgrid(grid.x_m, grid.y_m)
    free = ~np.isin(grid.region, barred)
    px, py = xx[free], yy[free]
    heights = list(loaded_site.model.heights_m)
    sources, notes, unknown = [], [], []
    for s, loaded, st in zip(loaded_site.model.stations, loaded_site.stations, stations):
        for c in st.configurations:
            ant = next(a for a in loaded.model.antennas if a.id == c.antenna)
            d = np.hypot(px - (s.x_m + ant.x_m), py - (s.y_m + ant.y_m))
            near = np.argsort(d)[:_EXEMPTION_POINTS]
            people = [SimpleNamespace(x_m=float(px[k] - s.x_m), y_m=float(py[k] - s.y_m), height_m=heights[0],
                                      body_heights_m=heights) for k in near]
            sep, how, known = _separation_m(loaded, ant, c.freq_mhz * 1e6, people)
            if sep < _TOUCH_M:   # people can reach the antenna itself: the smallest separation the test takes
                sep, how = _TOUCH_M, f"{how}; people can reach the antenna, separation taken as {_TOUCH_M * 1e3:g} mm"
            label = f"{st.name} {c.id}"
            notes.append(f"{label}: separation {sep:.2f} m from the nearest point outside the no-access areas, {how}")
            if not known:
                unknown.append(f"{st.name} {ant.id}")
            sources.append(ExemptionSource(label=label, freq_hz=c.freq_mhz * 1e6,
                                           avg_power_w=max(c.avg_power_at_antenna_w.values()),
                                           gain_dbi=c.gain_dbi, separation_m=sep))
    result = fcc_exemption(sources)
    result = dataclasses.replace(result, assumptions=tuple(result.assumptions) + tuple(notes))
    if unknown and result.exempt:
        result = dataclasses.replace(
            result, exempt=False,
            criterion=f"not claimed: the size of {', '.join(sorted(set(unknown)))} is not declared, so the separation "
                      f"from its nearest part is not known; the test with an assumed size would give: "
                      f"{result.criterion}")
    return result


def assess_site(loaded_site, *, today=None, progress: Callable[[int, int], None] | None = None) -> SiteResult:
    """Evaluate a loaded site file (see :func:`rfsafe.site.load_site`).

    Parameters
    ----------
    loaded_site : LoadedSite
    today : datetime.date, optional
        Date printed when the file gives no evaluation date (default: today).
    progress : callable, optional
        ``progress(done, total)`` while the grid is evaluated.
    """
    import datetime as dt

    from rfsafe import __version__
    from rfsafe import exposure as ex
    from rfsafe.limits import standard_info
    from rfsafe.results import CAUTIONS

    m = loaded_site.model
    info = standard_info(m.standard)
    ems, stations, flags = site_emitters(loaded_site)
    for s, st in zip(m.stations, stations):
        for em in ems:
            if em.transmitter in st.transmitters and not points_in_polygon(em.x_m, em.y_m, loaded_site.boundary):
                flags.append(f"{s.name}: antenna of configuration {em.configuration!r} at ({em.x_m:g}, {em.y_m:g}) m "
                             "is outside the site boundary")
    analysis = analyse_site(ems, boundary=loaded_site.boundary, areas=loaded_site.areas, heights_m=m.heights_m,
                            grid_spacing_m=m.grid_spacing_m, progress=progress)
    exceeded = [v.text for v in analysis.violations] + [x for st in stations for x in st.exceeded_parts]
    gf = ex.GROUND_FACTORS[m.ground_reflection]
    if m.evaluation_date is not None:
        date, date_src = m.evaluation_date.isoformat(), "file"
    else:
        date, date_src = (today or dt.date.today()).isoformat(), "today"
    g = analysis.grid
    notes = (
        "Power chain per configuration as for a single station (rfsafe evaluate): average power = PEP x mode duty "
        "factor x the largest fill of the averaging window by the schedule, less feedline loss.",
        f"Power density from each antenna: far-field prediction S = P G F / (4 pi R^2), as for a station's places: "
        f"R is the distance to the nearest part of the antenna's radiating structure (wire geometry, textbook "
        f"element lengths, a beam's declared or assumed span and boom, or the assumed size of an antenna of "
        f"unknown size), never less than 0.01 m; the gain toward the point is taken from the declared position "
        f"(pattern where the antenna opts in with use_pattern = true, else its peak gain in every direction; the "
        f"peak gain wherever the point is in the antenna's near field at some height); ground reflection "
        f"{m.ground_reflection} (F = {gf:g}).",
        "Each transmitter sends one configuration at a time: at every point and height its worst configuration "
        "there counts. All transmitters may transmit together: their exposure ratios are summed (conservative; "
        "simultaneous groups of station files are not used on a site).",
        f"Evaluation heights {', '.join(f'{h:g}' for h in m.heights_m)} m above ground; the worst is kept.",
        f"Grid spacing {m.grid_spacing_m:g} m over the site boundary plus a {g.margin_m:g} m margin (beyond it even "
        f"the peak-gain sum of all stations is below the limit): {g.nx} x {g.ny} points.",
        "Keep-out zones: total ratio > 1 against the uncontrolled limit (the public must be kept out) and against "
        "the controlled limit (nobody may be there).",
        "Ground in no declared area, and everything outside the site boundary, is treated as public. Where areas "
        "overlap the most restrictive kind applies (no-access, operators, public). Regions are checked at their grid "
        "points and at samples on the areas' edges (half the grid spacing, each edge's point nearest each antenna), "
        "which count for the ground on both sides of an edge (the ground just outside a rope is checked at the "
        "rope); around "
        f"every antenna, within {LOCAL_SPACINGS:g} grid spacings of its structure, the ground is also sampled at "
        f"{LOCAL_FRACTION:g} of the grid spacing, with the antenna's own position (where a grid would miss the "
        "peak next to an antenna), and along the main-beam bearing of every beam and pattern table at "
        f"{AXIS_FRACTION:g} of the grid spacing to the edge of the grid, with the points where it crosses an "
        "area's edge (where a grid would miss a narrow beam). Point counts include these samples.",
        f"Suggested rope-off radius: the farthest keep-out point attributed to the station (largest own share) plus "
        f"one grid spacing, rounded up to the next {ROPE_STEP_M:g} m.",
        "Points within lambda/2pi (or 2D^2/lambda for an aperture) of the nearest part of an antenna (its "
        "elements, boom, wires or assumed size) are in its near field, where the far-field estimate is not "
        "valid; they are flagged.",
        f"Standard: {info.name}; the site's standard and ground reflection apply to every station.",
    )
    return SiteResult(
        title=m.title, site=m.site, evaluator=m.evaluator, evaluation_date=date, evaluation_date_source=date_src,
        standard=m.standard, standard_name=info.name, environment_labels=dict(info.environment_labels),
        rfsafe_version=__version__, input_file=loaded_site.path.name, input_sha256=loaded_site.sha256,
        ground_reflection=m.ground_reflection, ground_factor=gf, heights_m=tuple(m.heights_m),
        grid_spacing_m=m.grid_spacing_m,
        grid_info={"nx": g.nx, "ny": g.ny, "points": g.nx * g.ny, "extent_m": list(g.extent_m),
                   "margin_m": g.margin_m, "evaluations": g.evaluations},
        boundary=loaded_site.boundary, areas=loaded_site.areas, stations=tuple(stations),
        transmitters=analysis.transmitters, regions=analysis.regions, violations=analysis.violations,
        keep_out_points=analysis.keep_out_points, exceeded=tuple(exceeded),
        **_site_verdicts(analysis, stations), method_notes=notes,
        flags=tuple(dict.fromkeys(flags + list(analysis.flags))), cautions=tuple(CAUTIONS) + SITE_CAUTIONS,
        emitters=tuple(ems), grid=g, exemption=site_exemption(loaded_site, stations, g, loaded_site.areas),
        data_verification=figure_checks([c for s in stations for c in s.configurations]))
