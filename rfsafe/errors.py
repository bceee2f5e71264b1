"""The one error type for bad user input.

Library code raises :class:`InputError` with a message that names the field
path, the offending value and what is accepted. The command-line layer prints
it as a single ``Error: ...`` line and exits with status 2; any other
exception is a bug.
"""

from __future__ import annotations

import json
import math

__all__ = ["InputError", "bad_value", "format_value"]


class InputError(ValueError):
    """Invalid user input: a file, an option or a value out of range.

    ``str(err)`` is the complete one-line message, without the ``Error:``
    prefix the CLI adds.
    """


#: Longest rendering of a user value in a message [characters]; longer ones are cut with "...".
MAX_SHOWN_CHARS = 120


def format_value(value: object) -> str:
    """Render a user value the way it appears in TOML/JSON (strings quoted), at most
    :data:`MAX_SHOWN_CHARS` characters (a long value is cut and ends in "...")."""
    if isinstance(value, float) and not math.isfinite(value):
        return str(value)
    if isinstance(value, complex):
        return f"{value.real:g}{value.imag:+g}j"
    try:
        text = json.dumps(value, ensure_ascii=False, default=str)
    except (TypeError, ValueError, RecursionError):
        text = repr(value) if not isinstance(value, (list, dict)) else f"<{type(value).__name__}>"
    # Line and paragraph separators and other control characters are shown escaped, so that an error
    # stays one line whatever the user typed (json.dumps keeps U+0085, U+2028 and U+2029 raw).
    text = "".join(ch if ch.isprintable() or ch == " " else ch.encode("unicode_escape").decode("ascii")
                   for ch in text)
    if len(text) > MAX_SHOWN_CHARS:
        text = text[:MAX_SHOWN_CHARS - 3] + "..."
    return text


def bad_value(field: str, value: object, accepted: str) -> InputError:
    """Build the standard message ``<field>: <value> <accepted>``.

    Parameters
    ----------
    field : str
        Dotted path of the field, e.g. ``configurations[2].antenna``.
    value : object
        The value as given by the user.
    accepted : str
        What is wrong and what is accepted, e.g.
        ``is not a declared antenna (declared: "dipole-80", "beam")``.

    Examples
    --------
    >>> str(bad_value("transmitters[0].pep_w", -5, "must be > 0 W"))
    'transmitters[0].pep_w: -5 must be > 0 W'
    """
    return InputError(f"{field}: {format_value(value)} {accepted}")
