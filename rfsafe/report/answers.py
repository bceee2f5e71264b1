"""Worksheet section 4.3-4.4: ground-level keep-out distances and remedies (minimal; layout by the worksheet).

Renders what :func:`rfsafe.remedies.with_answers` added to an evaluation; computes nothing.
"""

from __future__ import annotations

from reportlab.lib.units import mm
from reportlab.platypus import Paragraph

from rfsafe.report.common import data_table, escape, num, p, section_heading, styles

__all__ = ["answers_section", "site_answers_section"]


def _esc(text: str) -> str:
    return escape(text)


def answers_section(res, width: float) -> list:
    """Flowables for the keep-out table and the remedies (empty when the result carries neither)."""
    out: list = []
    if res.ground_keep_out:
        out.append(section_heading("4.3", "Keep-out on the ground (each configuration alone)", level=1))
        out.append(p("Horizontal distance from the antenna's foot within which a person at the stated heights would "
                     "be above the limit, evaluated like a declared place (same gain, far-field estimate or "
                     "moment-method near field) along the stated number of bearings; 0 means nobody at that level "
                     "is above the limit. The 3-D compliance distance is shown for comparison.", "small"))
        rows = [[k.configuration, k.environment, k.level, num(k.keep_out_m), num(k.compliance_dist_m),
                 str(k.directions)] for k in res.ground_keep_out]
        out.append(data_table(["configuration", "environment", "level", "keep-out m", "3-D distance m", "bearings"],
                              rows, [30 * mm, 28 * mm, 58 * mm, 22 * mm, 26 * mm, width - 164 * mm],
                              align="lllrrr"))
    if res.place_remedies or res.configuration_remedies:
        out.append(section_heading("4.4", "What would make it comply", level=1))
        out.append(p("Each line changes one thing, everything else as in the station file, and was solved by "
                     "re-running this evaluation; fed back into the file it brings the total exposure ratio to 1 "
                     "(within 0.2 %, on the compliant side).", "small"))
        for pr in res.place_remedies:
            out.append(p(f"{_esc(pr.place)} ({pr.environment}, total ratio {num(pr.total_ratio)}):", "lead"))
            for r in pr.remedies:
                out.append(Paragraph(_esc(r.text), styles()["small"], bulletText="·"))
        if res.configuration_remedies:
            out.append(p("Per configuration, with every place within its limit:", "lead"))
            for cr in res.configuration_remedies:
                for r in cr.remedies:
                    if r.status in ("solved", "already complies") and r.parameter in ("pep_w", "avg_power_w",
                                                                                       "schedule_on_minutes"):
                        out.append(Paragraph(_esc(f"{cr.configuration}: {r.text}"), styles()["small"],
                                             bulletText="·"))
    return out


def site_answers_section(res) -> list:
    """The site review's remedies: per violation and station, the power cut or the move that clears it."""
    if not getattr(res, "remedies", ()):
        return []
    out = [p("What would clear each violation (one station changed at a time, the others as they are; solved with "
             "the review's own grid evaluation):", "lead")]
    for r in res.remedies:
        out.append(Paragraph(_esc(r.text), styles()["small"], bulletText="·"))
    return out
