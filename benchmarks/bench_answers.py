"""Benchmark of the answers added to an evaluation (rfsafe.remedies): keep-out on the ground and remedies.

Prints the process CPU time (the machine is shared) of one plain evaluation (rfsafe.assess.assess, the
floor: the remedies re-run it) and of the keep-out search and the remedies for the demo stations, each
as a multiple of that floor, and the number of evaluations the remedies used. The remedies run as
``with_answers`` runs them: their re-evaluations reuse the first evaluation's configurations and
places where the changed parameter leaves them alone (rfsafe.assess.place_totals). The aim: remedies within 40 evaluations per
exceeding place and per configuration (they re-run the evaluation; that is their method), keep-out
within 10x the floor.

Usage: python benchmarks/bench_answers.py [--repeat 3]
"""

from __future__ import annotations

import argparse
import time
from pathlib import Path

from rfsafe import remedies
from rfsafe.assess import assess, assess_with_emitters
from rfsafe.station import load_station

DEMO = Path(__file__).resolve().parent.parent / "reports_demo"


def _best(fn, repeat: int) -> float:
    best = float("inf")
    for _ in range(repeat):
        t = time.process_time()
        fn()
        best = min(best, time.process_time() - t)
    return best


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeat", type=int, default=3)
    args = ap.parse_args()
    for name in ("demo_station.toml", "demo_wire_station.toml"):
        loaded = load_station(DEMO / name)
        floor = _best(lambda: assess(loaded), args.repeat)
        memo: dict = {}
        res, ems = assess_with_emitters(loaded, memo=memo)
        keep = _best(lambda: remedies.ground_keep_out(loaded, res, ems), args.repeat)
        calls = [0]
        original = remedies.total_ratio

        def counted(*a, **k):
            calls[0] += 1
            return original(*a, **k)

        remedies.total_ratio = counted
        try:
            t = time.process_time()
            with remedies._reused_evaluations(memo):
                places = remedies.place_remedies(loaded, res)
                configs = remedies.configuration_remedies(loaded, res)
            rem = time.process_time() - t
        finally:
            remedies.total_ratio = original
        subjects = len(places) + len(configs)
        print(f"{name}:")
        print(f"  evaluation (floor):        {floor * 1e3:9.1f} ms")
        print(f"  keep-out on the ground:    {keep * 1e3:9.1f} ms  ({keep / floor:5.1f} x floor)")
        print(f"  remedies:                  {rem * 1e3:9.1f} ms  ({rem / floor:5.1f} x floor), "
              f"{calls[0]} evaluations for {len(places)} exceeding place(s) and {len(configs)} configuration(s)"
              f" = {calls[0] / max(subjects, 1):.1f} per subject")


if __name__ == "__main__":
    main()
