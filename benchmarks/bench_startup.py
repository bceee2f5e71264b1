"""Benchmark: whole-process time of everyday commands, on an idle and on a loaded machine.

Two measurements, each as a ratio to a floor measured in the same run:

1. BLAS threads on a busy machine. A background load keeps every core busy; ``rfsafe evaluate`` of the
   demo station runs with rfsafe's default settings (one BLAS thread unless the user sets one) and
   with the old default (one BLAS thread per core, ``RFSAFE_THREADS=<cores>``). Floor: the same command
   with ``OPENBLAS_NUM_THREADS=1`` set explicitly. Target: default within 1.2x of the floor.
2. Start-up. ``rfsafe evaluate`` of the demo station (``--json``, and the tables) against
   ``python -c "import typer"`` (the floor issue 18 names; a typer command that parses its parameters
   costs more, shown below). Target: within 4x. Also shown: the
   libraries every evaluation needs (typer, numpy, pydantic) imported alone, and rfsafe's modules
   imported without evaluating anything, and a typer command with evaluate's parameters that imports
   numpy and does nothing (typer checks every parameter through pydantic), and the evaluation without
   its remedies, so the ratio can be read as start-up that rfsafe cannot avoid, its own imports, its
   evaluation and the remedies' re-evaluations.

Part 1 measures wall time (the penalty is waiting for busy cores); part 2 measures each child's CPU
time (user + system, ``resource.getrusage(RUSAGE_CHILDREN)``), which the shared machine's other
work disturbs far less than wall time, with compiled bytecode cached as an installed package has it.
Medians of paired, interleaved runs. Not a test: it prints, it asserts nothing.

Run: ``python3 benchmarks/bench_startup.py [repeats] [--startup-only]`` (``--startup-only``: part 2 alone)
"""

from __future__ import annotations

import multiprocessing as mp
import os
import resource
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

DEMO = Path(__file__).resolve().parent.parent / "reports_demo" / "demo_station.toml"
EVALUATE = [sys.executable, "-m", "rfsafe", "evaluate", str(DEMO), "--json"]
EVALUATE_TABLES = [sys.executable, "-m", "rfsafe", "evaluate", str(DEMO)]
#: The same without the remedies (which re-run the evaluation): shows how much of the ratio they take.
EVALUATE_NO_REMEDIES = [sys.executable, "-m", "rfsafe", "evaluate", str(DEMO), "--json", "--no-remedies"]
IMPORT_TYPER = [sys.executable, "-c", "import typer"]
IMPORT_LIBRARIES = [sys.executable, "-c", "import typer, numpy, pydantic"]
#: A typer command with evaluate's parameters that imports numpy and does nothing else (no rfsafe): what
#: any typer command computing with numpy costs. typer (0.2x) checks every parameter through a pydantic
#: TypeAdapter, so this already holds pydantic's schema machinery, which rfsafe's file models need too.
TYPER_COMMAND = [sys.executable, "-c", (
    "from pathlib import Path\nimport typer\napp = typer.Typer(add_completion=False)\n"
    "@app.callback()\ndef root():\n    pass\n"
    "@app.command()\ndef evaluate(file: Path = typer.Argument(...), standard: str = typer.Option(None, '--standard'),\n"
    "             json_out: bool = typer.Option(False, '--json'), csv_table: str = typer.Option(None, '--csv'),\n"
    "             remedies: bool = typer.Option(True, '--remedies/--no-remedies'),\n"
    "             wide: bool = typer.Option(False, '--wide')):\n    import numpy  # noqa: F401\n"
    f"app(['evaluate', {str(DEMO)!r}, '--json'])\n")]
IMPORT_RFSAFE = [sys.executable, "-c", "import rfsafe.cli, rfsafe.cli.cmd_evaluate, rfsafe.cli.answers, "
                                       "rfsafe.remedies, rfsafe.assess, rfsafe.station, rfsafe.cli.output"]


def _burn(stop) -> None:
    x = 0
    while not stop.is_set():
        for _ in range(100_000):
            x += 1


def _run(cmd, env_extra: dict[str, str], drop: tuple[str, ...] = ()) -> float:
    env = {k: v for k, v in os.environ.items() if k not in drop}
    env.update(env_extra)
    t0 = time.perf_counter()
    subprocess.run(cmd, env=env, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, check=False)
    return time.perf_counter() - t0


#: Compiled bytecode for the child processes, outside the source tree: an installed package has its
#: .pyc files, so start-up is measured with them (a shell with PYTHONDONTWRITEBYTECODE set would
#: otherwise compile every rfsafe module on every run). Filled by one warm-up run of each command.
PYCACHE = Path(tempfile.gettempdir()) / "rfsafe-bench-pycache"


def _cpu(cmd, env_extra: dict[str, str], drop: tuple[str, ...] = ()) -> float:
    """CPU time [s] (user + system) of one child process, with cached bytecode (see PYCACHE)."""
    env = {k: v for k, v in os.environ.items() if k not in drop and k != "PYTHONDONTWRITEBYTECODE"}
    env.update(env_extra)
    env["PYTHONPYCACHEPREFIX"] = str(PYCACHE)
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    subprocess.run(cmd, env=env, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, check=False)
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    return (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime)


def _paired(variants: dict[str, tuple[list[str], dict[str, str], tuple[str, ...]]], repeats: int,
            measure=_run) -> dict:
    times: dict[str, list[float]] = {k: [] for k in variants}
    for _ in range(repeats):
        for name, (cmd, extra, drop) in variants.items():
            times[name].append(measure(cmd, extra, drop))
    return {k: statistics.median(v) for k, v in times.items()}


def main(repeats: int = 7, busy_part: bool = True) -> None:
    if busy_part:
        _busy_machine(repeats)
    _startup(repeats)


def _busy_machine(repeats: int) -> None:
    cores = os.cpu_count() or 2
    blas = ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS", "RFSAFE_THREADS")
    variants = {
        "floor (OPENBLAS_NUM_THREADS=1)": (EVALUATE, {"OPENBLAS_NUM_THREADS": "1", "OMP_NUM_THREADS": "1"}, blas),
        "rfsafe default": (EVALUATE, {}, blas),
        f"old default ({cores} threads)": (EVALUATE, {"RFSAFE_THREADS": str(cores)}, blas),
    }
    stop = mp.Event()
    load = [mp.Process(target=_burn, args=(stop,), daemon=True) for _ in range(cores)]
    for p in load:
        p.start()
    try:
        busy = _paired(variants, repeats)
    finally:
        stop.set()
        for p in load:
            p.join()
    floor = busy["floor (OPENBLAS_NUM_THREADS=1)"]
    print(f"1. evaluate demo on a loaded machine ({cores} busy processes), median of {repeats}:")
    for name, t in busy.items():
        print(f"   {name:34s} {t:6.2f} s   ratio to floor {t / floor:5.2f}")
    print(f"   target: rfsafe default within 1.2x of the floor: "
          f"{'met' if busy['rfsafe default'] <= 1.2 * floor else 'NOT met'}")


def _startup(repeats: int) -> None:
    startup = {"import typer": (IMPORT_TYPER, {}, ()), "libraries": (IMPORT_LIBRARIES, {}, ()),
               "typer command": (TYPER_COMMAND, {}, ()),
               "rfsafe modules": (IMPORT_RFSAFE, {}, ()), "evaluate": (EVALUATE, {}, ()),
               "evaluate tables": (EVALUATE_TABLES, {}, ()), "no remedies": (EVALUATE_NO_REMEDIES, {}, ())}
    _paired(startup, 1, _cpu)   # warm-up: writes the bytecode cache
    idle = _paired(startup, repeats, _cpu)
    floor = idle["import typer"]
    ratio = idle["evaluate"] / floor
    print(f"2. start-up, process CPU time, median of {repeats} (no background load of ours; the machine is shared):")
    print(f"   python -c 'import typer'                {floor:6.3f} s (floor)")
    print(f"   import typer, numpy, pydantic           {idle['libraries']:6.3f} s   "
          f"ratio {idle['libraries'] / floor:5.2f}")
    print(f"   typer command + numpy, no rfsafe        {idle['typer command']:6.3f} s   "
          f"ratio {idle['typer command'] / floor:5.2f}   (typer checks each parameter with pydantic)")
    print(f"   import rfsafe's evaluate modules        {idle['rfsafe modules']:6.3f} s   "
          f"ratio {idle['rfsafe modules'] / floor:5.2f}")
    print(f"   rfsafe evaluate demo --json             {idle['evaluate']:6.3f} s   ratio {ratio:5.2f}   target 4x: "
          f"{'met' if ratio <= 4 else 'NOT met'}")
    print(f"   rfsafe evaluate demo --no-remedies      {idle['no remedies']:6.3f} s   "
          f"ratio {idle['no remedies'] / floor:5.2f}   (--json; what the remedies' re-evaluations add)")
    tables = idle["evaluate tables"] / floor
    print(f"   rfsafe evaluate demo (tables)           {idle['evaluate tables']:6.3f} s   ratio {tables:5.2f}   "
          f"target 4x: {'met' if tables <= 4 else 'NOT met'}")


if __name__ == "__main__":
    args = [a for a in sys.argv[1:] if a != "--startup-only"]
    main(int(args[0]) if args else 7, busy_part="--startup-only" not in sys.argv[1:])
