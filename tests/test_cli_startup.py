"""Start-up: `rfsafe --help` stays fast (no heavy imports) and every command has help."""

import json
import subprocess
import sys

from typer.testing import CliRunner

from rfsafe.cli import app

HEAVY = ("numpy", "pandas", "reportlab", "matplotlib", "scipy")


def test_help_imports_no_heavy_modules():
    code = ("import sys; from rfsafe.cli import app\n"
            "try:\n    app(['--help'])\nexcept SystemExit:\n    pass\n"
            "import json; print(json.dumps(sorted(m for m in sys.modules)), file=sys.stderr)")
    proc = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    loaded = set(json.loads(proc.stderr.strip().splitlines()[-1]))
    assert not [m for m in HEAVY if m in loaded], "heavy modules imported on the --help path"


def test_every_command_has_help():
    runner = CliRunner()
    result = runner.invoke(app, ["--help"])
    assert result.exit_code == 0
    import typer.main

    from rfsafe.cli import _COMMAND_MODULES

    group = typer.main.get_command(app)
    assert len(group.commands) >= len(_COMMAND_MODULES)
    for name, cmd in group.commands.items():
        assert cmd.help and cmd.help.strip(), f"command {name} has no help"
        sub = runner.invoke(app, [name, "--help"])
        assert sub.exit_code == 0, name
        assert "Usage:" in sub.stdout


def test_version():
    from rfsafe import __version__

    result = CliRunner().invoke(app, ["--version"])
    assert result.exit_code == 0
    assert result.stdout.strip() == f"rfsafe {__version__}"


def test_unknown_command_is_one_error_line():
    result = CliRunner().invoke(app, ["frobnicate"])
    assert result.exit_code == 2
    # the field form of every input error: the word the user typed, what is accepted
    assert result.stderr.strip().splitlines() == ['Error: COMMAND: "frobnicate" is not an rfsafe command (see rfsafe --help)']


def test_one_blas_thread_by_default_and_the_user_wins():
    # rfsafe's matrices are small: one BLAS thread by default (issue: 2.4-3.4x slower on a busy
    # machine with one thread per core); a value the user set, or RFSAFE_THREADS, is kept.
    import os
    import subprocess
    import sys

    code = "import rfsafe, os; print(os.environ['OPENBLAS_NUM_THREADS'], os.environ['OMP_NUM_THREADS'])"
    env = {k: v for k, v in os.environ.items() if not k.endswith("_THREADS")}
    out = subprocess.run([sys.executable, "-c", code], env=env, capture_output=True, text=True).stdout
    assert out.split() == ["1", "1"]
    out = subprocess.run([sys.executable, "-c", code], env={**env, "OPENBLAS_NUM_THREADS": "2"},
                         capture_output=True, text=True).stdout
    assert out.split() == ["2", "1"]
    out = subprocess.run([sys.executable, "-c", code], env={**env, "RFSAFE_THREADS": "3"},
                         capture_output=True, text=True).stdout
    assert out.split() == ["3", "3"]


def test_evaluate_loads_only_what_the_station_declares(tmp_path):
    # The demo station declares no tuner and no balun, and evaluate draws its plan with the site grid
    # kernel alone: the tuner networks, the baluns, the site file models and the site loader stay
    # unloaded (start-up, issue 18). The same run with a tuner and a balun loads the first two, and
    # the package names stay reachable (PEP 562 look-up) for every caller that imports them.
    from pathlib import Path

    demo = Path(__file__).resolve().parent.parent / "reports_demo" / "demo_station.toml"
    code = ("import sys, json; from rfsafe.cli import app\n"
            f"try:\n    app(['evaluate', {str(demo)!r}, '--json'])\nexcept SystemExit:\n    pass\n"
            "print(json.dumps(sorted(sys.modules)), file=sys.stderr)")
    proc = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True)
    loaded = set(json.loads(proc.stderr.strip().splitlines()[-1]))
    assert "rfsafe.site.grid" in loaded and "rfsafe.feedline.stress" in loaded   # the check can fail
    unused = ("rfsafe.feedline.matching", "rfsafe.feedline.balun", "rfsafe.site.schema", "rfsafe.site.load")
    assert [m for m in unused if m in loaded] == []

    import rfsafe.feedline
    import rfsafe.site
    from rfsafe.feedline.matching import TunerSpec
    from rfsafe.site.load import load_site

    assert rfsafe.feedline.TunerSpec is TunerSpec and rfsafe.site.load_site is load_site
    assert all(getattr(rfsafe.site, name) is not None for name in rfsafe.site.__all__)
    assert all(getattr(rfsafe.feedline, name) is not None for name in rfsafe.feedline.__all__)


def test_result_classes_defined_on_first_use_are_the_module_level_classes():
    # rfsafe.results defines its wire, ask and site-remedy classes on first use (start-up, issue 18): in a
    # fresh interpreter they are absent until asked for, then the same classes as ever (name, module,
    # repr, pickling, frozen, equality), and `import *` reaches them.
    code = ("import sys, json, pickle, dataclasses\nimport rfsafe.results as r\n"
            "before = sorted(n for n in r._ON_FIRST_USE if n in vars(r))\n"
            "from rfsafe.results import QuickAnswer, WireSummary\n"
            "w = WireSummary(50 + 1j, 2.1, 0.97)\n"
            "frozen = False\ntry:\n    w.gain_dbi = 0.0\nexcept dataclasses.FrozenInstanceError:\n    frozen = True\n"
            "ns = {}\nexec('from rfsafe.results import *', ns)\n"
            "print(json.dumps([before, repr(w), WireSummary.__module__ + '.' + WireSummary.__qualname__,\n"
            "                  pickle.loads(pickle.dumps(w)) == w, frozen, sorted(QuickAnswer.NONFINITE_NOTES),\n"
            "                  all(n in ns for n in r._ON_FIRST_USE)]))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout
    text = ("WireSummary(feed_impedance_ohm=(50+1j), gain_dbi=2.1, radiated_over_input_power=0.97, "
            "carried_over_input_power=1.0)")
    assert json.loads(out) == [[], text, "rfsafe.results.WireSummary", True, True, ["largest_pep_w"], True]


def _stock_dataclass_twin(cls):
    """The same fields, defaults and __post_init__ built by the standard library's dataclass(frozen=True)."""
    import dataclasses

    ns = {"__annotations__": {}, "__qualname__": cls.__qualname__}
    for f in dataclasses.fields(cls):
        ns["__annotations__"][f.name] = f.type
        kw = dict(init=f.init, repr=f.repr, hash=f.hash, compare=f.compare)
        if f.default is not dataclasses.MISSING:
            kw["default"] = f.default
        if f.default_factory is not dataclasses.MISSING:
            kw["default_factory"] = f.default_factory
        ns[f.name] = dataclasses.field(**kw)
    if "__post_init__" in vars(cls):
        ns["__post_init__"] = vars(cls)["__post_init__"]
    return dataclasses.dataclass(frozen=True, slots="__slots__" in vars(cls))(type(cls.__name__, (), ns))


def test_result_classes_compare_hash_and_print_as_stock_dataclasses():
    # The result classes take repr, == and hash from one base class instead of compiling them per class
    # (start-up, issue 18). Reference: the standard library's generated methods on a twin of each class:
    # the same repr text, the same equality (equal, unequal, other types) and the same hash values.
    import dataclasses

    import rfsafe.results as r

    classes = [getattr(r, n) for n in r.__all__
               if isinstance(getattr(r, n), type) and dataclasses.is_dataclass(getattr(r, n))]
    assert len(classes) >= 18
    for cls in classes:
        twin = _stock_dataclass_twin(cls)
        init = [f for f in dataclasses.fields(cls) if f.init]
        for variant in range(3):
            kw = {f.name: (f"v{i}" if i % 3 else i + 0.5 * variant) if variant < 2 else (f"v{i}", i)
                  for i, f in enumerate(init)}
            other = {**kw, init[0].name: "changed"}
            a, a2, b = cls(**kw), cls(**dict(kw)), cls(**other)
            t, t2, u = twin(**kw), twin(**dict(kw)), twin(**other)
            assert repr(a) == repr(t) and repr(b) == repr(u), cls.__name__
            assert (a == a2, a == b, a != b, a == 1) == (t == t2, t == u, t != u, t == 1), cls.__name__
            assert hash(a) == hash(t) and hash(b) == hash(u), cls.__name__
            assert a.__eq__(t) is NotImplemented           # another class never compares equal
    import pytest

    with pytest.raises(dataclasses.FrozenInstanceError):
        r.Remedy(**{f.name: "x" for f in dataclasses.fields(r.Remedy) if f.init}).text = "changed"
