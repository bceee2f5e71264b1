"""The station worksheet: a reproducible PDF record of one evaluation, ready to sign.

The worksheet renders an :class:`rfsafe.results.EvaluationResult` and computes nothing new: every
number printed comes from the result. Sections, in order:

1. identity (title, station, evaluator, date, standard, rfsafe version, SHA-256 of the station
   file) and the overall verdict;
2. method and assumptions;
3. configurations (power chain, gain, EIRP/ERP, compliance distances);
4. places (exposure per configuration and the simultaneous total; the moment-method result beside
   the far-field estimate where a place lies inside lambda/2pi of a wire antenna; the
   47 CFR 1.1307(b)(3) exemption status for an FCC evaluation);
5. line and tuner stress;
6. figures (exposure ratio versus distance, standing-wave profiles, near-field maps of wire
   antennas, then any extra figures);
7. cautions and flags;
8. sign-off.

Entry points: :func:`build_worksheet_pdf` (bytes) and :func:`write_worksheet` (file, atomically).
"""

from __future__ import annotations

import math
import re
from pathlib import Path

from reportlab.lib.units import mm
from reportlab.platypus import CondPageBreak, KeepTogether, Paragraph, Spacer

from rfsafe.report.common import (COMPLIES_COLOR, EXCEEDS_COLOR, Styled, build_pdf, cautions_block, data_table, escape,
                                  frame_width, grouped_flags, heading_before_table, identity_block, kv_table,
                                  margin_text, num, p, quick_reportlab, ratio_text, section_heading, signoff_block,
                                  styles)
from rfsafe.report.figures import exposure_distance_figure, exposure_legend, figure_rows, line_profile_figure
from rfsafe.report.near_field import comparison_exposures, near_field_comparison_section, near_field_map_section
from rfsafe.exposure import horizontal_compliance_distance_m
from rfsafe.report.maps import scaled
from rfsafe.report.plan_map import MAX_NUMBERED_PLACES, MAX_PLACES_ALL_NUMBERED, plan_map_drawing

__all__ = ["build_worksheet_pdf", "write_worksheet", "worksheet_story", "EXEMPTION_STATEMENT"]

ENVIRONMENTS = ("controlled", "uncontrolled")
EXEMPTION_STATEMENT = ("An exemption under 47 CFR 1.1307(b)(3) removes only the duty to carry out a routine "
                       "evaluation; it does not remove the duty to comply with the exposure limits of "
                       "47 CFR 1.1310.")
_QUANTITY = {"power_density": "S", "e_field": "E", "h_field": "H"}
_STRESS_QUANTITY = {"voltage_v_peak": "voltage", "current_a_rms": "current", "current_a_peak": "current",
                    "equivalent_matched_power_w": "heating (equivalent matched power)"}
_CONFIGS_PER_TABLE = 4


def _pair(d: dict, fmt=num) -> str:
    """Controlled / uncontrolled values of a per-environment dict."""
    return " / ".join(fmt(d.get(env)) for env in ENVIRONMENTS)


def _governing(text: str) -> str:
    """``"power_density (time-averaged)"`` -> ``"S, avg"`` (names only, no values)."""
    head, _, tail = text.partition(" ")
    basis = tail.strip("()")
    short = {"time-averaged": "avg", "instantaneous": "inst."}.get(basis, basis)
    return _QUANTITY.get(head, head) + (f", {short}" if short else "")


def _boundary_text(c) -> str:
    """The near-field boundary a configuration's flags use: the larger of lambda/2pi and 2D^2/lambda."""
    if c.aperture_far_field_m is not None and c.aperture_far_field_m > c.near_field_distance_m:
        return f"{c.aperture_far_field_m:.2f} (2D²/λ)"
    return f"{c.near_field_distance_m:.2f} (λ/2π)"


def _quantity(name: str) -> str:
    """Readable name of a stressed quantity (the unit is printed in its own column)."""
    return _STRESS_QUANTITY.get(name, name.replace("_", " "))


_NUMBER = re.compile(r"(?<![A-Za-z\[])[-+]?\d+(?:\.\d+)?(?:e[-+]?\d+)?")


class _Notes:
    """Footnotes of one table: identical texts share one number."""

    def __init__(self, prefix: str = ""):
        self.prefix = prefix
        self.keys: list[str] = []
        self.texts: list[list[str]] = []
        self._number: dict[str, int] = {}      # key -> index (lookups stay constant-time in long tables)
        self._seen: set[str] = set()

    def ref(self, texts) -> str:
        """Reference marks of ``texts``; texts that differ only in their numbers share one note."""
        refs = []
        for t in texts:
            key = _NUMBER.sub("#", t)
            k = self._number.get(key)
            if k is None:
                k = self._number[key] = len(self.keys)
                self.keys.append(key)
                self.texts.append([])
            if t not in self._seen:
                self._seen.add(t)
                self.texts[k].append(t)
            refs.append(f"{self.prefix}{k + 1}")
        return ", ".join(f"[{r}]" for r in dict.fromkeys(refs))

    def note_texts(self) -> list[str]:
        """One text per note: a shared wording shows its numbers row by row, in the order first seen."""
        out = []
        for key, group in zip(self.keys, self.texts):
            if len(group) == 1:
                out.append(group[0])
                continue
            columns = list(zip(*(_NUMBER.findall(t) for t in group)))
            pieces = key.split("#")
            text = pieces[0]
            for col, piece in zip(columns, pieces[1:]):
                values = list(dict.fromkeys(col))
                text += (values[0] if len(values) == 1 else " / ".join(values) + " (in order)") + piece
            out.append(text)
        return out

    def flowables(self) -> list:
        return [p(f"[{self.prefix}{i + 1}] {t}", "small") for i, t in enumerate(self.note_texts())]


# ------------------------------------------------------------------ 1 identity
def _identity(res, width) -> list:
    date_note = ("from the station file" if res.evaluation_date_source == "file"
                 else "date of this run: the station file gives no evaluation date")
    standard = f"{res.standard_name} [{res.standard}]"
    if getattr(res, "standard_overridden", False):
        standard += (f"; chosen with --standard, overriding the station file's own standard "
                     f"[{res.file_standard}]")
    rows = [("Station", res.station or "–")]
    rows += [(k, v) for k, v in (("Call sign", getattr(res, "call_sign", "")), ("Licence", getattr(res, "licence", "")),
                                 ("Address", getattr(res, "address", ""))) if v]
    rows += [
        ("Evaluator", res.evaluator or "–"),
        ("Evaluation date", f"{res.evaluation_date} ({date_note})"),
        ("Standard applied", standard),
        ("Environments", "; ".join(f"{env}: {res.environment_labels.get(env, env)}" for env in ENVIRONMENTS)),
        ("Station file", res.input_file),
        ("Program", f"rfsafe {res.rfsafe_version}"),
    ]
    if res.exemption is not None:
        ex = res.exemption
        rows.append(("47 CFR 1.1307(b)(3)", ("EXEMPT from routine evaluation (not from compliance)" if ex.exempt
                                              else "NOT EXEMPT: a routine evaluation is required")
                     + f"; see section {_exemption_number(res)}"))
    n_places = len(res.places)
    n_over = sum(pl.verdict != "complies" for pl in res.places)
    if res.exposure_verdict == "NOT EVALUATED":
        detail = "no place declared: compliance is not claimed; see the compliance distances"
    elif n_over:
        detail = f"{n_over} of {n_places} place{'s' if n_places != 1 else ''} above the limit: see the list below"
    else:
        detail = f"all {n_places} place{'s' if n_places != 1 else ''} within the limits"
    if res.places:
        worst = max(res.places, key=lambda pl: pl.total_ratio)
        label = worst.label if len(worst.label) <= 36 else worst.label[:35].rstrip() + "…"
        detail += f"; highest place total {ratio_text(worst.total_ratio)} ({label})"
    n_parts = sum(len(c.exceeded_parts) for c in res.configurations)
    equipment_detail = {"RATING EXCEEDED": f"{n_parts} rating{'s' if n_parts != 1 else ''} exceeded: see the list below",
                        "NOT RATED": "no rating known: stress computed, not compared"}.get(
                            res.equipment_verdict, res.equipment_reasons[0] if res.equipment_reasons else "")
    verdicts = [("Exposure", res.exposure_verdict, {"COMPLIES": True, "EXCEEDS": False}.get(res.exposure_verdict),
                 detail),
                ("Equipment", res.equipment_verdict,
                 {"WITHIN RATINGS": True, "RATING EXCEEDED": False}.get(res.equipment_verdict), equipment_detail)]
    out = identity_block(title=res.title or "RF exposure evaluation", subtitle="RF exposure evaluation worksheet",
                         rows=rows, verdict=res.verdict, verdict_detail=detail, width=width, verdicts=verdicts)
    out.insert(-1, kv_table([("SHA-256 of the station file", res.input_sha256)], [46 * mm, width - 46 * mm]))
    if res.exceeded:
        st = styles()["body"]
        out.append(p("Exceeded:", "h2"))
        for line in res.exceeded:
            out.append(Paragraph(f'<font color="{_hex(EXCEEDS_COLOR)}">{_esc(line)}</font>', st,
                                 bulletText="✗"))
    return out


def _esc(text: str) -> str:
    return escape(str(text))


def _hex(color) -> str:
    return "#" + color.hexval()[2:]


def _coloured(text: str, ok: bool) -> Styled:
    """Bold table-cell text in the pass (green) or fail (red) colour; the word carries the meaning."""
    return Styled(text, color=COMPLIES_COLOR if ok else EXCEEDS_COLOR, bold=True)


# ------------------------------------------------------------------ 1 station
def _station(res, width, numbers) -> list:
    """Section 1: the plan, the antennas and the places, as declared."""
    out = [section_heading("1", "The station")]
    out.append(section_heading("1.1", "Antennas", level=1))
    rows = []
    for a in res.antennas:
        heading = _orientation(a)
        size = "not declared" if a.size_m is None else f"{_dist(a.size_m)} m"
        rows.append([a.id, a.kind, _xyz(a.x_m, a.y_m, a.height_m), heading,
                     "from the wires" if a.kind == "wire" else a.polarisation, f"{size}: {a.size_basis}",
                     a.description or "–"])
    out.append(data_table(["antenna", "kind", "x, y, height m", "orientation", "polarisation", "size (largest "
                           "dimension) and its basis", "description"], rows,
                          [24 * mm, 22 * mm, 20 * mm, 26 * mm, 17 * mm, 38 * mm, width - 147 * mm],
                          align="lllllll"))
    out.append(section_heading("1.2", "Places", level=1))
    if not res.places:
        out.append(p("No places are declared in the station file.", "body"))
    rows = []
    for pl in res.places:
        rows.append([numbers[pl.label], pl.label, _xyz(pl.x_m, pl.y_m, pl.height_m),
                     f"{pl.environment} ({res.environment_labels.get(pl.environment, pl.environment)})",
                     pl.why or "not stated in the station file"])
    if rows:
        out.append(data_table(["#", "place", "x, y, height m", "environment", "why this environment"], rows,
                              [8 * mm, 44 * mm, 22 * mm, 52 * mm, width - 126 * mm], align="lllll"))
    if res.plan is not None and res.antennas:
        drawing = plan_map_drawing(res, place_numbers=numbers)
        img = scaled(drawing, min(1.0, width / drawing.width))
        plan = res.plan
        tops = "; ".join(f"{lvl} {env} {ratio_text(plan.max_ratio[f'{lvl} {env}'])}"
                         for lvl in ("ground", "head") for env in ENVIRONMENTS)
        caption = ("Seen from above, x east and y north in metres. Antennas are drawn to the size in section 1.1; "
                   "places are numbered as in section 1.2. Colour: total exposure ratio against the uncontrolled "
                   "limit at head height. Lines: where the total ratio reaches 1 at ground level (0 m, blue) and at "
                   f"head height (worst of {', '.join(f'{h:g}' for h in plan.heights_m['head'])} m, magenta), "
                   "solid for the uncontrolled limit (the public is kept out inside), dashed for the controlled "
                   f"limit (nobody inside). Largest ratio on the plan: {tops}. Method: {plan.method}. Inside an "
                   "antenna's near-field boundary this is a far-field estimate only (see the flags).")
        if len(res.places) > MAX_PLACES_ALL_NUMBERED:
            caption += (f" Of the {len(res.places):,} places, at most {MAX_NUMBERED_PLACES} are numbered: the highest "
                        "total ratio first, passing over a place too close to one already numbered or whose number "
                        "finds no free room. Every place is marked, and all are listed in sections 1.2 and 4.1.")
        out.append(KeepTogether([section_heading("1.3", "Plan", level=1), img, p(caption, "caption")]))
    return out


def _orientation(a) -> str:
    """How an antenna points, in words: beam heading, vertical, or the bearing its wire runs along."""
    if a.kind in ("beam", "table"):
        return f"beam heading {a.azimuth_deg % 360:g}° from north, tilt {a.tilt_deg:g}°"
    if a.polarisation == "vertical" or a.kind == "quarter-wave-vertical":
        return "vertical"
    if a.kind == "wire" or len(a.segments_m) != 1:
        return "as the wire geometry runs (see the plan)" if a.kind == "wire" else "–"
    (x1, y1, _), (x2, y2, _) = a.segments_m[0]
    bearing = math.degrees(math.atan2(x2 - x1, y2 - y1)) % 180.0
    return f"runs {bearing:g}°–{bearing + 180:g}° from north (broadside to {a.azimuth_deg % 360:g}°)"


def _xyz(*values) -> str:
    """Coordinates [m] as declared, to the centimetre, without trailing zeros."""
    return ", ".join(f"{round(float(v), 2):g}" for v in values)


def _dist(x) -> str:
    """A length [m] to a sensible precision: centimetres below 10 m, decimetres below 100 m, else metres."""
    if x is None:
        return "–"
    x = float(x)
    if not math.isfinite(x):
        return num(x)
    a = abs(x)
    return f"{x:.2f}" if a < 10 else (f"{x:.1f}" if a < 100 else f"{x:.0f}")


# ------------------------------------------------------------------ 2 method
def _method(res, width) -> list:
    out = [section_heading("2", "Method and assumptions")]
    for note in res.method_notes:
        out.append(Paragraph(_esc(note), styles()["bullet"], bulletText="•"))
    methods = sorted({c.method for c in res.configurations})
    for m in methods:   # where configurations differ, each method names the configurations it serves
        which = "" if len(methods) == 1 else " (" + ", ".join(c.id for c in res.configurations if c.method == m) + ")"
        out.append(Paragraph(_esc(f"Exposure method{which}: {m}."), styles()["bullet"], bulletText="•"))
    out.append(Spacer(1, 2 * mm))
    rows = []
    for c in res.configurations:
        gain_methods = sorted({x.gain_method for pl in res.places for x in pl.exposures
                               if x.configuration == c.id})
        nf = f"λ/2π {c.near_field_distance_m:.2f}"
        if c.aperture_far_field_m is not None:
            nf += f"; 2D²/λ {c.aperture_far_field_m:.2f}"
        rows.append([c.id, f"{c.duty_factor:g}: {c.duty_factor_source}", c.schedule,
                     _pair(c.averaging_minutes, lambda v: "none" if v is None else f"{v:g}"),
                     _pair(c.transmit_fraction, lambda v: f"{v:.3g}"),
                     f"{c.gain_dbi:.2f} dBi, {c.gain_source}; toward places: "
                     f"{', '.join(gain_methods) if gain_methods else '–'}", nf])
    out.append(p("Per configuration (controlled / uncontrolled where two values are given):", "lead"))
    out.append(data_table(["configuration", "duty factor and its source", "schedule", "averaging min",
                           "window fill", "gain", "near-field boundary m"], rows,
                          [22 * mm, 44 * mm, 20 * mm, 17 * mm, 16 * mm, 38 * mm, width - 157 * mm],
                          align="lllrrll"))
    out.append(Spacer(1, 2 * mm))
    rows = []
    for c in res.configurations:
        for cd in c.compliance_distances:
            rows.append([c.id, cd.environment, cd.limit_basis,
                         "none" if cd.averaging_minutes is None else f"{cd.averaging_minutes:g}",
                         _QUANTITY.get(cd.governing, cd.governing), cd.limit_source])
    out.append(p("Limits applied (the limit that sets each compliance distance):", "lead"))
    out.append(data_table(["configuration", "environment", "basis", "averaging min", "governs", "limit source"],
                          rows, [22 * mm, 22 * mm, 22 * mm, 17 * mm, 15 * mm, width - 98 * mm],
                          align="lllrll"))
    out.extend(_verification(res, width))
    return out


def _verification(res, width) -> list:
    """Which published figures were checked against their texts, and which were not (from the result)."""
    from rfsafe.verification import STATES, summary_line

    checks = getattr(res, "data_verification", ())
    if not checks:
        return []
    counts = {s: sum(1 for f in checks if f.state == s) for s in STATES}
    out = [Spacer(1, 2 * mm), p("Published figures used, and whether they were checked against the published text:",
                                "lead")]
    out.append(p(f"{counts['published text']} read in the published text; {counts['reproduction']} read in a "
                 f"faithful reproduction of it; {counts['partly']} partly read; {counts['not confirmed']} not "
                 "confirmed (held from memory or common practice: check them against the published text before "
                 "relying on a result that depends on them).", "small"))
    rows = [[f.kind, f.figure, summary_line(f.state), f.verification] for f in checks]
    out.append(data_table(["figure", "row, mode or part", "state", "where it was read (or why not)"], rows,
                          [22 * mm, 52 * mm, 34 * mm, width - 108 * mm], align="llll"))
    return out


# ------------------------------------------------------------------ 3 configurations
def _configurations(res, width) -> list:
    out = heading_before_table("3", "Configurations")
    out.append(p("Average powers after the mode duty factor and the averaging-window fill; values given "
                 "as controlled / uncontrolled where the averaging time differs by environment.", "small"))
    cfgs = list(res.configurations)
    for k in range(0, len(cfgs), _CONFIGS_PER_TABLE):
        chunk = cfgs[k:k + _CONFIGS_PER_TABLE]
        label_w = 52 * mm
        col_w = (width - label_w) / _CONFIGS_PER_TABLE
        spec = [
            ("description", lambda c: c.description or "–"),
            ("frequency [MHz]", lambda c: f"{c.freq_mhz:g}"),
            ("transmitter / feedline / antenna", lambda c: f"{c.transmitter} / {c.feedline} / {c.antenna}"),
            ("mode", lambda c: c.mode),
            ("PEP at the transmitter [W]", lambda c: num(c.pep_w)),
            ("duty factor", lambda c: f"{c.duty_factor:g}"),
            ("transmit fraction (window fill)", lambda c: _pair(c.transmit_fraction, lambda v: f"{v:.3g}")),
            ("average power at the transmitter [W]", lambda c: _pair(c.avg_power_w)),
            ("line loss [dB]", lambda c: f"{c.line_loss_db:.2f}"),
            ("power reaching the antenna [fraction]", lambda c: f"{c.loss_fraction:.3f}"),
            ("average power at the antenna [W]", lambda c: _pair(c.avg_power_at_antenna_w)),
            ("PEP at the antenna [W]", lambda c: num(c.pep_at_antenna_w)),
            ("peak gain [dBi]", lambda c: f"{c.gain_dbi:.2f} ({c.gain_source})"),
            ("EIRP, time-averaged [W]", lambda c: _pair(c.eirp_w)),
            ("ERP, time-averaged [W]", lambda c: _pair(c.erp_w)),
            ("EIRP at PEP [W]", lambda c: num(c.eirp_pep_w)),
        ]
        if not any(c.description for c in chunk):
            spec = spec[1:]
        rows = [[label] + [fn(c) for c in chunk] for label, fn in spec]
        out.append(data_table(["quantity"] + [c.id for c in chunk], rows, [label_w] + [col_w] * len(chunk)))
        out.append(Spacer(1, 3 * mm))
    out.append(section_heading("3.1", "Compliance distances", level=1))
    heads = _head_heights(res)
    out.append(p("Distance from the antenna beyond which each environment's limit is met, with peak gain and "
                 "the far-field prediction: straight-line (3-D) distance from the antenna's centre of radiation, "
                 "and the horizontal distance from the point below it at ground level (0 m) and at head height "
                 f"(worst of {', '.join(f'{h:g}' for h in heads)} m). A distance inside the near-field boundary "
                 "is flagged: the far-field estimate is not valid there.", "lead"))
    rows = []
    heights = {a.id: a.height_m for a in res.antennas}
    for c in res.configurations:
        h_ant = heights.get(c.antenna)
        for cd in c.compliance_distances:
            if h_ant is None:
                ground = head = "–"
            else:
                ground = _dist(float(horizontal_compliance_distance_m(cd.dist_m, h_ant)))
                head = _dist(float(horizontal_compliance_distance_m(cd.dist_m, min(abs(h_ant - z) for z in heads))))
            rows.append([c.id, cd.environment, f"{_dist(cd.dist_m)} ({cd.dist_ft:.1f} ft)", ground, head,
                         f"{cd.limit_basis}, {_QUANTITY.get(cd.governing, cd.governing)}",
                         num(cd.eirp_w), ("YES, inside " if cd.inside_near_field else "no; ") + _boundary_text(c)])
    out.append(data_table(["configuration", "environment", "3-D distance m", "horizontal at ground m",
                           "horizontal at head height m", "limit basis, governs", "EIRP compared W",
                           "inside the near-field boundary m"], rows,
                          [24 * mm, 21 * mm, 24 * mm, 18 * mm, 20 * mm, 27 * mm, 17 * mm, width - 151 * mm],
                          align="llrrrlrl"))
    out.append(p("Horizontal distance = sqrt(d² − Δh²) with d the 3-D distance and Δh the height of the antenna's "
                 "centre above the level; 0 where the level lies farther than d below the antenna.", "small"))
    out += _every_limit(res, width)
    return out


def _head_heights(res):
    from rfsafe.site.plan import PLAN_LEVELS

    return tuple(res.plan.heights_m["head"]) if res.plan is not None else PLAN_LEVELS["head"]


def _every_limit(res, width) -> list:
    """Where a standard sets more than one limit at a frequency (Safety Code 6 below 10 MHz: nerve stimulation,
    compared with the field at PEP, beside the time-averaged limit), each limit's own distance."""
    several = [c for c in res.configurations if len(c.limit_distances) > len(c.compliance_distances)]
    if not several:
        return []
    nerve = res.standard == "sc6"
    rows = []
    for c in several:
        governing = {(cd.environment, cd.limit_basis) for cd in c.compliance_distances}
        for cd in c.limit_distances:
            basis = ("nerve stimulation (instantaneous, field at PEP)" if nerve and cd.limit_basis == "instantaneous"
                     else (f"{cd.limit_basis} (SAR-based)" if nerve else cd.limit_basis))
            rows.append([c.id, cd.environment, basis, _QUANTITY.get(cd.governing, cd.governing),
                         f"{_dist(cd.dist_m)} ({cd.dist_ft:.1f} ft)", num(cd.eirp_w),
                         "governs" if (cd.environment, cd.limit_basis) in governing else "met within the governing "
                         "distance", cd.limit_source])
    title = "Nerve stimulation and time-averaged limits" if nerve else "Each limit on its own"
    return [section_heading("3.2", title, level=1),
            p("The standard sets more than one limit at these frequencies; each limit's own compliance distance "
              "is shown, and the largest sets the distance in section 3.1.", "lead"),
            data_table(["configuration", "environment", "limit", "governs", "distance m", "EIRP compared W",
                        "role", "limit source"], rows,
                       [22 * mm, 20 * mm, 30 * mm, 13 * mm, 22 * mm, 15 * mm, 20 * mm, width - 142 * mm],
                       align="lllrrrll")]


# ------------------------------------------------------------------ 4 places
def _exemption_number(res) -> str:
    """4.3, or 4.4 when the near-field comparison takes 4.3."""
    return "4.4" if comparison_exposures(res) else "4.3"


def _places(res, width, numbers) -> list:
    out = [section_heading("4", "Places")]
    if not res.places:
        out.append(p("No places are declared in the station file: only the compliance distances above were "
                     "evaluated.", "body"))
        return out
    rules = sorted({pl.total_rule for pl in res.places})
    out.append(section_heading("4.1", "Total at each place (all simultaneous transmitters)", level=1))
    rows = []
    for pl in res.places:
        shares = pl.contributions
        shares = Styled([f"{s.configuration} {ratio_text(s.exposure_ratio)}" + (" +" if k < len(shares) - 1 else "")
                         for k, s in enumerate(shares)])
        rows.append([numbers[pl.label], pl.label, _xyz(pl.x_m, pl.y_m, pl.height_m),
                     pl.environment, ratio_text(pl.total_ratio),
                     margin_text(pl.total_margin_db), _coloured(pl.verdict.upper(), pl.verdict == "complies"),
                     shares])
    out.append(data_table(["#", "place", "x, y, height m", "environment", "total ratio", "margin dB", "verdict",
                           "summed (configuration ratio)"], rows,
                          [8 * mm, 40 * mm, 19 * mm, 21 * mm, 15 * mm, 14 * mm, 19 * mm, width - 136 * mm],
                          align="llllrrll"))
    for r in rules:
        out.append(p(f"Summation rule: {r}. A place complies when the sum of exposure ratios is at most 1; "
                     "margin = -10 log10(ratio).", "small"))
    out.extend(heading_before_table("4.2", "Exposure at each place from each configuration", level=1))
    notes = _Notes()
    rows = []
    extra = []
    r = 0
    plane_wave_note = False
    for pl in res.places:
        for j, x in enumerate(pl.exposures):
            r += 1
            how, _, more = x.gain_method.partition(", ")
            flag_ref = notes.ref(list(x.flags) + ([f"gain: {x.gain_method}"] if more else [])) \
                if (x.flags or more) else ""
            method = x.method + (" · inside near field" if x.inside_near_field and x.near_field_ratio is None else "")
            if x.power_density_limit_w_m2 is None:
                s_text = "not defined"        # the standard sets no S limit here: S is not printed
            elif x.near_field_ratio is not None and x.exposure_ratio == x.near_field_ratio:
                s_text = num(x.power_density_w_m2) + " ‡"
                plane_wave_note = True
            else:
                s_text = num(x.power_density_w_m2)
            rows.append([f"{numbers[pl.label]} {pl.label}" if j == 0 else "", x.configuration, _dist(x.dist_m),
                         f"{x.gain_dbi:.2f} {how}", s_text, num(x.e_field_v_m),
                         num(x.h_field_a_m), ratio_text(x.exposure_ratio), margin_text(x.margin_db),
                         _governing(x.governing), (method + " " + flag_ref).strip()])
            if j == 0 and r > 1:
                extra.append(("LINEABOVE", (0, r), (-1, r), 0.9, styles()["cell"].textColor))
    out.append(data_table(["place", "configuration", "dist m", "gain dBi", "S W/m²", "E V/m", "H A/m", "ratio",
                           "margin dB", "governs", "method, flags"], rows,
                          [29 * mm, 21 * mm, 11 * mm, 16 * mm, 13 * mm, 11 * mm, 13 * mm, 14 * mm, 12 * mm,
                           13 * mm, width - 153 * mm],
                          align="llrrrrrrrll", extra_style=extra, zebra=False))
    out.append(p("dist: straight-line distance from the antenna; gain: toward the place (pattern) or the peak gain; "
                 "governs: the quantity with the largest ratio (S power density, E or H field) and the limit's "
                 "basis (avg = time-averaged, inst. = instantaneous, compared with PEP). S \"not defined\": the "
                 "standard sets no power-density limit at this frequency, so none is printed.", "small"))
    if plane_wave_note:
        out.append(p("‡ Near-field result: S is not a far-field power density but the plane-wave equivalent of the "
                     "computed fields, the larger of E²/377 Ω and 377 Ω·H²; the ratio compares E and H with their "
                     "own limits.", "small"))
    out.extend(notes.flowables())
    out.extend(near_field_comparison_section(res, width, numbers, "4.3"))
    if res.exemption is not None:
        out.extend(_exemption(res.exemption, width, _exemption_number(res)))
    return out


def _exemption(ex, width, number) -> list:
    out = [section_heading(number, "Exemption from routine evaluation, 47 CFR 1.1307(b)(3)", level=1)]
    status = "EXEMPT from routine evaluation" if ex.exempt else "NOT EXEMPT: a routine evaluation is required"
    total = ex.sum_of_fractions
    if total is None or not math.isfinite(float(total)):
        total_text = ("not a number: at least one source has no applicable threshold (see its row), so the "
                      "sources cannot be summed and exemption cannot be claimed")
    else:
        total_text = f"{num(total)} (exempt needs at most 1)"
    out.append(p(f"Status: <b>{_esc(status)}</b>. Criterion: {_esc(ex.criterion)}. Sum of fractions: "
                 f"{_esc(total_text)}.", "body", markup=True))
    notes = _Notes("e")
    rows = []
    for s in ex.per_source:
        ref = notes.ref(s.other_criteria) if s.other_criteria else ""
        finite = s.fraction is not None and math.isfinite(float(s.fraction))
        rows.append([s.label, f"{s.criterion} ({s.reference}) {ref}".strip(), f"{num(s.value_w)} ({s.value_kind})",
                     num(s.threshold_w) if s.threshold_w is not None else "none applies", num(s.erp_w),
                     num(s.fraction) if finite else "–", margin_text(s.margin_db) if finite else "–"])
    if rows:
        out.append(data_table(["source", "criterion (paragraph)", "value compared W", "threshold W", "ERP W",
                               "fraction", "margin dB"], rows,
                              [22 * mm, 58 * mm, 34 * mm, 18 * mm, 16 * mm, 15 * mm, width - 163 * mm],
                              align="lllrrrr"))
    if notes.texts:
        out.append(p("Other criteria considered:", "lead"))
        out.extend(notes.flowables())
    for a in ex.assumptions:
        out.append(Paragraph(_esc(a), styles()["small"], bulletText="·"))
    # the rule's own note says that exemption removes only the duty to evaluate; ours if it is missing
    out.append(p(ex.note if "duty to comply" in (ex.note or "") else EXEMPTION_STATEMENT, "body"))
    return out


# ------------------------------------------------------------------ 5 line and tuner
def _line_stress(res, width) -> list:
    out = [section_heading("5", "Line and tuner stress")]
    out.append(p("Voltages and currents are peak values of the RF sine at PEP; positions are measured from the "
                 "transmitter end of the line. Headroom = rating / stress (above 1 is within the rating).",
                 "lead"))
    rows = []
    for c in res.configurations:
        ln = c.line
        rows.append([c.id, f"{ln.cable_id}, {ln.length_m:g} m", f"{ln.swr_at_antenna:.2f}",
                     f"{ln.swr_at_transmitter:.2f}", f"{ln.matched_loss_db:.2f}", f"{ln.total_loss_db:.2f}",
                     f"{num(ln.line_voltage_v_peak)} at {ln.line_voltage_max_position_m:.1f} m",
                     f"{num(ln.line_current_a_peak)} at {ln.line_current_max_position_m:.1f} m",
                     num(ln.line_dissipation_avg_w),
                     ", ".join(c.exceeded_parts) if c.exceeded_parts else "none"])
    out.append(data_table(["configuration", "cable, length", "SWR ant.", "SWR tx", "matched loss dB",
                           "total loss dB", "V max (peak)", "I max A (peak)", "line heat W avg", "exceeded"],
                          rows, [22 * mm, 24 * mm, 14 * mm, 16 * mm, 15 * mm, 14 * mm, 22 * mm, 20 * mm, 15 * mm,
                                 width - 162 * mm], align="llrrrrrrrl"))
    out.append(Spacer(1, 2 * mm))
    notes = _Notes("s")
    sources = _Notes("r")
    rows = []
    extra = []
    r = 0
    for c in res.configurations:
        for j, s in enumerate(c.line.part_stresses):
            r += 1
            tol = "–" if s.largest_tolerable_swr is None else (
                "any SWR" if s.largest_tolerable_swr == float("inf") else f"{s.largest_tolerable_swr:.2f}")
            ref = notes.ref([s.tolerable_swr_note]) if s.tolerable_swr_note else ""
            src = sources.ref([s.rating_source]) if s.rating_source else ""
            status = (_coloured("EXCEEDED", False) if s.exceeded else
                      ("no rating" if s.rating is None else "within rating"))
            rows.append([c.id if j == 0 else "", s.part, f"{_quantity(s.quantity)} [{s.unit}]", num(s.stress),
                         f"{num(s.rating)} {src}".strip(),
                         "–" if s.headroom is None else f"{s.headroom:.2f}", f"{tol} {ref}".strip(), status])
            if j == 0 and r > 1:
                extra.append(("LINEABOVE", (0, r), (-1, r), 0.9, styles()["cell"].textColor))
    out.append(CondPageBreak(35 * mm))
    out.append(p("Parts against their ratings:", "small"))
    out.append(data_table(["configuration", "part", "quantity [unit]", "stress", "rating [source]", "headroom",
                           "largest tolerable SWR", "status"], rows,
                          [22 * mm, 33 * mm, 34 * mm, 14 * mm, 20 * mm, 15 * mm, 20 * mm, width - 158 * mm],
                          align="lllrrrrl", extra_style=extra, zebra=False))
    out.extend(notes.flowables())
    if sources.texts:
        out.append(p("Rating sources:", "lead"))
        out.extend(sources.flowables())
    for c in res.configurations:   # which part fails first, and what a balun sees (tuners helper; layout: worksheet)
        if c.line.first_failure:
            out.append(p(f"Fails first, {c.id}: {c.line.first_failure}.", "small"))
        b = c.line.balun
        if b is not None:
            out.append(p(f"Balun {b.label} at the {b.location}, {c.id}: {num(b.voltage_balanced_v_peak)} V peak and "
                         f"{num(b.current_balanced_a_peak)} A peak on its balanced side; equivalent power "
                         f"{num(b.equivalent_power_w)} W (by its {b.governing}); estimated heat "
                         f"{num(b.dissipation_avg_w)} W average. {b.rule}.", "small"))
    tuned = [c for c in res.configurations if c.line.tuner_parts]
    for c in tuned:
        out.append(section_heading("5.1", f"Tuner parts, {c.id}", level=1))
        rows = []
        for m in c.line.tuner_parts:
            value = f"{m.value_pf:.4g} pF" if m.value_pf is not None else (
                f"{m.value_uh:.4g} µH" if m.value_uh is not None else "–")
            rows.append([m.name, f"{m.kind}, {m.placement}", value, f"{m.reactance_ohm:.4g}", num(m.voltage_v_peak),
                         num(m.current_a_rms), num(m.loss_w),
                         "–" if m.rating is None else f"{num(m.rating)} {m.rating_unit}",
                         "–" if m.headroom is None else f"{m.headroom:.2f}",
                         _coloured("EXCEEDED", False) if m.exceeded else
                         ("no rating" if m.rating is None else "within rating")])
        out.append(data_table(["part", "kind, placement", "value", "X Ω", "V peak", "I A rms", "loss W", "rating",
                               "headroom", "status"], rows,
                              [12 * mm, 36 * mm, 18 * mm, 16 * mm, 15 * mm, 15 * mm, 14 * mm, 20 * mm, 15 * mm,
                               width - 161 * mm], align="lllrrrrrrl"))
        tuner = c.line.tuner
        if tuner is not None:
            net = tuner.network
            out.append(p(f"Network: {net.topology} ({net.form}) at the {tuner.position}; loss {net.loss_db:.2f} dB "
                         f"({num(net.loss_w)} W at PEP). {tuner.method}", "small"))
    out.append(p("Line method notes (one note for configurations that differ only in their numbers):", "lead"))
    notes = _Notes()
    who: dict[str, list[str]] = {}
    for c in res.configurations:
        ln = c.line
        text = f"{ln.load_assumption}; profile: {ln.profile_kind}."
        if ln.notes:
            text += " " + "; ".join(ln.notes) + "."
        who.setdefault(notes.ref([text]), []).append(c.id)
    for (ref, ids), text in zip(who.items(), notes.note_texts()):
        out.append(Paragraph(_esc(f"{', '.join(ids)}: {text}"), styles()["small"], bulletText="·"))
    return out


def _wire_loads_and_shields(res, width) -> list:
    """Lumped loads (traps, coils, chokes) and modelled feedline shields of wire antennas (minimal tables)."""
    loaded = [c for c in res.configurations if getattr(c, "loads", ())]
    shielded = [c for c in res.configurations if getattr(c, "feedline_shield", None) is not None]
    if not loaded and not shielded:
        return []
    out = [section_heading("5.2", "Lumped loads and feedline shields (wire antennas)", level=1)]
    if loaded:
        out.append(p("Current through, peak voltage across and power dissipated in each lumped load at the PEP "
                     "delivered to the antenna (moment method). Headroom = rating / voltage.", "lead"))
        rows = []
        for c in loaded:
            for j, ld in enumerate(c.loads):
                z = ld.impedance_ohm
                rows.append([c.id if j == 0 else "", ld.label, f"{z.real:.4g} {'+' if z.imag >= 0 else '−'} "
                             f"j{abs(z.imag):.4g}", num(ld.current_a_rms), num(ld.voltage_v_peak),
                             num(ld.dissipated_w), "–" if ld.voltage_rating_v_peak is None
                             else num(ld.voltage_rating_v_peak),
                             "–" if ld.voltage_headroom is None else f"{ld.voltage_headroom:.2f}",
                             "not rated" if ld.voltage_headroom is None else (
                                 _coloured("EXCEEDED", False) if ld.voltage_headroom < 1 else "within rating")])
        out.append(data_table(["configuration", "load", "Z Ω", "I A rms", "V peak", "loss W", "rating V peak",
                               "headroom", "status"], rows,
                              [22 * mm, 28 * mm, 30 * mm, 16 * mm, 16 * mm, 15 * mm, 20 * mm, 16 * mm,
                               width - 163 * mm], align="lllrrrrrl"))
    if shielded:
        out.append(p("Feedline shield modelled as a conductor along its declared route: common-mode current at "
                     "the PEP, and the smallest choke impedance that brings places within λ/2π of the route to "
                     "the limit (this configuration alone, worst body height).", "lead"))
        rows = []
        notes = _Notes("c")
        for c in shielded:
            sh = c.feedline_shield
            z = sh.choke_impedance_ohm
            choke = "none" if z is None else (f"{z.real:.4g} {'+' if z.imag >= 0 else '−'} j{abs(z.imag):.4g} Ω "
                                              f"at {sh.choke_distance_m:.2g} m")
            need = ("none" if sh.required_choke_ohm == 0 else "not reachable" if sh.required_choke_ohm is None
                    else f"|Z| ≥ {num(sh.required_choke_ohm)} Ω")
            rows.append([c.id, f"{sh.route_length_m:.3g} m, {sh.far_end}", choke,
                         f"{num(sh.max_current_a_rms)} at {sh.max_at_distance_m:.3g} m", num(sh.feed_current_a_rms),
                         "–" if sh.worst_ratio is None else f"{sh.worst_ratio:.3g}",
                         f"{need} {notes.ref([sh.required_choke_note])}".strip()])
        out.append(data_table(["configuration", "route, far end", "choke", "common-mode A rms", "feed A rms",
                               "ratio near route", "choke needed"], rows,
                              [22 * mm, 22 * mm, 34 * mm, 28 * mm, 16 * mm, 18 * mm, width - 140 * mm],
                              align="llllrrl"))
        out.extend(notes.flowables())
    return out


# ------------------------------------------------------------------ 6 figures
def _figures(res, width, numbers, extra_figures) -> list:
    out = [CondPageBreak(120 * mm), section_heading("6", "Figures")]
    fig_w = width / 2 - 2 * mm
    heights = {a.id: a.height_m for a in res.antennas}
    out.append(section_heading("6.1", "Exposure ratio versus distance", level=1))
    out.append(p("Lines: the far-field peak-gain envelope of each configuration, ratio = (d/R)² with d the "
                 "compliance distance of each environment from section 3.1 (the far-field prediction falls as "
                 "1/R²). Markers: the places of section 4 with their evaluated ratio (gain toward the place; "
                 "a place below its line is off the main beam). A marker on the frame edge lies off scale.",
                 "lead"))
    cells = []
    for c in res.configurations:
        drawing, caption = exposure_distance_figure(c, res.places, width=fig_w, height=54 * mm,
                                                    place_numbers=numbers, antenna_height_m=heights.get(c.antenna),
                                                    head_heights_m=_head_heights(res))
        cells.append([drawing, p(caption, "caption")])
    out.extend(figure_rows(cells, width))
    out.append(exposure_legend(width))
    out.append(section_heading("6.2", "Standing wave along each feedline", level=1))
    out.append(p("|V| and |I| at PEP along the line (0 = transmitter end), from the line results. Dashed: the "
                 "voltage rating of the cable (along the whole line) and of each connector (over the end it sits "
                 "at); tuner parts are rated in section 5.", "lead"))
    cells = []
    for c in res.configurations:
        drawing, caption = line_profile_figure(c, width=fig_w, height=56 * mm)
        cells.append([drawing, p(caption, "caption")] if caption else drawing)
    out.extend(figure_rows(cells, width))
    maps = near_field_map_section(res, width, numbers, "6.3")
    if maps:
        out.extend(maps)
    if extra_figures:
        out.append(section_heading("6.4" if maps else "6.3", "Further figures", level=1))
        out.extend(extra_figures)
    return out


# ------------------------------------------------------------------ 7 cautions, 8 sign-off
def _all_flags(res) -> list[str]:
    """Every flag once, with the configurations (or places) it applies to."""
    items = [(f"configuration {c.id}", f) for c in res.configurations for f in c.flags]
    items += [(f"place {pl.label}", f) for pl in res.places for f in pl.flags]
    return grouped_flags(items)


def worksheet_story(result, *, extra_figures=()) -> list:
    """The worksheet's flowables, in section order (a fresh list for every build).

    Parameters
    ----------
    result : EvaluationResult
        The evaluation to render.
    extra_figures : sequence of flowables
        Further figures placed after the standard figures (and the near-field maps of wire
        antennas, which are built in) in section 6; each flowable can be used in one build only.
    """
    width = frame_width()
    numbers = {pl.label: f"P{i + 1}" for i, pl in enumerate(result.places)}
    story = []
    story += _identity(result, width)
    story += _station(result, width, numbers)
    story += _method(result, width)
    story += _configurations(result, width)
    story += _places(result, width, numbers)
    from rfsafe.report.answers import answers_section

    story += answers_section(result, width)
    story += _line_stress(result, width)
    story += _wire_loads_and_shields(result, width)
    story += _figures(result, width, numbers, list(extra_figures))
    story.append(CondPageBreak(70 * mm))
    story.append(section_heading("7", "Cautions"))
    story += cautions_block(result.cautions, _all_flags(result))
    story.append(Spacer(1, 4 * mm))
    story.append(KeepTogether([section_heading("8", "Sign-off"),
                               p("Signed to confirm that the station file describes the station as operated "
                                 "and that the results, flags and cautions above were read.", "small"),
                               Spacer(1, 2 * mm),
                               signoff_block(width, evaluator=result.evaluator or "", date="")]))
    return story


def build_worksheet_pdf(result, *, extra_figures=()) -> bytes:
    """The worksheet of ``result`` as PDF bytes; the same result gives the same bytes.

    Parameters
    ----------
    result : EvaluationResult
        The evaluation to render (from :func:`rfsafe.assess.assess`).
    extra_figures : sequence of flowables
        Further figures appended to section 6, after the built-in ones.
    """
    with quick_reportlab():
        story = worksheet_story(result, extra_figures=extra_figures)
    who = result.station or result.title or "station"
    return build_pdf(
        story, title=result.title or "RF exposure evaluation worksheet", author=result.evaluator or "",
        subject=f"RF exposure evaluation of {who} under {result.standard_name}: {result.verdict}",
        keywords=("RF exposure", result.standard, result.verdict), date_iso=result.evaluation_date,
        header_left=f"{who} · RF exposure worksheet · {result.evaluation_date}",
        header_right=f"{result.standard} · {result.verdict}",
        footer_left=f"{result.input_file} · SHA-256 {result.input_sha256[:16]}… · rfsafe {result.rfsafe_version}")


def write_worksheet(result, path, *, force: bool = False, extra_figures=(), inputs=()) -> Path:
    """Write the worksheet of ``result`` to ``path`` (temporary file, then rename).

    Raises :class:`~rfsafe.errors.InputError` (field ``-o``) if the file exists and ``force`` is
    false, if its folder does not exist or if it is one of ``inputs``. The PDF is built completely in
    memory before anything is written, so a failure leaves no file behind.
    """
    from rfsafe.fileio import OutputSet

    path = Path(path)
    with OutputSet([("-o", path)], inputs=inputs, force=force) as out:
        out.write_bytes("-o", build_worksheet_pdf(result, extra_figures=extra_figures))
    return path
