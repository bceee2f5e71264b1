"""Plain-text sentences of a site review shared by the terminal (``rfsafe site``) and the site PDF.

Rendering only, from a :class:`rfsafe.site.SiteResult`; no reportlab import, so the terminal
output does not load the PDF machinery.
"""

from __future__ import annotations

import math

__all__ = ["station_zone_lines", "exemption_lines"]


def _m(x: float) -> str:
    return f"{x:.2f}" if x < 10 else f"{x:.1f}"


def station_zone_lines(res) -> list[tuple[str, str, str]]:
    """One (station, state, sentence) per transmitter: its keep-out zones and the violations it causes.

    ``state`` is ``"violation"`` (it dominates a violation), ``"zone"`` (a keep-out zone, but no
    area where people are allowed lies inside it) or ``"none"`` (no keep-out zone).
    """
    out = []
    for t in res.transmitters:
        mine = [f"V{i + 1}" for i, v in enumerate(res.violations) if v.dominant_transmitter == t.transmitter]
        unc, ctl = t.keep_out_m.get("uncontrolled", 0.0), t.keep_out_m.get("controlled", 0.0)
        if not unc and not ctl:
            out.append((t.transmitter, "none", f"{t.transmitter}: no keep-out zone on the ground."))
            continue
        zones = []
        if unc:
            zones.append(f"public kept out to {_m(unc)} m")
        if ctl:
            zones.append(f"everybody kept out to {_m(ctl)} m")
        where = f"antenna at ({t.x_m:g}, {t.y_m:g}) m"
        rope = (f"rope at {t.rope_off_radius_m:g} m or more" if t.rope_off_radius_m
                else "rope around the controlled zone")
        if mine:
            out.append((t.transmitter, "violation",
                        f"{t.transmitter}: KEEP-OUT ZONE and VIOLATION {', '.join(mine)}: {'; '.join(zones)} from the "
                        f"{where}; {rope}."))
        else:
            out.append((t.transmitter, "zone",
                        f"{t.transmitter}: KEEP-OUT ZONE, no violation (no public or operators' area reaches into "
                        f"it): {'; '.join(zones)} from the {where}; {rope} before transmitting."))
    return out


def exemption_lines(ex) -> list[str]:
    """The 47 CFR 1.1307(b)(3) result of a site in sentences (empty when the site is not FCC)."""
    if ex is None:
        return []
    status = "EXEMPT from routine evaluation" if ex.exempt else "NOT EXEMPT: a routine evaluation is required"
    total = ex.sum_of_fractions
    total_text = (f"sum of fractions {total:.3g} (exempt needs at most 1)"
                  if total is not None and math.isfinite(float(total))
                  else "sum of fractions not defined: a source has no applicable criterion")
    lines = [f"47 CFR 1.1307(b)(3): {status}; {ex.criterion}; {total_text}."]
    for s in ex.per_source:
        frac = (f"fraction {s.fraction:.3g}" if s.fraction is not None and math.isfinite(float(s.fraction))
                else "no criterion applies")
        lines.append(f"{s.label}: {s.criterion}, {frac}")
    return lines
