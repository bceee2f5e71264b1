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

__all__ = ["to_jsonable", "dump_json", "print_json", "format_table", "compact_number", "warn", "fit_text",
           "set_wide", "is_narrow", "TERMINAL_COLUMNS"]

#: Width tables and text are fitted to unless ``--wide`` is given [columns].
TERMINAL_COLUMNS = 100
_width: int | None = TERMINAL_COLUMNS


def set_wide(wide: bool) -> None:
    """``--wide``: print tables and text at their full width instead of fitting them to 100 columns."""
    global _width
    _width = None if wide else TERMINAL_COLUMNS


def is_narrow() -> bool:
    """True when output is fitted to :data:`TERMINAL_COLUMNS` (no ``--wide``): renderers may leave out detail."""
    return _width is not None


def fit_text(text: str, width: int | None = None) -> str:
    """Wrap every line longer than the width, keeping its indent (and a list marker's hanging indent)."""
    import re
    import textwrap

    width = width if width is not None else _width
    if width is None or not re.search(f"[^\n]{{{width + 1}}}", text):    # no line to wrap: the text as it is
        return text
    out = []
    for line in text.split("\n"):
        if len(line) <= width:
            out.append(line)
            continue
        m = re.match(r"^(\s*(?:- |V\d+\. |caution: |note: )?)", line)
        lead = m.group(1) if m else ""
        out.append(textwrap.fill(line, width=width, initial_indent="", subsequent_indent=" " * len(lead),
                                 break_long_words=False, break_on_hyphens=False))
    return "\n".join(out)


#: Note given beside an infinity whose result type declares no reason (a defect the fuzz tests catch).
NO_REASON = "no reason recorded"


def _nonfinite_note(obj: Any, name: str, value: float, reason: str | None = None) -> str:
    """Why field ``name`` of result ``obj`` has no finite value.

    A result dataclass may declare ``NONFINITE_NOTES = {"field": "why it is infinite"}`` (for a field
    holding a mapping, the reason applies to each of its entries); a NaN is never meaningful and says so.
    """
    if math.isnan(value):
        return "nan: could not be computed (a defect in rfsafe; please report it with the input)"
    reason = reason or (getattr(type(obj), "NONFINITE_NOTES", None) or {}).get(name)
    sign = "inf" if value > 0 else "-inf"
    return f"{sign}: {reason}" if reason else f"{sign}: no finite value ({NO_REASON}; please report it with the input)"


#: Exact types returned as they are by :func:`to_jsonable` (a subclass, e.g. an enum, takes the general path).
_PLAIN = frozenset((str, int, bool, type(None)))
#: Per dataclass type: the names of its fields with ``repr`` (what its JSON object holds), found once per type.
_DATACLASS_NAMES: dict[type, tuple[str, ...]] = {}


def _json_field_names(cls: type) -> tuple[str, ...]:
    names = _DATACLASS_NAMES.get(cls)
    if names is None:
        names = _DATACLASS_NAMES[cls] = tuple(f.name for f in dataclasses.fields(cls) if f.repr)
    return names


def to_jsonable(obj: Any, _reason: str | None = None) -> Any:
    """Convert result objects (dataclasses, numpy, complex) to JSON types.

    A non-finite number in a field of a result becomes ``null`` with a ``<field>_note`` beside it
    that says why it has no value (never a silent ``null``, never a plausible number).
    """
    t = type(obj)
    if t is float:
        return obj if math.isfinite(obj) else None
    if t in _PLAIN:
        return obj
    if t is list or t is tuple:
        return [to_jsonable(v) for v in obj]
    if dataclasses.is_dataclass(obj) and not isinstance(obj, type):
        out: dict[str, Any] = {}
        notes = getattr(t, "NONFINITE_NOTES", None) or {}
        for name in _json_field_names(t):
            value = getattr(obj, name)
            if type(value) is str or value is None:
                out[name] = value
                continue
            out[name] = to_jsonable(value, notes.get(name))
            if (isinstance(value, (float, int)) or (hasattr(value, "dtype") and getattr(value, "ndim", 1) == 0)) \
                    and not isinstance(value, bool) and not math.isfinite(float(value)):
                note = f"{name}_note"
                if getattr(obj, note, None) is None:
                    out[note] = _nonfinite_note(obj, name, float(value))
        return out
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
        out = {}
        for k, v in obj.items():
            out[str(k)] = to_jsonable(v, _reason)
            if isinstance(v, float) and not math.isfinite(v) and f"{k}_note" not in obj:
                out[f"{k}_note"] = _nonfinite_note(obj, str(k), v, _reason)
        return out
    if isinstance(obj, (Sequence, set, frozenset)):
        return [to_jsonable(v) for v in obj]
    if hasattr(obj, "isoformat"):
        return obj.isoformat()
    raise TypeError(f"cannot convert {type(obj).__name__} to JSON")


def dump_json(obj: Any) -> str:
    """JSON text of a result object, sorted as declared, 2-space indent."""
    return json.dumps(to_jsonable(obj), indent=2, ensure_ascii=False, allow_nan=False)


#: Above this many JSON values (objects, arrays and scalars) ``print_json`` writes compact JSON (no
#: indentation, no spaces after separators): a 10,000-place x 50-configuration evaluation is a few
#: million values, and its indentation alone was more than half of 492 MB.
COMPACT_JSON_VALUES = 200_000


def _count_values(obj: Any, limit: int) -> int:
    """Values (objects, arrays, scalars) of the JSON form of ``obj``, counted without building it; the
    count stops once it passes ``limit`` (the ``<field>_note`` beside a non-finite number is not counted)."""
    stack, n = [obj], 0
    while stack and n <= limit:
        node = stack.pop()
        n += 1
        t = type(node)
        if t in _JSON_SCALARS:
            continue
        if t is list or t is tuple:
            stack.extend(node)
        elif dataclasses.is_dataclass(node) and not isinstance(node, type):
            stack.extend(getattr(node, name) for name in _json_field_names(type(node)))
        elif isinstance(node, Mapping):
            stack.extend(node.values())
        elif hasattr(node, "tolist") and hasattr(node, "dtype"):
            n += int(getattr(node, "size", 1))
        elif isinstance(node, complex):
            n += 2
        elif isinstance(node, (list, tuple, set, frozenset)):
            stack.extend(node)
    return n


def _iter_compact(obj: Any, encode, _reason: str | None = None):
    """Compact JSON text of ``obj`` in pieces, the same text as ``encode(to_jsonable(obj))``: dataclasses and
    lists are walked one member at a time, so only one member's JSON form is held at once."""
    if dataclasses.is_dataclass(obj) and not isinstance(obj, type):
        notes = getattr(type(obj), "NONFINITE_NOTES", None) or {}
        yield "{"
        first = True
        for f in dataclasses.fields(obj):
            if not f.repr:
                continue
            value = getattr(obj, f.name)
            yield ("" if first else ",") + encode(f.name) + ":"
            first = False
            yield from _iter_compact(value, encode, notes.get(f.name))
            if (isinstance(value, (float, int)) or (hasattr(value, "dtype") and getattr(value, "ndim", 1) == 0)) \
                    and not isinstance(value, bool) and not math.isfinite(float(value)):
                note = f"{f.name}_note"
                if getattr(obj, note, None) is None:
                    yield "," + encode(note) + ":" + encode(_nonfinite_note(obj, f.name, float(value)))
        yield "}"
    elif isinstance(obj, (list, tuple)) and len(obj) > 1 and not isinstance(obj, str):
        yield "["
        for i, v in enumerate(obj):
            if i:
                yield ","
            yield from _iter_compact(v, encode)
        yield "]"
    else:
        yield encode(to_jsonable(obj, _reason))


#: Exact types json writes as one scalar (a container holding only these is written by json's C encoder).
_JSON_SCALARS = frozenset((str, int, float, bool, type(None)))


class _NotPlainJSON(Exception):
    """A value :func:`_indented_json` leaves to json's own encoder (a subclass, a key that is not a string)."""


def _indented_json(tree: Any) -> str:
    """``json.dumps(tree, indent=2, ensure_ascii=False, allow_nan=False)``, the same text, about twice as fast.

    json writes indented text with its Python encoder. Here a non-empty list or dict of scalars only (the
    bulk of a result: line profiles, per-environment values) is written by json's C encoder with the
    line break and indentation as its item separator; everything else as the Python encoder writes it.
    Raises :class:`_NotPlainJSON` for anything but plain dicts with string keys, lists, tuples and exact
    scalars (the caller then uses json itself), and ValueError where json would (a non-finite number).
    """
    pieces: list[str] = []
    add = pieces.append
    encode_str = json.encoder.encode_basestring
    leaf_encoders: dict[int, Any] = {}

    def scalar(v) -> str:
        if isinstance(v, str):
            return encode_str(v)
        if v is None:
            return "null"
        if v is True:
            return "true"
        if v is False:
            return "false"
        if isinstance(v, int):
            return int.__repr__(v)
        if isinstance(v, float):
            if not math.isfinite(v):
                raise ValueError("Out of range float values are not JSON compliant")
            return float.__repr__(v)
        raise _NotPlainJSON(type(v).__name__)

    def leaf(obj, level: int) -> None:
        enc = leaf_encoders.get(level)
        if enc is None:
            enc = leaf_encoders[level] = json.JSONEncoder(
                ensure_ascii=False, allow_nan=False, separators=(",\n" + "  " * (level + 1), ": ")).encode
        text = enc(obj)
        add(text[0] + "\n" + "  " * (level + 1) + text[1:-1] + "\n" + "  " * level + text[-1])

    def value(obj, level: int) -> None:
        t = type(obj)
        if t is list or t is tuple:
            if not obj:
                add("[]")
            elif all(type(v) in _JSON_SCALARS for v in obj):
                leaf(obj, level)
            else:
                inner = "\n" + "  " * (level + 1)
                sep = "[" + inner
                for v in obj:
                    add(sep)
                    sep = "," + inner
                    value(v, level + 1)
                add("\n" + "  " * level + "]")
        elif t is dict:
            if not obj:
                add("{}")
                return
            if not all(type(k) is str for k in obj):
                raise _NotPlainJSON("key")
            if all(type(v) in _JSON_SCALARS for v in obj.values()):
                leaf(obj, level)
            else:
                inner = "\n" + "  " * (level + 1)
                sep = "{" + inner
                for k, v in obj.items():
                    add(sep + encode_str(k) + ": ")
                    sep = "," + inner
                    value(v, level + 1)
                add("\n" + "  " * level + "}")
        elif t in _JSON_SCALARS:
            add(scalar(obj))
        else:
            raise _NotPlainJSON(t.__name__)

    value(tree, 0)
    return "".join(pieces)


def print_json(obj: Any) -> None:
    """Print a result object as JSON on stdout, streamed in pieces (the whole text is never held).

    2-space indentation as :func:`dump_json`; a result of more than :data:`COMPACT_JSON_VALUES`
    values is written compact (same content, no whitespace), and its JSON form is built one member
    at a time (a 10,000-place x 50-configuration evaluation never holds its whole JSON tree).
    """
    write = sys.stdout.write
    buf: list[str] = []
    size = 0
    if _count_values(obj, COMPACT_JSON_VALUES) > COMPACT_JSON_VALUES:
        encoder = json.JSONEncoder(ensure_ascii=False, allow_nan=False, separators=(",", ":"))
        pieces = _iter_compact(obj, encoder.encode)
    else:
        tree = to_jsonable(obj)
        try:
            pieces = [_indented_json(tree)]
        except _NotPlainJSON:
            pieces = json.JSONEncoder(indent=2, ensure_ascii=False, allow_nan=False).iterencode(tree)
    for chunk in pieces:
        buf.append(chunk)
        size += len(chunk)
        if size > 1 << 16:
            write("".join(buf))
            buf, size = [], 0
    buf.append("\n")
    write("".join(buf))


def _wrap_cell(text: str, width: int) -> list[str]:
    import textwrap

    if len(text) <= width:
        return [text]
    return textwrap.wrap(text, width=width, break_long_words=True, break_on_hyphens=False) or [""]


def format_table(headers: Sequence[str], rows: Sequence[Sequence[Any]], *,
                 title: str | None = None, align: str | None = None, width: int | None = None,
                 keys: int = 1) -> str:
    """Plain-text table with a title line and a rule under the header, fitted to the terminal width.

    ``align`` is a string of ``l``/``r`` per column (default: first column left, the rest right).
    A table wider than ``width`` (default: 100 columns unless ``--wide``) is fitted in three steps,
    dropping nothing: headers wrap onto several lines (at spaces); then long text cells wrap inside
    their column; then the columns are split into several blocks printed one under the other, each
    repeating the first ``keys`` columns so that every row stays identifiable.
    """
    heads = [str(h) for h in headers]
    body = [["" if c is None else str(c) for c in r] for r in rows]
    n = len(heads)
    if align is None:
        align = "l" + "r" * (n - 1)
    limit = width if width is not None else _width
    head_w = [max(len(w) for w in h.split(" ")) if h else 0 for h in heads]
    cell_w = [max([len(r[i]) for r in body] + [0]) for i in range(n)]
    widths = [max(len(h), c) for h, c in zip(heads, cell_w)]

    def total(ws):
        return sum(ws) + 2 * (len(ws) - 1)

    wrap_heads = False
    if limit is not None and total(widths) > limit:
        wrap_heads = True
        # wrap the headers that are wider than their cells, largest saving first, only as far as needed
        for i in sorted(range(n), key=lambda k: -(widths[k] - max(head_w[k], cell_w[k]))):
            if total(widths) <= limit:
                break
            widths[i] = max(head_w[i], cell_w[i], widths[i] - (total(widths) - limit))
        # long text cells wrap, widest first, down to 24 columns (or the longest header word)
        while total(widths) > limit:
            cand = [i for i in range(keys, n) if align[i] == "l" and widths[i] > max(24, head_w[i])]
            if not cand:
                break
            i = max(cand, key=lambda k: widths[k])
            widths[i] = max(24, head_w[i], widths[i] - (total(widths) - limit))
    if limit is not None and total(widths) > limit and n > keys:
        blocks, cur = [], []
        base = total(widths[:keys]) + 2
        for i in range(keys, n):
            if cur and base + total([widths[k] for k in cur + [i]]) > limit:
                blocks.append(cur)
                cur = []
            cur.append(i)
        blocks.append(cur)
        if len(blocks) > 1:
            parts = []
            for b, cols in enumerate(blocks):
                idx = list(range(keys)) + cols
                sub_title = title if b == 0 else f"  (continued, {b + 1} of {len(blocks)})"
                if b == 0 and title:
                    sub_title = f"{title}  (1 of {len(blocks)})"
                parts.append(format_table([heads[k] for k in idx], [[r[k] for k in idx] for r in body],
                                          title=sub_title, align="".join(align[k] for k in idx), width=limit,
                                          keys=keys))
            return "\n".join(parts)

    def head_lines(h, w):
        if not wrap_heads or len(h) <= w:
            return [h]
        return _wrap_cell(h, w)

    def fmt(cells):
        split = [_wrap_cell(c, w) for c, w in zip(cells, widths)]
        height = max(len(s) for s in split)
        out = []
        for k in range(height):
            parts = [(s[k] if k < len(s) else "") for s in split]
            parts = [c.ljust(w) if a == "l" else c.rjust(w) for c, w, a in zip(parts, widths, align)]
            out.append("  ".join(parts).rstrip())
        return out

    lines = []
    if title:
        lines.append(fit_text(title, limit))
    hl = [head_lines(h, w) for h, w in zip(heads, widths)]
    hh = max(len(x) for x in hl)
    for k in range(hh):   # bottom-aligned header lines
        parts = [(x[k - (hh - len(x))] if k >= hh - len(x) else "") for x in hl]
        parts = [c.ljust(w) if a == "l" else c.rjust(w) for c, w, a in zip(parts, widths, align)]
        lines.append("  ".join(parts).rstrip())
    lines.append("  ".join("-" * w for w in widths))
    for r in body:
        lines.extend(fmt(r))
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
    """A caution or method-limit message on stderr (table mode), wrapped to the terminal width."""
    sys.stderr.write(fit_text(message) + "\n")
