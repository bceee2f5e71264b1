"""The one formatter module: JSON documents and plain-text tables.

JSON field names are the Python result field names. Complex numbers become
``{"re": .., "im": ..}``; numpy arrays become lists; non-finite floats become
``null`` (never a plausible number).
"""

from __future__ import annotations

import dataclasses
import enum
import json
import math
import sys
from collections.abc import Mapping, Sequence
from typing import Any

__all__ = ["to_jsonable", "dump_json", "print_json", "format_table", "compact_number", "warn"]


def to_jsonable(obj: Any) -> Any:
    """Convert result objects (dataclasses, numpy, complex) to JSON types."""
    if dataclasses.is_dataclass(obj) and not isinstance(obj, type):
        return {f.name: to_jsonable(getattr(obj, f.name)) for f in dataclasses.fields(obj)
                if f.repr}
    if isinstance(obj, enum.Enum):
        return obj.value
    if isinstance(obj, bool) or obj is None or isinstance(obj, (str, int)):
        return obj
    if isinstance(obj, float):
        return obj if math.isfinite(obj) else None
    if isinstance(obj, complex):
        return {"re": to_jsonable(obj.real), "im": to_jsonable(obj.imag)}
    if hasattr(obj, "tolist") and hasattr(obj, "dtype"):  # numpy array or scalar
        return to_jsonable(obj.tolist())
    if isinstance(obj, Mapping):
        return {str(k): to_jsonable(v) for k, v in obj.items()}
    if isinstance(obj, (Sequence, set, frozenset)):
        return [to_jsonable(v) for v in obj]
    if hasattr(obj, "isoformat"):
        return obj.isoformat()
    raise TypeError(f"cannot convert {type(obj).__name__} to JSON")


def dump_json(obj: Any) -> str:
    """JSON text of a result object, sorted as declared, 2-space indent."""
    return json.dumps(to_jsonable(obj), indent=2, ensure_ascii=False, allow_nan=False)


def print_json(obj: Any) -> None:
    """Print a result object as JSON on stdout."""
    sys.stdout.write(dump_json(obj) + "\n")


def format_table(headers: Sequence[str], rows: Sequence[Sequence[Any]], *,
                 title: str | None = None, align: str | None = None) -> str:
    """Plain-text table with a title line and a rule under the header.

    ``align`` is a string of ``l``/``r`` per column (default: first column
    left, the rest right).
    """
    cells = [[str(h) for h in headers]] + [["" if c is None else str(c) for c in r] for r in rows]
    n = len(headers)
    if align is None:
        align = "l" + "r" * (n - 1)
    widths = [max(len(row[i]) for row in cells) for i in range(n)]

    def fmt(row):
        parts = [c.ljust(w) if a == "l" else c.rjust(w) for c, w, a in zip(row, widths, align)]
        return "  ".join(parts).rstrip()

    lines = []
    if title:
        lines.append(title)
    lines.append(fmt(cells[0]))
    lines.append("  ".join("-" * w for w in widths))
    lines.extend(fmt(r) for r in cells[1:])
    return "\n".join(lines)


def compact_number(x, digits: int = 3) -> str:
    """A number for tables: ``digits`` significant figures, exponent only below 1e-3 or from 1e6.

    ``None`` prints as ``-``; non-finite values print as themselves (``inf``, ``nan``), never as a number.
    """
    if x is None:
        return "-"
    x = float(x)
    if not math.isfinite(x):
        return str(x)
    ax = abs(x)
    if ax != 0 and (ax < 1e-3 or ax >= 1e6):
        return f"{x:.{digits - 1}e}"
    return f"{x:.{digits}g}" if ax < 1000 else f"{x:.0f}"


def warn(message: str) -> None:
    """A caution or method-limit message on stderr (table mode)."""
    sys.stderr.write(message + "\n")
