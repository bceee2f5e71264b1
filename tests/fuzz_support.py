"""Shared machinery of the input fuzz suite (tests/test_fuzz_*.py): a TOML writer, mutation strategies
over valid input files, and the one check of rfsafe's promise for any input.

The promise (README, "Bad input"): exit status 0, 1 or 2 (never 3, an internal error, and never a
traceback); on exit 2 exactly one ``Error: <field>: ...`` line on stderr naming a field the user wrote,
and nothing written; every number in ``--json`` output finite, or a ``<field>_note`` saying why it has
no value.

Hypothesis profiles: "ci" (the default, a few hundred examples per input kind, the whole fuzz suite in
about a minute) and "long" (opt-in: ``RFSAFE_FUZZ=long python3 -m pytest tests/test_fuzz_*.py``,
thousands of examples per kind). Every failure ever found is kept as an explicit regression case.
"""

from __future__ import annotations

import copy
import datetime as dt
import json
import math
import os
import re
import tomllib
from pathlib import Path

from hypothesis import HealthCheck, settings
from hypothesis import strategies as st
from typer.testing import CliRunner

ROOT = Path(__file__).resolve().parent.parent
DEMO = ROOT / "reports_demo"
DATA = ROOT / "tests" / "data"

settings.register_profile(
    "ci", max_examples=250, deadline=None, derandomize=True, database=None, print_blob=True,
    suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large, HealthCheck.function_scoped_fixture])
settings.register_profile(
    "long", max_examples=4000, deadline=None, database=None, print_blob=True,
    suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large, HealthCheck.function_scoped_fixture])
PROFILE = os.environ.get("RFSAFE_FUZZ", "ci")
#: The settings every fuzz test uses (a decorator; other test modules keep hypothesis's defaults).
FUZZ = settings.get_profile(PROFILE)


def work_dir(prefix: str) -> Path:
    """A temporary folder for one fuzz module, removed when the test process exits."""
    import atexit
    import shutil
    import tempfile

    folder = Path(tempfile.mkdtemp(prefix=prefix))
    atexit.register(shutil.rmtree, folder, True)
    return folder


def fuzz_settings(ci_examples: int) -> settings:
    """FUZZ with fewer examples in the "ci" profile, for inputs that take long to evaluate (sites, wires)."""
    return settings(FUZZ, max_examples=ci_examples if PROFILE == "ci" else FUZZ.max_examples)

#: Longest wall time one in-process run may take [s]: the hang threshold of the fuzz campaign that
#: found the defects (generous for a shared 2-core machine; the slowest valid inputs here, the demo
#: site and the largest accepted wire antennas, take a few seconds alone).
RUN_DEADLINE_S = 30.0


# ------------------------------------------------------------------ TOML writer

_BARE_KEY = re.compile(r"^[A-Za-z0-9_-]+$")


def _key(k: str) -> str:
    return k if _BARE_KEY.match(k) else json.dumps(k, ensure_ascii=False)


def _value(v) -> str:
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, int):
        return str(v)
    if isinstance(v, float):
        if math.isnan(v):
            return "nan"
        if math.isinf(v):
            return "inf" if v > 0 else "-inf"
        return repr(v)
    if isinstance(v, str):
        return json.dumps(v, ensure_ascii=False)
    if isinstance(v, (dt.date, dt.datetime)):
        return v.isoformat()
    if isinstance(v, dict):
        return "{" + ", ".join(f"{_key(str(k))} = {_value(x)}" for k, x in v.items()) + "}"
    if isinstance(v, (list, tuple)):
        return "[" + ", ".join(_value(x) for x in v) + "]"
    raise TypeError(type(v))


def to_toml(data: dict) -> str:
    """TOML text of a parsed document (every table written inline under its top-level key)."""
    return "".join(f"{_key(str(k))} = {_value(v)}\n" for k, v in data.items())


def read(path: Path) -> dict:
    return tomllib.loads(path.read_text(encoding="utf-8"))


# ------------------------------------------------------------------ mutations

#: Replacement values: wrong types, extremes, non-finite, tiny and huge numbers, unicode.
EXTREME_NUMBERS = [0, 0.0, -0.0, -1, -1.0, 1e-300, 5e-324, -1e-300, 1e-12, 1e12, 1e300, -1e300, 1.7e308,
                   float("inf"), float("-inf"), float("nan"), 2**63 - 1, -(2**63), 10**30, 1, 2, 0.5, 359.999,
                   360.0, 90.0, -90.0, 1e-6, 1e6, 3.0, 1e5, 2e5]
ODD_VALUES = ["", " ", "x", "ü∞ Ω", "\u202e", "a" * 300, "rg-213", "custom", "uhf", "ssb", "beam", "wire",
              "table", "perfect", "free-space", "l", "pi", "antenna", "public", "no-access", "fcc", "sc6",
              "../../etc/passwd", "nan", "inf", True, False, [], {}, [[]], [1.0, 2.0], [[0.0, 0.0, 0.0]],
              {"x": 1}, dt.date(2026, 1, 1)]

number = st.sampled_from(EXTREME_NUMBERS) | st.floats(allow_nan=True, allow_infinity=True) | st.integers(
    min_value=-(2**63), max_value=2**63 - 1)
scalar = number | st.sampled_from(ODD_VALUES) | st.text(max_size=20)


def _paths(doc, prefix=()):
    """Every path (tuple of keys/indices) to a value in a parsed document."""
    out = []
    if isinstance(doc, dict):
        for k, v in doc.items():
            out.append(prefix + (k,))
            out.extend(_paths(v, prefix + (k,)))
    elif isinstance(doc, list):
        for i, v in enumerate(doc):
            out.append(prefix + (i,))
            out.extend(_paths(v, prefix + (i,)))
    return out


def _get(doc, path):
    for p in path:
        doc = doc[p]
    return doc


def _deep(depth: int):
    v: object = 1
    for i in range(depth):
        v = [v] if i % 2 else {"a": v}
    return v


@st.composite
def mutated(draw, base: dict, *, max_mutations: int = 3, extra_keys=()):
    """A copy of ``base`` with 1..max_mutations mutations at random places."""
    doc = json.loads(json.dumps(base, default=str))  # deep copy; dates become strings
    for k, v in base.items():  # keep top-level dates as dates
        if isinstance(v, dt.date):
            doc[k] = v
    for _ in range(draw(st.integers(1, max_mutations))):
        paths = _paths(doc)
        if not paths:
            break
        path = draw(st.sampled_from(paths))
        parent = _get(doc, path[:-1])
        key = path[-1]
        op = draw(st.sampled_from(["replace", "replace", "replace", "number", "delete", "unknown", "duplicate",
                                   "scale", "nest", "empty", "grow"]))
        if op == "replace":
            parent[key] = copy.deepcopy(draw(scalar))  # never share ODD_VALUES' lists and tables
        elif op == "number":
            parent[key] = draw(number)
        elif op == "scale" and isinstance(parent[key], (int, float)) and not isinstance(parent[key], bool):
            parent[key] = parent[key] * draw(st.sampled_from([0, -1, 1e-9, 1e-3, 1.0001, 0.9999, 1e3, 1e9, 1e20]))
        elif op == "delete":
            del parent[key]
        elif op == "unknown" and isinstance(parent, dict):
            parent[draw(st.sampled_from(["colour", "pep_watts", "x", "ü", *extra_keys]))] = copy.deepcopy(draw(scalar))
        elif op == "duplicate" and isinstance(parent, list):
            parent.insert(key, json.loads(json.dumps(parent[key], default=str)))
        elif op == "nest":
            parent[key] = _deep(draw(st.sampled_from([3, 16, 17, 40, 300])))
        elif op == "empty":
            parent[key] = type(parent[key])() if isinstance(parent[key], (list, dict, str)) else None
            if parent[key] is None:
                del parent[key]
        elif op == "grow" and isinstance(parent[key], list) and parent[key]:
            parent[key] = [copy.deepcopy(x) for x in parent[key] * draw(st.sampled_from([2, 10, 100]))]
    return doc


@st.composite
def damaged_text(draw, text: str):
    """TOML text with a slice deleted, duplicated or replaced by junk."""
    n = len(text)
    i = draw(st.integers(0, n))
    j = draw(st.integers(i, min(n, i + 80)))
    junk = draw(st.sampled_from(["", "[", "]]", "=", '"', "\\", "\x00", "\ufeff", "[[", "{", "\n[a]\n",
                                 "\u00e9", "=[" * 600, "{a=" * 600, "\xff"]))
    op = draw(st.sampled_from(["delete", "insert", "duplicate"]))
    if op == "delete":
        return text[:i] + text[j:]
    if op == "insert":
        return text[:i] + junk + text[i:]
    return text[:j] + text[i:j] + text[j:]


# ------------------------------------------------------------------ running and checking

_runner = CliRunner()


def _verdict_codes() -> tuple[int, ...]:
    """Exit codes of a reached verdict: 0, 1 and (where the project separates them) equipment exceeded."""
    import rfsafe.results as results

    return (0, 1) + tuple(v for k, v in vars(results).items() if k.startswith("EXIT_") and isinstance(v, int)
                          and v not in (0, 1, 2, 3))


VERDICT_CODES = _verdict_codes()


def run_cli(args: list[str]):
    """Run rfsafe in-process; returns (exit code, stdout, stderr, seconds)."""
    import time
    import warnings

    from rfsafe.cli import app

    t0 = time.perf_counter()
    with warnings.catch_warnings():
        warnings.simplefilter("error")  # a warning escaping the CLI's own handling is a defect
        r = _runner.invoke(app, args, catch_exceptions=True)
    dt_s = time.perf_counter() - t0
    if r.exception is not None and not isinstance(r.exception, SystemExit):
        import traceback

        tb = "".join(traceback.format_exception(r.exception))
        raise AssertionError(f"exception escaped the CLI: {tb}")
    return r.exit_code, r.stdout, r.stderr, dt_s


from rfsafe.cli.output import NO_REASON  # noqa: E402 - marker of an infinity without a declared reason


def _nonfinite_without_note(doc, where="$"):
    bad = []
    if isinstance(doc, dict):
        for k, v in doc.items():
            if isinstance(v, float) and not math.isfinite(v):
                bad.append(f"{where}.{k}")
            bad.extend(_nonfinite_without_note(v, f"{where}.{k}"))
    elif isinstance(doc, list):
        for i, v in enumerate(doc):
            bad.extend(_nonfinite_without_note(v, f"{where}[{i}]"))
    return bad


def check_promise(args, code, out, err, seconds, *, fields: tuple[str, ...], written: list[Path] = (),
                  files: tuple[str, ...] = (), text: str | None = None):
    """Assert rfsafe's promise for one run (see the module docstring).

    ``fields`` are the roots an error may name: top-level keys of the input, option names, FILE;
    ``files`` the paths of the input files (an error may name the file itself); ``text`` the input
    file's text (an error may name any key written in it, e.g. a misspelt one).
    """
    assert code in VERDICT_CODES + (2,), f"exit {code} for {args}:\n{err}"
    assert "Traceback" not in err and "Warning" not in err.split("\n")[0], err
    assert seconds < RUN_DEADLINE_S, f"took {seconds:.1f} s"
    from rfsafe.cli import RECORDED_WARNINGS

    numeric = [w for w in RECORDED_WARNINGS if not w.startswith(("DeprecationWarning", "SyntaxWarning",
                                                                 "PendingDeprecationWarning"))]
    assert not numeric, f"warnings raised (fix their root cause): {numeric}"
    if code == 2:
        lines = err.splitlines()
        assert len(lines) == 1 and lines[0].startswith("Error: "), f"stderr on exit 2 must be one Error line:\n{err}"
        msg = lines[0][len("Error: "):]
        if any(msg.startswith(f"{p}: ") for p in files):  # the file itself, e.g. a TOML syntax error
            return
        field = re.split(r"[.\[ :]", msg, maxsplit=1)[0]
        assert field in fields or (text is not None and field in text), f"error names {field!r}, not a field of the input ({fields}): {msg}"
        assert out == "", f"stdout on exit 2: {out[:200]}"
        for p in written:
            assert not Path(p).exists(), f"{p} written on exit 2"
    elif "--json" in args:
        doc = json.loads(out)
        assert not _nonfinite_without_note(doc)
        nulls = _silent_nulls(doc)
        assert not nulls, f"non-finite numbers given as null without a <field>_note: {nulls[:5]}"


def _silent_nulls(doc, where="$"):
    """Non-finite numbers whose ``<field>_note`` gives no reason.

    The JSON writer turns a non-finite number into null and adds ``<field>_note`` saying why it has no
    value; a NaN, or an infinity whose result type declares no reason, is a defect.
    """
    bad = []
    if isinstance(doc, dict):
        for k, v in doc.items():
            if isinstance(v, str) and k.endswith("_note") and (v.startswith("nan") or NO_REASON in v):
                bad.append(f"{where}.{k}: {v}")
            bad.extend(_silent_nulls(v, f"{where}.{k}"))
    elif isinstance(doc, list):
        for i, v in enumerate(doc):
            bad.extend(_silent_nulls(v, f"{where}[{i}]"))
    return bad


def run_file(workdir: Path, name: str, text: str, command: list[str], *, fields, extra_args=(), written=()):
    """Write ``text`` to ``workdir/name``, run ``rfsafe <command> FILE <extra_args>`` and check the promise."""
    path = workdir / name
    path.write_text(text, encoding="utf-8")
    for p in written:
        Path(p).unlink(missing_ok=True)
    args = [*command, str(path), *extra_args]
    code, out, err, seconds = run_cli(args)
    check_promise(args, code, out, err, seconds, fields=tuple(fields) + ("FILE", "(file)"),
                  written=written, files=(str(path),), text=text)
    return code, out, err
