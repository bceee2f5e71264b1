"""The event-site review: a reproducible PDF record of one site evaluation, ready to sign.

It renders a :class:`rfsafe.site.SiteResult` and computes nothing new. Sections, in order:

- (unnumbered) identity (title, site, evaluator, date, standard, rfsafe version, SHA-256 of the site
  file and of every station file it reads) and the verdicts, with the violations and the keep-out
  zones of every station listed first;
1. stations and their keep-out zones (rope-off radii);
2. areas and the worst exposure in each;
3. the site map (landscape page);
4. the 47 CFR 1.1307(b)(3) exemption (FCC sites);
5. configurations (power chain from the core evaluation);
6. method and assumptions;
7. cautions and flags;
8. sign-off.

Entry points: :func:`build_site_pdf` (bytes) and :func:`write_site_pdf` (file, atomically).
The PDF uses the station worksheet's invariant set-up (fixed document id, creation date = the
evaluation date); the map is a PNG drawn without a timestamp, so the same site file gives the
same bytes.
"""

from __future__ import annotations

import io
from pathlib import Path

from reportlab.lib.units import mm
from reportlab.platypus import CondPageBreak, Image, KeepTogether, Paragraph, Spacer

from rfsafe.report.common import (COMPLIES_COLOR, EXCEEDS_COLOR, FONT_BOLD, build_pdf, escape,
                                  cautions_block, data_table, frame_width, grouped_flags, identity_block, kv_table,
                                  num, p, ratio_text, section_heading, signoff_block, styles)

__all__ = ["build_site_pdf", "write_site_pdf", "site_story"]

ENVIRONMENTS = ("controlled", "uncontrolled")


def _hex(color) -> str:
    return "#" + color.hexval()[2:]


def _coloured(text: str, ok: bool, style: str = "cell") -> Paragraph:
    return Paragraph(f'<font name="{FONT_BOLD}" color="{_hex(COMPLIES_COLOR if ok else EXCEEDS_COLOR)}">'
                     f'{escape(text)}</font>', styles()[style])


def _m(x) -> str:
    return "–" if not x else f"{x:.2f}"


def _ratio(x) -> str:
    """An exposure ratio; infinity only occurs at a sample on an antenna (distance 0)."""
    return "∞ (at an antenna)" if x == float("inf") else ratio_text(x)


# ------------------------------------------------------------------ 1 identity
def _identity(res, width) -> list:
    date_note = ("from the site file" if res.evaluation_date_source == "file"
                 else "date of this run: the site file gives no evaluation date")
    rows = [
        ("Site", res.site or "–"),
        ("Evaluator", res.evaluator or "–"),
        ("Evaluation date", f"{res.evaluation_date} ({date_note})"),
        ("Standard applied", f"{res.standard_name} [{res.standard}]"),
        ("Environments", "; ".join(f"{env}: {res.environment_labels.get(env, env)}" for env in ENVIRONMENTS)),
        ("Site file", res.input_file),
        ("Program", f"rfsafe {res.rfsafe_version}"),
    ]
    n_v = len(res.violations)
    rated = [x for s in res.stations for x in s.exceeded_parts]
    if not n_v:
        rope = [t for t in res.transmitters if t.rope_off_radius_m]
        detail = (f"no area above its limit; {len(rope)} station{'s' if len(rope) != 1 else ''} "
                  "need a roped keep-out zone (section 1)" if rope else "no area above its limit; no keep-out zone")
    else:
        detail = f"{n_v} violation{'s' if n_v != 1 else ''}: see the list below"
    equipment_detail = {"RATING EXCEEDED": f"{len(rated)} rating{'s' if len(rated) != 1 else ''} exceeded: see the "
                                           "list below",
                        "NOT RATED": "no rating known: stress computed, not compared"}.get(
                            res.equipment_verdict, res.equipment_reasons[0] if res.equipment_reasons else "")
    verdicts = [("Exposure", res.exposure_verdict, res.exposure_verdict == "COMPLIES", detail),
                ("Equipment", res.equipment_verdict,
                 {"WITHIN RATINGS": True, "RATING EXCEEDED": False}.get(res.equipment_verdict), equipment_detail)]
    out = identity_block(title=res.title or "Event site RF exposure review", subtitle="Event site RF exposure review",
                         rows=rows, verdict=res.verdict, verdict_detail=detail, width=width, verdicts=verdicts)
    hashes = [("SHA-256 of the site file", res.input_sha256)]
    hashes += [(f"SHA-256 of {s.source}", s.source_sha256) for s in res.stations if s.source_sha256]
    out.insert(-1, kv_table(hashes, [46 * mm, width - 46 * mm]))
    st = styles()["body"]
    if res.violations:
        out.append(p("Violations (worst first):", "h2"))
        for i, v in enumerate(res.violations):
            out.append(Paragraph(f'<font color="{_hex(EXCEEDS_COLOR)}"><b>V{i + 1}</b> {escape(v.text)}</font>', st,
                                 bulletText="✗"))
    if rated:
        out.append(p("Ratings exceeded:", "h2"))
        for line in rated:
            out.append(Paragraph(f'<font color="{_hex(EXCEEDS_COLOR)}">{escape(line)}</font>', st, bulletText="✗"))
    from rfsafe.report.site_text import station_zone_lines

    out.append(p("Keep-out zones, station by station (rope them off before transmitting):", "h2"))
    for _, state, line in station_zone_lines(res):
        if state == "violation":
            out.append(Paragraph(f'<font color="{_hex(EXCEEDS_COLOR)}">{escape(line)}</font>', st, bulletText="✗"))
        elif state == "zone":
            out.append(Paragraph(f"<b>{escape(line)}</b>", st, bulletText="!"))
        else:
            out.append(Paragraph(escape(line), st, bulletText="–"))
    return out


# ------------------------------------------------------------------ 4 exemption
def _exemption(res, width) -> list:
    """Section 4: 47 CFR 1.1307(b)(3) over every station (FCC sites only)."""
    ex = getattr(res, "exemption", None)
    if ex is None:
        return []
    import math

    from rfsafe.report.worksheet import EXEMPTION_STATEMENT

    out = [section_heading("4", "Exemption from routine evaluation, 47 CFR 1.1307(b)(3)")]
    status = "EXEMPT from routine evaluation" if ex.exempt else "NOT EXEMPT: a routine evaluation is required"
    total = ex.sum_of_fractions
    total_text = (f"{num(total)} (exempt needs at most 1)" if total is not None and math.isfinite(float(total))
                  else "not a number: at least one source has no applicable threshold, so exemption cannot be claimed")
    out.append(p(f"Status: <b>{escape(status)}</b>. Criterion: {escape(ex.criterion)}. Sum of fractions over every "
                 f"station: {escape(total_text)}. R of each source: the smallest distance from its antenna's nearest "
                 "part to a point outside the no-access areas, at the review's heights.", "body", markup=True))
    rows = []
    for s in ex.per_source:
        finite = s.fraction is not None and math.isfinite(float(s.fraction))
        rows.append([s.label, f"{s.criterion} ({s.reference})", f"{num(s.value_w)} ({s.value_kind})",
                     num(s.threshold_w) if s.threshold_w is not None else "none applies", num(s.erp_w),
                     num(s.fraction) if finite else "–"])
    out.append(data_table(["source", "criterion (paragraph)", "value compared W", "threshold W", "ERP W", "fraction"],
                          rows, [0.18 * width, 0.32 * width, 0.2 * width, 0.11 * width, 0.09 * width, 0.10 * width],
                          align="lllrrr"))
    for a in ex.assumptions:
        out.append(Paragraph(escape(a), styles()["small"], bulletText="·"))
    out.append(p(ex.note if "duty to comply" in (ex.note or "") else EXEMPTION_STATEMENT, "body"))
    return out


# ------------------------------------------------------------------ 2 map
def _map(res) -> list:
    from rfsafe.report.site_map import site_map_png

    # drawn at its printed size (a portrait page's width), so its text prints at its own size
    w_in, h_in = frame_width() / 72.0, 4.5
    width, height = w_in * 72.0, h_in * 72.0
    png = site_map_png(res, width_in=w_in, height_in=h_in, dpi=200)
    g = res.grid_info
    caption = (f"Colour: total exposure ratio against the uncontrolled (public) limit, worst of the heights "
               f"{', '.join(f'{h:g}' for h in res.heights_m)} m, summed over all stations (each its worst "
               f"configuration). Magenta contours: ratio = 1 against the uncontrolled limit (solid; the public "
               f"must be kept out inside) and the controlled limit (dashed; nobody inside). Grid "
               f"{res.grid_spacing_m:g} m, {g['nx']} x {g['ny']} points. Dotted outlines: ground within the near-field "
               f"distance of the nearest part of an antenna (the far-field estimate is not valid there). Green dashed circles: the "
               f"suggested rope-off radius of each station with a keep-out zone (section 1). Red rings V1, V2, ...: "
               f"the worst point of each violation. x east, y north, metres.")
    return [KeepTogether([section_heading("3", "Site map"), Image(io.BytesIO(png), width=width, height=height),
                          p(caption, "caption")])]


# ------------------------------------------------------------------ 3 stations
def _stations(res, width) -> list:
    out = [section_heading("1", "Stations and keep-out zones")]
    out.append(p("Keep-out distances are horizontal distances on the ground from the antenna to the farthest "
                 "sampled point of the total keep-out zone where this station has the largest share (uncontrolled: the "
                 "public must be kept out; controlled: nobody). The peak-gain distance is the 3-D far-field "
                 "compliance distance with peak gain toward every direction from the nearest part of the antenna, "
                 "plus the reach of its structure from the declared position: an upper bound of the station's own "
                 "zone. Rope-off radius: keep-out distance plus one grid spacing, rounded up to the next 0.5 m. Near "
                 "field: lambda/2pi (or 2D^2/lambda for an aperture) from the nearest part of the antenna.",
                 "small"))
    headers = ["Station", "Antenna x, y, height m", "Configurations", "Gain toward points",
               "Keep-out unc / ctl m", "Peak-gain distance unc / ctl m", "Rope-off radius m", "Near field m"]
    rows = []
    for t in res.transmitters:
        st = next(s for s in res.stations if t.transmitter in s.transmitters)
        how = "; ".join(sorted(set(st.pattern_used.values())))
        rope = f"{t.rope_off_radius_m:g}" if t.rope_off_radius_m else "none needed"
        rows.append([t.transmitter, f"{t.x_m:g}, {t.y_m:g}, {t.height_m:g}", ", ".join(t.configurations), how,
                     f"{_m(t.keep_out_m['uncontrolled'])} / {_m(t.keep_out_m['controlled'])}",
                     f"{t.peak_gain_distance_m['uncontrolled']:.2f} / {t.peak_gain_distance_m['controlled']:.2f}",
                     rope, f"{t.near_field_m:.2f}"])
    w = [0.11, 0.12, 0.14, 0.19, 0.11, 0.13, 0.10, 0.10]
    out.append(data_table(headers, rows, [f * width for f in w], align="llllrrrr"))
    srcs = [[s.name, s.description or "–", s.source] for s in res.stations]
    out.append(Spacer(1, 3 * mm))
    out.append(data_table(["Station", "Description", "Read from"], srcs, [0.15 * width, 0.6 * width, 0.25 * width],
                          align="lll"))
    return out


# ------------------------------------------------------------------ 4 areas
def _areas(res, width) -> list:
    out = [CondPageBreak(60 * mm), section_heading("2", "Areas")]
    out.append(p("Worst total exposure ratio found at the area's grid points, along its edges and at the finer "
                 "samples next to each antenna and along each beam's bearing (1 = limit). "
                 "Public areas, open ground (in no declared area) and ground outside the site are checked against "
                 "the uncontrolled limit, operators' areas against the controlled limit; no-access areas are not "
                 "checked (nobody may be there while the stations transmit).", "small"))
    headers = ["Area", "Kind", "Limit checked", "Worst ratio unc", "Worst ratio ctl", "Points over",
               "Worst point x, y m", "Mostly from", "Near-field points", "Verdict"]
    rows = []
    for r in res.regions:
        ok = r.verdict != "VIOLATION"
        verdict = _coloured(r.verdict, ok) if r.checked_environment else p(r.verdict, "cell")
        where = "–" if r.worst_x_m is None else f"{r.worst_x_m:.1f}, {r.worst_y_m:.1f}"
        rows.append([r.label, r.kind, r.checked_environment or "–", _ratio(r.worst_ratio["uncontrolled"]),
                     _ratio(r.worst_ratio["controlled"]), str(r.points_over) if r.checked_environment else "–",
                     where, r.dominant_transmitter or "–", str(r.near_field_points), verdict])
    w = [0.15, 0.09, 0.10, 0.10, 0.10, 0.07, 0.11, 0.09, 0.08, 0.11]
    out.append(data_table(headers, rows, [f * width for f in w], align="lllrrrrlrl"))
    return out


# ------------------------------------------------------------------ 5 configurations
def _configurations(res, width) -> list:
    out = [CondPageBreak(60 * mm), section_heading("5", "Configurations (power chain)")]
    out.append(p("From the core evaluation of each station (as rfsafe evaluate): average power after the mode "
                 "duty factor and the largest fill of the averaging window, line loss, peak gain and EIRP "
                 "(uncontrolled averaging window).", "small"))
    headers = ["Station", "Configuration", "MHz", "Mode", "PEP W", "Duty", "Window fill ctl / unc", "Line loss dB",
               "Avg power at antenna W unc", "Peak gain dBi", "EIRP W unc"]
    rows = []
    for s in res.stations:
        for c in s.configurations:
            rows.append([s.name, c.id, f"{c.freq_mhz:g}", c.mode, num(c.pep_w), f"{c.duty_factor:g}",
                         f"{c.transmit_fraction['controlled']:.2f} / {c.transmit_fraction['uncontrolled']:.2f}",
                         f"{c.line_loss_db:.2f}", num(c.avg_power_at_antenna_w["uncontrolled"]),
                         f"{c.gain_dbi:.2f}", num(c.eirp_w["uncontrolled"])])
    w = [0.11, 0.12, 0.07, 0.08, 0.07, 0.06, 0.11, 0.08, 0.11, 0.08, 0.11]
    out.append(data_table(headers, rows, [f * width for f in w], align="llrlrrrrrrr"))
    out += _near_field_maps(res, width)
    return out


def _near_field_maps(res, width) -> list:
    """Near-field maps of the wire antennas of each station (from the core evaluation), in station coordinates."""
    from types import SimpleNamespace

    from rfsafe.report.near_field import near_field_map_section

    out = []
    k = 0
    for s in res.stations:
        if not any(c.near_field_map is not None for c in s.configurations):
            continue
        k += 1
        note = p(f"Station {escape(s.name)}: coordinates in the station's own frame (its origin stands at "
                 f"x = {s.x_m:g} m, y = {s.y_m:g} m on the site). The site map above uses the far-field estimate "
                 "with the solver's peak gain for this station; these maps are its moment-method near field.",
                 "small", markup=True)
        out += near_field_map_section(SimpleNamespace(configurations=s.configurations, places=()), width, {},
                                      f"5.{k}", note=note)
    return out


# ------------------------------------------------------------------ 6-8
def _method(res) -> list:
    out = [section_heading("6", "Method and assumptions")]
    for note in res.method_notes:
        out.append(Paragraph(escape(note), styles()["bullet"], bulletText="•"))
    from rfsafe.report.worksheet import _verification   # the published figures used, checked or not

    out.extend(_verification(res, frame_width()))
    return out


def _grouped_site_flags(flags) -> list[str]:
    """Each flag once, with the stations and configurations it applies to."""
    import re

    items = []
    for f in flags:
        m = re.match(r"^(.+?, configuration [^:]+): (.*)$", f)
        items.append((m.group(1), m.group(2)) if m else ("", f))
    return [g[2:] if g.startswith(": ") else g for g in grouped_flags(items)]


def site_story(res) -> list:
    """The site review's flowables, in section order (a fresh list for every build)."""
    width = frame_width()
    story = []
    story += _identity(res, width)
    from rfsafe.report.answers import site_answers_section

    story += site_answers_section(res)
    story += _stations(res, width)
    story += _areas(res, width)
    story += _map(res)
    story += _exemption(res, width)
    story += _configurations(res, width)
    story += _method(res)
    story.append(CondPageBreak(70 * mm))
    story.append(section_heading("7", "Cautions"))
    story += cautions_block(res.cautions, _grouped_site_flags(res.flags))
    story.append(Spacer(1, 4 * mm))
    story.append(KeepTogether([section_heading("8", "Sign-off"),
                               p("I have reviewed the inputs and results of this site review, and the keep-out zones "
                                 "are roped off as listed.", "small"),
                               Spacer(1, 2 * mm), signoff_block(width, evaluator=res.evaluator or "", date="")]))
    return story


def build_site_pdf(res) -> bytes:
    """The site review of ``res`` as PDF bytes; the same result gives the same bytes."""
    who = res.site or res.title or "site"
    return build_pdf(
        site_story(res), title=res.title or "Event site RF exposure review", author=res.evaluator or "",
        subject=f"RF exposure review of {who} under {res.standard_name}: {res.verdict}",
        keywords=("RF exposure", "event site", res.standard, res.verdict), date_iso=res.evaluation_date,
        header_left=f"{who} · event site RF exposure review · {res.evaluation_date}",
        header_right=f"{res.standard} · {res.verdict}",
        footer_left=f"{res.input_file} · SHA-256 {res.input_sha256[:16]}… · rfsafe {res.rfsafe_version}")


def write_site_pdf(res, path, *, force: bool = False, inputs=()) -> Path:
    """Write the site review to ``path`` (temporary file, then rename); refuses to overwrite unless
    ``force``, and refuses any of ``inputs`` as the output."""
    from rfsafe.fileio import OutputSet

    path = Path(path)
    with OutputSet([("-o", path)], inputs=inputs, force=force) as out:
        out.write_bytes("-o", build_site_pdf(res))
    return path
