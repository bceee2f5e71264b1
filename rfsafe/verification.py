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

__all__ = ["STATES", "MARKERS", "LEGEND", "NOT_CONFIRMED", "state_of", "marker", "weakest", "summary_line"]

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
