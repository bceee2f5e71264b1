"""Verification states of published figures: was a value read in its published text or not?

Every data row rfsafe ships (limit rows, duty factors, cable and connector figures) carries a
``verification`` text in one of four forms, and that text travels with the value into every output:

``read in <document, table, page>``
    the value was read in the published text itself;
``read in a reproduction of <document>: <which>``
    the value was read in a faithful reproduction (a regulation that prints the table, a
    reproduction of a bulletin), named after the colon;
``partly read in a reproduction of <document>: <which>``
    some of the row's values were read (named), the others were not;
``not confirmed``
    the value could not be checked against a published text ("from memory" or common practice).

The list of values checked against their texts is kept outside the package, with the sources named;
a value not in it stays ``not confirmed``. This module only classifies the texts; it imports nothing
heavy (the CLI uses it for its markers and legend).
"""

from __future__ import annotations

from collections.abc import Iterable

__all__ = ["STATES", "MARKERS", "LEGEND", "NOT_CONFIRMED", "state_of", "marker", "weakest", "summary_line",
           "figure_checks", "count_line"]

#: Machine-readable states, strongest first.
STATES = ("published text", "reproduction", "partly", "not confirmed")
#: Short terminal markers, one per state.
MARKERS = {"published text": "T", "reproduction": "R", "partly": "P", "not confirmed": "?"}
#: The legend printed under any table that shows a marker.
LEGEND = ("check: T = read in the published text; R = read in a faithful reproduction of it; "
          "P = partly read (some values of the row not confirmed); ? = not confirmed (from memory "
          "or common practice)")
#: The verification text of a value nobody could check.
NOT_CONFIRMED = "not confirmed"


def state_of(text: str | None) -> str:
    """The state of one verification text (one of :data:`STATES`).

    Anything that is not one of the three "read" forms is ``"not confirmed"``, so that a missing or
    mistyped text can never read as checked.

    Examples
    --------
    >>> state_of("read in 47 CFR 1.1310(e)(1), Table 1 (eCFR text)")
    'published text'
    >>> state_of("read in a reproduction of OET Bulletin 65 Supplement B: Table 2")
    'reproduction'
    >>> state_of("user input")
    'not confirmed'
    """
    t = (text or "").strip()
    if t.startswith("read in a reproduction of "):
        return "reproduction"
    if t.startswith("partly read in "):
        return "partly"
    if t.startswith("read in "):
        return "published text"
    return "not confirmed"


def marker(text: str | None) -> str:
    """Short terminal marker of a verification text (see :data:`LEGEND`)."""
    return MARKERS[state_of(text)]


def weakest(texts: Iterable[str | None]) -> str:
    """The weakest state among several verification texts (``"not confirmed"`` for none)."""
    states = [state_of(t) for t in texts]
    if not states:
        return "not confirmed"
    return max(states, key=STATES.index)


def summary_line(state: str) -> str:
    """Plain words for a state, for reports."""
    return {"published text": "checked against the published text",
            "reproduction": "checked against a faithful reproduction of the published text",
            "partly": "partly checked (some values of the row not confirmed)",
            "not confirmed": "not confirmed against a published text (from memory or common practice)"}[state]


def figure_checks(configurations, places=(), exemption=None) -> tuple:
    """Every published figure an evaluation used, with its verification state, one entry per figure.

    Parameters
    ----------
    configurations : sequence of rfsafe.results.ConfigurationResult
        The evaluated configurations (duty factor, limits of the compliance distances, cable and
        connector ratings of the line).
    places : sequence of rfsafe.results.PlaceResult
        The evaluated places (the limit that governed each exposure).
    exemption : rfsafe.limits.exemption.ExemptionResult or None
        The 47 CFR 1.1307(b)(3) result, whose thresholds are figures too.

    Returns
    -------
    tuple of rfsafe.results.FigureCheck
        In a stable order: limits, duty factors, cables, connectors, exemption thresholds; each with
        the configurations (or places) that used it.
    """
    from rfsafe.results import FigureCheck

    found: dict[tuple[str, str], dict] = {}

    def add(kind, figure, user, source, verification):
        entry = found.setdefault((kind, figure), {"used_by": [], "source": source, "verification": verification})
        if user not in entry["used_by"]:
            entry["used_by"].append(user)

    for c in configurations:
        for cd in tuple(c.compliance_distances) + tuple(getattr(c, "limit_distances", ()) or ()):
            add("limit", cd.limit_source, c.id, cd.limit_source, cd.limit_verification)
        add("duty factor", f"{c.mode}: {c.duty_factor:g}", c.id, c.duty_factor_source, c.duty_factor_verification)
        line = c.line
        if line is not None:
            line_part = next((p for p in line.part_stresses if p.part == "line"), None)
            add("cable", line.cable_id, c.id, line_part.rating_source if line_part else "", line.cable_verification)
            for p in line.part_stresses:
                if p.part.startswith("connector.") and p.rating is not None:
                    series = getattr(line, "connector_at_" + p.part.split(".", 1)[1], None) or "connector"
                    add("connector", f"{series}: {p.rating:g} {p.unit}", c.id, p.rating_source, p.rating_verification)
    for pl in places:
        for x in pl.exposures:
            if x.limit_source:
                add("limit", x.limit_source, f"place {pl.label}", x.limit_source, x.limit_verification)
    if exemption is not None:
        for s in exemption.per_source:
            if s.threshold_w is not None:
                add("exemption threshold", f"{s.criterion} ({s.reference})", s.label, s.reference,
                    s.threshold_verification)
    order = ("limit", "duty factor", "cable", "connector", "exemption threshold")
    keys = sorted(found, key=lambda k: order.index(k[0]))
    return tuple(FigureCheck(kind=k, figure=f, used_by=tuple(found[(k, f)]["used_by"]),
                             source=found[(k, f)]["source"], verification=found[(k, f)]["verification"],
                             state=state_of(found[(k, f)]["verification"]))
                 for k, f in keys)


def count_line(checks) -> str:
    """One line for terminals: how many of the published figures used were read, and where."""
    counts = {s: sum(1 for f in checks if f.state == s) for s in STATES}
    return (f"published figures used: {counts['published text']} read in the text, {counts['reproduction']} in a "
            f"reproduction, {counts['partly']} partly, {counts['not confirmed']} not confirmed "
            "(--json: data_verification)")
