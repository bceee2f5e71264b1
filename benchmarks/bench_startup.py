"""Benchmark: whole-process time of everyday commands, on an idle and on a loaded machine.

Two measurements, each as a ratio to a floor measured in the same run:

1. BLAS threads on a busy machine. A background load keeps every core busy; ``rfsafe evaluate`` of the
   demo station runs with rfsafe's default settings (one BLAS thread unless the user sets one) and
   with the old default (one BLAS thread per core, ``RFSAFE_THREADS=<cores>``). Floor: the same command
   with ``OPENBLAS_NUM_THREADS=1`` set explicitly. Target: default within 1.2x of the floor.
2. Start-up. ``rfsafe evaluate`` of the demo station against ``python -c "import typer"`` (the least a
   typer command costs). Target: within 4x.

Medians of paired, interleaved runs. Not a test: it prints, it asserts nothing.

Run: ``python3 benchmarks/bench_startup.py [repeats]``
"""

from __future__ import annotations

import multiprocessing as mp
import os
import statistics
import subprocess
import sys
import time
from pathlib import Path

DEMO = Path(__file__).resolve().parent.parent / "reports_demo" / "demo_station.toml"
EVALUATE = [sys.executable, "-m", "rfsafe", "evaluate", str(DEMO), "--json"]
IMPORT_TYPER = [sys.executable, "-c", "import typer"]


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


def _paired(variants: dict[str, tuple[list[str], dict[str, str], tuple[str, ...]]], repeats: int) -> dict:
    times: dict[str, list[float]] = {k: [] for k in variants}
    for _ in range(repeats):
        for name, (cmd, extra, drop) in variants.items():
            times[name].append(_run(cmd, extra, drop))
    return {k: statistics.median(v) for k, v in times.items()}


def main(repeats: int = 7) -> None:
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

    idle = _paired({"import typer": (IMPORT_TYPER, {}, ()), "evaluate": (EVALUATE, {}, ())}, repeats)
    ratio = idle["evaluate"] / idle["import typer"]
    print(f"2. start-up on an idle machine, median of {repeats}:")
    print(f"   python -c 'import typer'  {idle['import typer']:6.2f} s (floor)")
    print(f"   rfsafe evaluate demo      {idle['evaluate']:6.2f} s   ratio {ratio:5.2f}   target 4x: "
          f"{'met' if ratio <= 4 else 'NOT met'}")


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 7)
