"""Benchmark: whole-process CPU time of everyday commands on the wire demo (issue 18, item 3).

Each command runs as a new process (start-up, imports, evaluation and output, as a user sees it);
its CPU time (user + system, ``resource.getrusage(RUSAGE_CHILDREN)``) is the measure, because the
machine is shared and wall time swells with other work. Compiled bytecode is cached (outside the
tree) as an installed package has it; one warm-up run of each command fills it. Medians of paired,
interleaved runs; one BLAS thread (rfsafe's default).

Floor, measured in the same run: ``python -c "import typer"`` (the least a typer command costs).
Targets (absolute, on this machine): ``rfsafe evaluate`` of the wire demo under 0.5 s, ``rfsafe report``
of it (the worksheet) under 1.2 s. Not a test: it prints, it asserts nothing.

Run: ``python benchmarks/bench_wire_demo.py [repeats]``; ``--parts`` adds, from one in-process evaluation
(imports done first), the CPU time of its main parts (nested: the peak search is part of the solves, the
near fields part of the shells and the place ratios).
"""

from __future__ import annotations

import os
import resource
import statistics
import subprocess
import sys
import tempfile
from pathlib import Path

DEMO = Path(__file__).resolve().parent.parent / "reports_demo" / "demo_wire_station.toml"
TARGETS_S = {"evaluate (tables)": 0.5, "report (worksheet)": 1.2}


#: Compiled bytecode for the child processes, outside the source tree (an installed package has its
#: .pyc files; a shell with PYTHONDONTWRITEBYTECODE set would compile every module on every run).
PYCACHE = Path(tempfile.gettempdir()) / "rfsafe-bench-pycache"


def _cpu(cmd: list[str]) -> float:
    """CPU time [s] of one child process (user + system), with cached bytecode."""
    env = {k: v for k, v in os.environ.items() if k != "PYTHONDONTWRITEBYTECODE"}
    env["PYTHONPYCACHEPREFIX"] = str(PYCACHE)
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    subprocess.run(cmd, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, check=False, env=env)
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    return (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime)


def main(repeats: int = 5) -> None:
    py = sys.executable
    with tempfile.TemporaryDirectory() as tmp:
        pdf = Path(tmp) / "w.pdf"
        commands = {
            "floor: import typer": [py, "-c", "import typer"],
            "evaluate (tables)": [py, "-m", "rfsafe", "evaluate", str(DEMO)],
            "evaluate --json": [py, "-m", "rfsafe", "evaluate", str(DEMO), "--json"],
            "report (worksheet)": [py, "-m", "rfsafe", "report", str(DEMO), "-o", str(pdf), "--force"],
        }
        times: dict[str, list[float]] = {k: [] for k in commands}
        for cmd in commands.values():   # warm-up: writes the bytecode cache
            _cpu(cmd)
        for _ in range(repeats):
            for name, cmd in commands.items():
                times[name].append(_cpu(cmd))
    med = {k: statistics.median(v) for k, v in times.items()}
    floor = med["floor: import typer"]
    print(f"{DEMO.name}: process CPU time, median of {repeats} (shared 2-core machine)")
    for name, t in med.items():
        target = TARGETS_S.get(name)
        verdict = "" if target is None else f"   target {target:g} s: {'met' if t <= target else 'NOT met'}"
        print(f"  {name:22s} {t:6.3f} s   ratio to floor {t / floor:6.1f}{verdict}")


#: (module, function) timed by --parts, with the label printed.
PARTS = [("rfsafe.antenna.wire.solver", "solve", "wire solves"),
         ("rfsafe.antenna.wire.solver", "impedance_matrix", "  of which matrix fills"),
         ("rfsafe.antenna.wire.solver", "_peak_search", "  of which gain peak searches"),
         ("rfsafe.antenna.wire.fields", "near_fields", "near fields, one solution at a time"),
         ("rfsafe.antenna.wire.fields", "near_fields_together", "near fields, solutions together"),
         ("rfsafe.antenna.wire.fields", "check_points", "point checks (all callers)"),
         ("rfsafe.assess", "_wire_compliance_distances", "compliance-distance shells"),
         ("rfsafe.assess", "_wire_place_ratios", "place ratios (remedies, keep-out)"),
         ("rfsafe.remedies", "ground_keep_out", "ground keep-out")]


def parts() -> None:
    """CPU time of the main parts of one in-process ``evaluate`` of the wire demo (one BLAS thread)."""
    import importlib
    import time

    from typer.testing import CliRunner

    from rfsafe.cli import app

    spent: dict[str, float] = {}
    for mod_name, fn_name, label in PARTS:
        mod = importlib.import_module(mod_name)
        fn = getattr(mod, fn_name)

        def timed(*a, _fn=fn, _label=label, **k):
            t0 = time.process_time()
            try:
                return _fn(*a, **k)
            finally:
                spent[_label] = spent.get(_label, 0.0) + time.process_time() - t0
        setattr(mod, fn_name, timed)
    t0 = time.process_time()
    CliRunner().invoke(app, ["evaluate", str(DEMO)])
    total = time.process_time() - t0
    print(f"in-process evaluate (imports excluded): {total:.3f} s CPU; parts (nested, may overlap):")
    for _m, _f, label in PARTS:
        print(f"  {label:36s} {spent.get(label, 0.0):6.3f} s")


if __name__ == "__main__":
    os.environ.setdefault("OMP_NUM_THREADS", "1")
    os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")
    args = [a for a in sys.argv[1:] if a != "--parts"]
    main(int(args[0]) if args else 5)
    if "--parts" in sys.argv[1:]:
        parts()
