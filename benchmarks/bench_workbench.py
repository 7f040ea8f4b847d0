"""Speed of the workbench workflow; prints a table.

Targets (two cores):
  * ``workbench demo`` end to end in under 4 s (issue #16; it was 60 s), and
    ``workbench plot`` of its file, wall and CPU (the figures run on two processes
    when the second core is free, so the CPU says what the work costs);
  * a 100 x 100 phase-diagram sweep of V = x^4/4 - t x^2/2 + s x over
    (t, s) in [0, 4] x [0, 1] in under 120 s (about 10-20 ms per point);
  * the per-point cost of one equilibrium solve, measured alone.

Usage::

    python benchmarks/bench_workbench.py [--grid 100] [--workers 2] [--skip-demo] [--skip-sweep]

The load average is printed with the table: other work on the machine
slows every figure here, and the numbers are meant to be read with it.
"""

from __future__ import annotations

import argparse
import os
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent


def _children_cpu() -> float:
    import resource

    usage = resource.getrusage(resource.RUSAGE_CHILDREN)
    return usage.ru_utime + usage.ru_stime


def time_command(*arguments: str) -> tuple[float, float]:
    """Wall and CPU seconds (the process and the children it waited for) of ``workbench ARGUMENTS``."""
    start, cpu = time.perf_counter(), _children_cpu()
    subprocess.run([sys.executable, "-m", "workbench", *arguments], check=True, cwd=ROOT,
                   stdout=subprocess.DEVNULL)
    return time.perf_counter() - start, _children_cpu() - cpu


def time_demo(out: Path) -> tuple[float, float]:
    return time_command("demo", "--out", str(out), "--quiet")


def time_point(samples: int = 40) -> tuple[float, float]:
    """Median and 90th percentile of one sweep point (field construction + solve)."""
    import numpy as np

    from workbench.sweep import equilibrium_point_fast

    payload = {"expression": "x**4/4 - t*x**2/2 + s*x", "parameters": {"t": 1.0, "s": 0.0},
               "intervals": [[-np.inf, np.inf]], "signed": False}
    rng = np.random.default_rng(0)
    equilibrium_point_fast(payload, {"t": 1.0, "s": 0.1})  # warm-up (imports, caches)
    times = []
    for t, s in zip(rng.uniform(0, 4, samples), rng.uniform(0, 1, samples)):
        start = time.perf_counter()
        equilibrium_point_fast(payload, {"t": float(t), "s": float(s)})
        times.append(time.perf_counter() - start)
    times.sort()
    return statistics.median(times), times[int(0.9 * (len(times) - 1))]


def time_sweep(grid: int, workers: int, out: Path) -> tuple[float, int, int]:
    from workbench.case import parse_case
    from workbench.sweep import sweep_case

    text = (ROOT / "cases" / "sweep_quartic.toml").read_text()
    text = text.replace("num = 100", f"num = {grid}")
    case = parse_case(text, source="sweep_quartic.toml")
    start = time.perf_counter()
    result = sweep_case(case, out, workers=workers, progress=False, draw=True)
    return time.perf_counter() - start, result.outcome.computed, result.outcome.failed


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--grid", type=int, default=100)
    parser.add_argument("--workers", type=int, default=2)
    parser.add_argument("--skip-demo", action="store_true")
    parser.add_argument("--skip-sweep", action="store_true")
    args = parser.parse_args()

    rows = []
    with tempfile.TemporaryDirectory() as tmp:
        tmp = Path(tmp)
        median, p90 = time_point()
        rows.append(("sweep point (solve), median", f"{1e3 * median:.1f} ms", "10-20 ms"))
        rows.append(("sweep point (solve), 90th percentile", f"{1e3 * p90:.1f} ms", ""))
        if not args.skip_demo:
            wall, cpu = time_demo(tmp / "demo")
            rows.append(("workbench demo (end to end), wall", f"{wall:.2f} s", "< 4 s"))
            rows.append(("  CPU (all its processes)", f"{cpu:.2f} s", ""))
            wall, cpu = time_command("plot", str(tmp / "demo" / "two_band_irrational" / "run.h5"),
                                     "--out", str(tmp / "plot"))
            rows.append(("workbench plot of the demo file, wall", f"{wall:.2f} s", ""))
            rows.append(("  CPU (all its processes)", f"{cpu:.2f} s", ""))
        if not args.skip_sweep:
            seconds, computed, failed = time_sweep(args.grid, args.workers, tmp / "sweep")
            rows.append((f"sweep {args.grid}x{args.grid}, {args.workers} workers",
                         f"{seconds:.1f} s", "< 120 s" if args.grid == 100 else ""))
            rows.append(("  points computed / failed", f"{computed} / {failed}", ""))
            rows.append(("  per point (wall x workers)",
                         f"{1e3 * seconds * args.workers / max(computed, 1):.1f} ms", ""))
    load = os.getloadavg()
    print(f"workbench benchmark on {os.cpu_count()} CPUs, load average "
          f"{load[0]:.2f} {load[1]:.2f} {load[2]:.2f}")
    width = max(len(r[0]) for r in rows)
    print(f"{'quantity':<{width}}  {'measured':>12}  {'target':>10}")
    for name, value, target in rows:
        print(f"{name:<{width}}  {value:>12}  {target:>10}")


if __name__ == "__main__":
    main()
