"""Benchmark: the demo worksheets through the ``rfsafe report`` path (load + assess + render).

First, the wire demo's worksheet step by step in a fresh process (CPU time: imports, evaluation, story,
layout and PDF), against a fresh process that writes the minimal document; then wall times in process.

Floor: a minimal reportlab document (one page, one paragraph in the embedded DejaVu Sans) built in
the same run, so the ratio says how much the worksheet costs over reportlab's own fixed cost.
Target: the full path under 2 s on the shared 2-core machine.

Run: ``/work/venv/bin/python benchmarks/bench_report.py [repeats]``
"""

from __future__ import annotations

import math
import statistics
import sys
import tempfile
import time
from pathlib import Path

DEMOS = [Path(__file__).resolve().parent.parent / "reports_demo" / name
         for name in ("demo_station.toml", "demo_wire_station.toml")]
TARGET_S = 2.0


def _best(fn, repeats: int) -> tuple[float, float]:
    times = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return min(times), statistics.median(times)


def main(repeats: int = 5) -> None:
    bench_worksheet_phases(repeats)
    for demo in DEMOS:
        bench(demo, repeats)
    bench_wire_verdict(repeats)
    bench_wire_targets(min(repeats, 3))


#: Run in a new process: CPU time [s] at each step of ``rfsafe report`` (as cmd_report does it).
_PHASES = """
import json, sys, time
T = time.process_time
marks = [("", 0.0), ("interpreter start", T())]
import typer
marks.append(("import typer", T()))
from rfsafe.remedies import with_answers
from rfsafe.station import load_station
marks.append(("import evaluation", T()))
from rfsafe.report.worksheet import build_pdf, worksheet_story, build_worksheet_pdf
marks.append(("import report", T()))
res = with_answers(load_station(sys.argv[1]))
marks.append(("load + evaluate", T()))
story = worksheet_story(res)
marks.append(("worksheet: story (figures, maps, tables)", T()))
build_pdf(story, title="t", author="", subject="", date_iso="2026-01-01", header_left="", header_right="",
          footer_left="")
marks.append(("worksheet: layout and PDF", T()))
print(json.dumps({name: t1 - t0 for (_, t0), (name, t1) in zip(marks[:-1], marks[1:])}))
print("matplotlib loaded:", any(m.startswith("matplotlib") for m in sys.modules))
"""


def bench_worksheet_phases(repeats: int) -> None:
    """Where the CPU time of the wire-demo worksheet goes, step by step in a fresh process (medians).

    Floor, in the same run: a fresh process that imports reportlab's platypus and writes the minimal
    document (the least any worksheet costs beyond evaluating). The worksheet's own share is the story
    (figures, maps, tables) plus layout and PDF; the issue-18 aim for the whole ``rfsafe report`` process
    is 1.2 s, of which evaluation is the other part.
    """
    import json
    import os
    import subprocess

    env = {**os.environ, "OMP_NUM_THREADS": "1", "OPENBLAS_NUM_THREADS": "1"}
    env.pop("PYTHONDONTWRITEBYTECODE", None)
    env["PYTHONPYCACHEPREFIX"] = str(Path(tempfile.gettempdir()) / "rfsafe-bench-pycache")
    floor_code = (f"import sys, time; sys.path.insert(0, {str(Path(__file__).resolve().parent)!r}); "
                  "import bench_report; bench_report.build_pdf_floor(); print(time.process_time())")
    demo = DEMOS[1]
    runs, floors, loaded = [], [], ""
    for k in range(repeats + 1):          # the first run fills the bytecode cache
        out = subprocess.run([sys.executable, "-c", _PHASES, str(demo)], capture_output=True, text=True, env=env,
                             check=True).stdout.splitlines()
        fl = subprocess.run([sys.executable, "-c", floor_code], capture_output=True, text=True, env=env,
                            check=True).stdout.split()
        if k:
            runs.append(json.loads(out[0]))
            floors.append(float(fl[-1]))
            loaded = out[1]
    names = list(runs[0])
    med = {n: statistics.median(r[n] for r in runs) for n in names}
    floor = statistics.median(floors)
    print(f"== {demo.name}: CPU time of each step of the worksheet command in a fresh process, median of {repeats}")
    for n in names:
        print(f"  {n:42s} {med[n] * 1e3:8.1f} ms")
    own = med["worksheet: story (figures, maps, tables)"] + med["worksheet: layout and PDF"] + med["import report"]
    print(f"  {'floor: fresh process writing the minimal document':42s} {floor * 1e3:8.1f} ms")
    print(f"  {'worksheet (report imports + story + PDF)':42s} {own * 1e3:8.1f} ms = {own / floor:.1f}x the floor; "
          f"all steps {sum(med.values()) * 1e3:.1f} ms; {loaded}")


def bench_wire_verdict(repeats: int) -> None:
    """The wire demo's share of issue-10 solver work, and the demo with its dipoles declared over free space.

    The extra work: the solver at every place (not only inside lambda/2pi of the declared position),
    compliance distances checked on shells around the wires, and, for a wire declared over free space,
    a second solution over a perfect ground (the bound) at places, in maps and on the shells.
    """
    import rfsafe.assess as A
    from rfsafe.report.worksheet import write_worksheet
    from rfsafe.station import load_station

    demo = DEMOS[1]
    spent = {"places": 0.0, "shells": 0.0, "bound solves": 0.0}
    originals = {"places": A._wire_place_exposure, "shells": A._wire_compliance_distances,
                 "bound solves": A._ground_bound_solution}

    def timed(name):
        def run(*args, **kw):
            t = time.perf_counter()
            try:
                return originals[name](*args, **kw)
            finally:
                spent[name] += time.perf_counter() - t
        return run

    for name in originals:
        setattr(A, {"places": "_wire_place_exposure", "shells": "_wire_compliance_distances",
                    "bound solves": "_ground_bound_solution"}[name], timed(name))
    try:
        t0 = time.perf_counter()
        A.assess(load_station(demo))
        total = time.perf_counter() - t0
    finally:
        A._wire_place_exposure = originals["places"]
        A._wire_compliance_distances = originals["shells"]
        A._ground_bound_solution = originals["bound solves"]
    print(f"== {demo.name}: issue-10 wire work inside one load + assess ({total * 1e3:.1f} ms)")
    for name, t in spent.items():
        print(f"  {name:13s} {t * 1e3:8.1f} ms ({100 * t / total:4.1f} %)")
    # On the shared machine wall times swell with the load; the process CPU time of the same path is
    # close to what a quiet machine takes (one BLAS thread).
    with tempfile.TemporaryDirectory() as tmp:
        out = Path(tmp) / "demo.pdf"
        c0 = time.process_time()
        write_worksheet(A.assess(load_station(demo)), out, force=True)
        cpu = time.process_time() - c0
    print(f"report path CPU time (load + assess + render + write): {cpu * 1e3:8.1f} ms; target {TARGET_S:.1f} s: "
          f"{'met' if cpu < TARGET_S else 'NOT met'}")

    text = demo.read_text(encoding="utf-8")
    bound_text = text.replace('ground = "perfect"', 'ground = "free-space"', 2)   # the two dipoles
    with tempfile.TemporaryDirectory() as tmp:
        variant = Path(tmp) / "demo_wire_free_space.toml"
        variant.write_text(bound_text, encoding="utf-8")
        out = Path(tmp) / "variant.pdf"
        floor_best, _ = _best(lambda: build_pdf_floor(), repeats)
        full_best, full_med = _best(lambda: write_worksheet(A.assess(load_station(variant)), out, force=True), repeats)
    print("== dipoles declared over free space (bound: two solutions each)")
    print(f"report path (load + assess + render + write): {full_best * 1e3:8.1f} ms best, {full_med * 1e3:.1f} ms median")
    print(f"ratio report path / floor:                {full_best / floor_best:8.1f}x; target {TARGET_S:.1f} s: "
          f"{'met' if full_best < TARGET_S else 'NOT met'}")


def bench_wire_targets(repeats: int) -> None:
    """Issue 18 targets for the wire demo, in process CPU time (the shared machine's load swells wall time):
    the worksheet path under 1.2 s, the ``evaluate`` path (tables: no near-field maps) under 0.5 s, and
    configurations sharing an antenna and frequency solved once (10 of them against 1)."""
    import rfsafe.antenna.wire.solver as S
    from rfsafe.assess import assess
    from rfsafe.cli.answers import load_station_file
    from rfsafe.cli.cmd_evaluate import render_evaluation
    from rfsafe.remedies import with_answers
    from rfsafe.report.worksheet import write_worksheet
    from rfsafe.station import load_station

    demo = DEMOS[1]

    def cpu(fn) -> float:
        best = math.inf
        for _ in range(repeats):
            S._shared.clear()            # every run solves afresh, as a new process would
            c0 = time.process_time()
            fn()
            best = min(best, time.process_time() - c0)
        return best

    floor = cpu(build_pdf_floor)
    with tempfile.TemporaryDirectory() as tmp:
        out = Path(tmp) / "w.pdf"
        sheet = cpu(lambda: write_worksheet(assess(load_station(demo)), out, force=True))
        evaluate = cpu(lambda: render_evaluation(with_answers(load_station_file(demo, None), near_field_maps=False)))
        assess_only = cpu(lambda: assess(load_station(demo)))
        text = demo.read_text(encoding="utf-8")
        block = text[text.index("[[configurations]]"):text.index("[[configurations]]", text.index("[[configurations]]") + 1)]
        many = text.replace(block, "".join(block.replace('id = "40m-ssb"', f'id = "40m-ssb-{i}"') for i in range(10)), 1)
        one = text.replace(text[text.index("[[configurations]]"):text.index("[[places]]")], block, 1)
        (Path(tmp) / "one.toml").write_text(one, encoding="utf-8")
        (Path(tmp) / "many.toml").write_text(many, encoding="utf-8")
        t_one = cpu(lambda: assess(load_station(Path(tmp) / "one.toml")))
        t_many = cpu(lambda: assess(load_station(Path(tmp) / "many.toml")))
    print(f"== {demo.name}: issue-18 targets, process CPU time, best of {repeats} (solutions not kept between runs)")
    print(f"floor (minimal reportlab document):       {floor * 1e3:8.1f} ms")
    print(f"worksheet path (load + assess + write):   {sheet * 1e3:8.1f} ms = {sheet / floor:6.1f}x the floor; "
          f"target 1.2 s: {'met' if sheet < 1.2 else 'NOT met'}")
    print(f"evaluate path (load + answers + tables):  {evaluate * 1e3:8.1f} ms = {evaluate / floor:6.1f}x the floor; "
          f"target 0.5 s: {'met' if evaluate < 0.5 else 'NOT met'} (assess alone {assess_only * 1e3:.1f} ms)")
    print(f"assess, first configuration only:         {t_one * 1e3:8.1f} ms; the same plus 9 more sharing its antenna "
          f"and frequency: {t_many * 1e3:.1f} ms ({t_many / t_one:.2f}x)")


def build_pdf_floor():
    """The floor: a minimal reportlab document (one page, one paragraph)."""
    from rfsafe.report.common import build_pdf, p

    return build_pdf([p("rfsafe benchmark floor: one paragraph.")], title="floor", author="", subject="",
                     date_iso="2026-01-01", header_left="", header_right="", footer_left="")


def bench(DEMO: Path, repeats: int) -> None:
    t0 = time.perf_counter()
    from rfsafe.assess import assess
    from rfsafe.report.common import build_pdf, p
    from rfsafe.report.worksheet import build_worksheet_pdf, write_worksheet
    from rfsafe.station import load_station
    import_s = time.perf_counter() - t0

    def fresh():
        return assess(load_station(DEMO))

    t0 = time.perf_counter()
    first = build_worksheet_pdf(assess(load_station(DEMO)))   # first build: font parsing, caches
    first_s = time.perf_counter() - t0

    def minimal():
        return build_pdf([p("rfsafe benchmark floor: one paragraph.")], title="floor", author="", subject="",
                         date_iso="2026-01-01", header_left="", header_right="", footer_left="")

    with tempfile.TemporaryDirectory() as tmp:
        out = Path(tmp) / "demo.pdf"

        def cli_path():
            write_worksheet(fresh(), out, force=True)

        floor_best, floor_med = _best(minimal, repeats)
        full_best, full_med = _best(cli_path, repeats)
        res = assess(load_station(DEMO))
        load_best, _ = _best(fresh, repeats)
        render_best, _ = _best(lambda: build_worksheet_pdf(res), repeats)
        size = out.stat().st_size

    print(f"== {DEMO.name}")
    print(f"demo worksheet: {len(first)} bytes in memory, {size} bytes on disk")
    print(f"imports (assess, station, report):        {import_s * 1e3:8.1f} ms")
    print(f"first build (fonts parsed, caches cold):  {first_s * 1e3:8.1f} ms")
    print(f"minimal reportlab document (floor):       {floor_best * 1e3:8.1f} ms best, {floor_med * 1e3:.1f} ms median")
    print(f"load + assess:                            {load_best * 1e3:8.1f} ms best")
    print(f"render worksheet:                         {render_best * 1e3:8.1f} ms best")
    print(f"report path (load + assess + render + write): {full_best * 1e3:8.1f} ms best, "
          f"{full_med * 1e3:.1f} ms median")
    print(f"ratio report path / floor:                {full_best / floor_best:8.1f}x")
    cold = import_s + first_s
    print(f"cold path (imports + first build):        {cold * 1e3:8.1f} ms; target {TARGET_S:.1f} s: "
          f"{'met' if cold < TARGET_S and full_best < TARGET_S else 'NOT met'}")


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 5)
