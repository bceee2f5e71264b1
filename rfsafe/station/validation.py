"""Turn pydantic validation errors into rfsafe's one-line input errors."""

from __future__ import annotations

import inspect
import tomllib
from pathlib import Path
from typing import Any

from pydantic import BaseModel, ConfigDict, ValidationError, ValidationInfo, field_validator

from rfsafe.errors import InputError, bad_value, format_value

__all__ = ["StrictModel", "field_path", "validation_to_input_error", "read_toml", "validate_model",
           "validate_with_standard"]

_TYPE_WORDS = {
    "float_type": "must be a number",
    "float_parsing": "must be a number",
    "int_type": "must be an integer",
    "string_type": "must be a string (in quotes)",
    "bool_type": "must be true or false",
    "list_type": "must be an array",
    "dict_type": "must be a table",
    "model_type": "must be a table",
    "model_attributes_type": "must be a table",
    "date_type": "must be a TOML date (YYYY-MM-DD, no quotes)",
    "finite_number": "must be a finite number",
}


def _within_bounds(cls, value: Any, info: ValidationInfo) -> Any:
    """Field validator of :class:`StrictModel`: text length and the bounds of :mod:`rfsafe.bounds`."""
    from rfsafe.bounds import MAX_TEXT_CHARS, field_bound_problem

    if isinstance(value, str) and len(value) > MAX_TEXT_CHARS:
        raise ValueError(f"is {len(value)} characters long (accepted: at most {MAX_TEXT_CHARS})")
    problem = field_bound_problem(info.field_name, value)
    if problem:
        raise ValueError(problem)
    return value


# pydantic reads the validator's signature once for every field of every model (about 160 fields, 4 ms
# of each start-up); inspect.signature returns a stored __signature__ at once (same parameters).
_within_bounds.__signature__ = inspect.signature(_within_bounds)


class StrictModel(BaseModel):
    """Base of every file model: strict types, unknown keys refused, finite numbers, and the bounds of
    :mod:`rfsafe.bounds` (numbers by the unit suffix of their field name, list lengths, text length)."""

    model_config = ConfigDict(strict=True, extra="forbid", frozen=True, allow_inf_nan=False)

    _within_bounds = field_validator("*", mode="after")(classmethod(_within_bounds))


def field_path(loc: tuple[Any, ...]) -> str:
    """``("configurations", 2, "antenna")`` -> ``configurations[2].antenna``."""
    out = ""
    for part in loc:
        if isinstance(part, int):
            out += f"[{part}]"
        else:
            out += ("." if out else "") + str(part)
    return out or "(file)"


def _model_at(model: type[BaseModel], loc: tuple[Any, ...]) -> type[BaseModel] | None:
    """The model class that owns the last key of ``loc`` (for listing accepted keys)."""
    import typing

    current: Any = model
    for part in loc[:-1]:
        if isinstance(part, int):
            continue
        if not (isinstance(current, type) and issubclass(current, BaseModel)):
            return None
        info = current.model_fields.get(part)
        if info is None:
            return None
        ann = info.annotation
        candidates = [ann]
        for _ in range(3):  # unwrap Optional[...] and list[...]
            nxt = []
            for c in candidates:
                args = typing.get_args(c)
                nxt.extend(args if args else [c])
            candidates = nxt
        current = next((c for c in candidates if isinstance(c, type) and issubclass(c, BaseModel)), None)
    return current if isinstance(current, type) and issubclass(current, BaseModel) else None


def validation_to_input_error(err: ValidationError, model: type[BaseModel], *, prefix: str = "") -> InputError:
    """The first error of a pydantic ``ValidationError`` as an :class:`InputError`."""
    errors = err.errors(include_url=False)
    # An unknown key usually explains a "missing" one (a typo): report it first.
    first = next((e for e in errors if e["type"] == "extra_forbidden"), errors[0])
    loc = tuple(first["loc"])
    path = prefix + field_path(loc) if loc else (prefix.rstrip(".") or "(file)")
    kind = first["type"]
    value = first.get("input")
    ctx = first.get("ctx") or {}
    if kind == "missing":
        return InputError(f"{path}: is required but missing")
    if kind == "extra_forbidden":
        owner = _model_at(model, loc)
        accepted = ", ".join(owner.model_fields) if owner else ""
        return InputError(f"{path}: is not a known key (accepted keys: {accepted})")
    if kind == "literal_error":
        return bad_value(path, value, f"is not accepted (accepted: {ctx.get('expected', '')})")
    if kind in ("greater_than", "greater_than_equal", "less_than", "less_than_equal"):
        op = {"greater_than": ">", "greater_than_equal": ">=", "less_than": "<", "less_than_equal": "<="}[kind]
        bound = next(iter(ctx.values()))
        shown = f"{bound:g}" if isinstance(bound, (int, float)) else format_value(bound)
        return bad_value(path, value, f"is out of range (accepted: {op} {shown})")
    if kind == "too_short" and "min_length" in ctx:
        return bad_value(path, value, f"has too few items (accepted: at least {ctx['min_length']})")
    if kind == "too_long" and "max_length" in ctx:
        return bad_value(path, value, f"has too many items (accepted: at most {ctx['max_length']})")
    if kind in ("too_short", "too_long"):
        return bad_value(path, value, f"has the wrong length ({first['msg'].lower()})")
    if kind in _TYPE_WORDS:
        return bad_value(path, value, _TYPE_WORDS[kind])
    if kind == "value_error":  # a bound of rfsafe.bounds (StrictModel) or a model's own check
        return bad_value(path, value, str(ctx.get("error", first["msg"])).removeprefix("Value error, "))
    return bad_value(path, value, f"is not accepted ({first['msg']})")


def read_toml(path: Path) -> tuple[dict[str, Any], bytes]:
    """Read a TOML file; syntax errors keep tomllib's line and column."""
    from rfsafe.bounds import MAX_FILE_BYTES, check_file_size, check_nesting, nesting_error

    try:
        if path.is_file():
            check_file_size(path.stat().st_size, field="FILE", path=str(path))
        with path.open("rb") as fh:  # read one byte past the bound: a growing or special file stops there
            raw = fh.read(MAX_FILE_BYTES + 1)
        check_file_size(len(raw), field="FILE", path=str(path))
    except FileNotFoundError:
        raise bad_value("FILE", str(path), "does not exist") from None
    except IsADirectoryError:
        raise bad_value("FILE", str(path), "is a directory, not a TOML file") from None
    except OSError as exc:
        raise bad_value("FILE", str(path), f"cannot be read ({exc.strerror})") from None
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError:
        raise bad_value("FILE", str(path), "is not UTF-8 text") from None
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise InputError(f"{path}: TOML syntax error: {exc}") from None
    except RecursionError:  # tomllib recurses once per nesting level
        raise nesting_error(field="FILE", path=str(path)) from None
    check_nesting(data, field="FILE", path=str(path))
    return data, raw


def validate_model(model: type[BaseModel], data: dict[str, Any], *, prefix: str = "") -> BaseModel:
    """Validate ``data`` against ``model``; the first problem becomes an InputError."""
    try:
        return model.model_validate(data)
    except ValidationError as err:
        raise validation_to_input_error(err, model, prefix=prefix) from None


def validate_with_standard(model: type[BaseModel], data: Any, standard: str | None) -> BaseModel:
    """Validate a station or site file, with ``standard`` (the ``--standard`` option) overriding its own.

    A bad override is reported against ``--standard``, not against the file.
    """
    if standard is None:
        return validate_model(model, data)
    if not isinstance(data, dict):
        raise InputError("(file): must be a TOML table")
    try:
        return validate_model(model, {**data, "standard": standard})
    except InputError as err:
        if str(err).startswith("standard:"):
            raise InputError(str(err).replace("standard:", "--standard:", 1)) from None
        raise
