"""Timings of the recurrence coefficients computed from the weight (workbench.polynomials).

    python benchmarks/bench_polynomials.py [--quick] [--plot]

Prints a table: n = K, nodes of the two discretisations, wall time of
``recurrence_coefficients`` (equilibrium measure for the node placement, both
discretisations, both Stieltjes runs), the error estimate, and the peak memory
(tracemalloc, in a separate run so the timings are not slowed).  The CPU
time (``time.process_time``) is printed beside the wall time: on a busy
machine the wall time is inflated by other processes.  One core:
the BLAS/OpenMP thread counts are set to 1 before numpy is imported.
"""

from __future__ import annotations

import os

for _name in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_name, "1")

import argparse  # noqa: E402
import resource  # noqa: E402
import time  # noqa: E402
import tracemalloc  # noqa: E402
from pathlib import Path  # noqa: E402

from equilibrium import Field  # noqa: E402
from workbench.polynomials.recurrence import recurrence_coefficients  # noqa: E402
from workbench.polynomials.weight import Weight  # noqa: E402

FIELD = "x**4/4 - 1.5*x**2 + 0.2*x"  # non-symmetric double well, two bands at t = 1
TARGETS = {4000: 2.0, 10000: 15.0}   # seconds (issue #3)


def measure(field: Field, size: int) -> tuple[float, float, object]:
    start, cpu = time.perf_counter(), time.process_time()
    rc = recurrence_coefficients(Weight(field, size), size)
    return time.perf_counter() - start, time.process_time() - cpu, rc


def peak_memory(field: Field, size: int) -> float:
    tracemalloc.start()
    recurrence_coefficients(Weight(field, size), size)
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    return peak / 2**20


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="only the two target sizes")
    parser.add_argument("--plot", action="store_true", help="write benchmarks/results/polynomials_time.png")
    args = parser.parse_args()
    field = Field.from_expression(FIELD)
    sizes = [4000, 10000] if args.quick else [250, 500, 1000, 2000, 4000, 7000, 10000]
    measure(field, 100)  # warm-up (imports, caches)
    print(f"V = {FIELD}, weight exp(-nV), coefficients 0..K with K = n, one core")
    print(f"load average before the run: {os.getloadavg()[0]:.2f} (wall time is inflated when the machine is busy)")
    print(f"{'n = K':>7} {'nodes':>15} {'wall [s]':>9} {'cpu [s]':>8} {'target':>7} {'error est.':>11} {'peak MB':>8}")
    rows = []
    for size in sizes:
        elapsed, cpu, rc = measure(field, size)
        memory = peak_memory(field, size) if size in TARGETS or size == sizes[-1] else float("nan")
        nodes = f"{int(rc.checks['nodes_primary'])}+{int(rc.checks['nodes_secondary'])}"
        target = f"{TARGETS[size]:.0f} s" if size in TARGETS else ""
        print(f"{size:>7} {nodes:>15} {elapsed:>9.2f} {cpu:>8.2f} {target:>7} {rc.error_estimate:>11.1e} {memory:>8.0f}")
        rows.append((size, elapsed))
    print(f"process peak resident memory {resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024:.0f} MB")
    if args.plot:
        import matplotlib

        matplotlib.use("Agg")
        import matplotlib.pyplot as plt

        out = Path(__file__).resolve().parent / "results"
        out.mkdir(parents=True, exist_ok=True)
        fig, ax = plt.subplots(figsize=(5, 3.5))
        ax.loglog([r[0] for r in rows], [r[1] for r in rows], "o-")
        ax.set_xlabel("K = n")
        ax.set_ylabel("wall time [s]")
        ax.set_title("recurrence coefficients from the weight")
        fig.tight_layout()
        fig.savefig(out / "polynomials_time.png", dpi=120)
        print(f"wrote {out / 'polynomials_time.png'}")


if __name__ == "__main__":
    main()
