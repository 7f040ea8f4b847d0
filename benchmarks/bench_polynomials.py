"""Timings of the recurrence coefficients computed from the weight (workbench.polynomials).

    python benchmarks/bench_polynomials.py [--quick] [--plot] [--rounds R] [--large] [--floor [K ...]]

Three tables (and a fourth on its own).

1. ``recurrence_coefficients`` in process for n = K from 250 to 10⁴ (equilibrium
   measure for the node placement, both discretisations, both Stieltjes runs on
   two threads): wall and CPU time, the error estimate, the peak memory
   (tracemalloc, in a separate run so the timings are not slowed).
2. Issue 16: ``workbench recurrence --n 16000 --count 16000 --json`` through the CLI
   (a fresh process, start-up included) against a *bare pass*: K steps of six
   float64 vector operations on 2K nodes (the issue's yardstick) and on the M
   nodes of the primary discretisation, timed in this process.  The CLI run and
   the bare passes are interleaved in R rounds and each round gives its own
   ratio, so a busy machine inflates both sides alike; the median and the range
   of the ratios are printed.  Also one Stieltjes pass at K = 16000, compiled loop
   against numpy loop, interleaved.
3. ``--large``: n = K = 10⁵ through the CLI: wall time, CPU time and the peak
   resident memory of the child process, error estimate.
4. ``--floor K ...``: the rounding floor of the coefficients at these K (see
   :func:`table_floor`): the same discretisation summed in another order, with its
   log weights moved by one ulp or evaluated in plain double, with its nodes moved
   by one ulp (weights recomputed, or kept), beside the two-discretisation estimate.

The BLAS/OpenMP thread counts are set to 1 before numpy is imported; the
recurrence itself runs its two discretisations on two threads (``WORKBENCH_THREADS``).
"""

from __future__ import annotations

import os

for _name in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_name, "1")

import argparse  # noqa: E402
import json  # noqa: E402
import resource  # noqa: E402
import subprocess  # noqa: E402
import sys  # noqa: E402
import time  # noqa: E402
import tracemalloc  # noqa: E402
from pathlib import Path  # noqa: E402

import numpy as np  # noqa: E402

from equilibrium import Field  # noqa: E402
from workbench.polynomials.discretisation import PRIMARY, discretise, measure_for  # noqa: E402
from workbench.polynomials.recurrence import kernel_for, recurrence_coefficients, stieltjes  # noqa: E402
from equilibrium.weight import Weight  # noqa: E402

FIELD = "x**4/4 - 1.5*x**2 + 0.2*x"  # non-symmetric double well, two bands at t = 1
TARGETS = {4000: 2.0, 10000: 15.0}   # seconds (issue #3)
CLI_SIZE = 16000                     # issue 16: within 1.2 x the bare pass
CLI_RATIO_TARGET = 1.2
LARGE_SIZE = 100000                  # issue 16: 90 s, 1 GB on two cores
LARGE_TARGETS = (90.0, 1024.0)


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


def bare_pass(nodes: int, steps: int) -> float:
    """Wall time of ``steps`` steps of six float64 vector operations on ``nodes`` numbers."""
    rng = np.random.default_rng(0)
    x, y = rng.random(nodes), rng.random(nodes)
    z = np.empty(nodes)
    start = time.perf_counter()
    for _ in range(steps):
        np.multiply(x, y, out=z)
        z *= x
        z -= y
        z += x
        z.sum()
        z.sum()
    return time.perf_counter() - start


def cli(size: int) -> tuple[float, float, float, dict]:
    """Wall time, CPU time (children), peak RSS [MB] and the JSON of one ``workbench recurrence`` run."""
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    start = time.perf_counter()
    done = subprocess.run(
        [sys.executable, "-m", "workbench", "recurrence", "--potential", FIELD, "--n", str(size),
         "--count", str(size), "--json"], capture_output=True, text=True, check=True)
    wall = time.perf_counter() - start
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    cpu = (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime)
    return wall, cpu, after.ru_maxrss / 1024, json.loads(done.stdout)


def table_in_process(args) -> None:
    field = Field.from_expression(FIELD)
    sizes = [4000, 10000] if args.quick else [250, 500, 1000, 2000, 4000, 7000, 10000]
    measure(field, 100)  # warm-up (imports, caches)
    print(f"V = {FIELD}, weight exp(-nV), coefficients 0..K with K = n; Stieltjes loop: {kernel_for()}")
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


def table_cli(rounds: int) -> None:
    size = CLI_SIZE
    weight = Weight(Field.from_expression(FIELD), size)
    disc = discretise(weight, size + 1, PRIMARY, measure_for(weight, size + 1))
    print()
    print(f"issue 16: workbench recurrence --n {size} --count {size} --json (fresh process) against a bare pass "
          f"of six vector operations x {size} steps; {rounds} interleaved rounds; "
          f"load average {os.getloadavg()[0]:.2f}")
    print(f"{'round':>5} {'CLI wall':>9} {'CLI cpu':>8} {'bare 2K':>8} {'bare M':>7} {'CLI/2K':>7} {'CLI/M':>6} "
          f"{'error est.':>11}")
    ratios, ratios_m = [], []
    for r in range(rounds):
        wall, cpu, _, out = cli(size)
        bare2k = bare_pass(2 * size, size)
        bare_m = bare_pass(disc.size, size)
        ratios.append(wall / bare2k)
        ratios_m.append(wall / bare_m)
        print(f"{r + 1:>5} {wall:>9.2f} {cpu:>8.2f} {bare2k:>8.2f} {bare_m:>7.2f} {ratios[-1]:>7.2f} "
              f"{ratios_m[-1]:>6.2f} {out['error_estimate']:>11.1e}")
    print(f"CLI / bare pass on 2K nodes: median {np.median(ratios):.2f}, range {min(ratios):.2f}-{max(ratios):.2f} "
          f"(target {CLI_RATIO_TARGET}); on the M = {disc.size} nodes: median {np.median(ratios_m):.2f}")
    print(f"one Stieltjes pass, n = K = {size}, M = {disc.size}: compiled loop against numpy loop, interleaved")
    if kernel_for() != "compiled":
        print("  (the compiled loop is not built: pip install -e . builds it)")
        return
    pairs = []
    for _ in range(max(1, rounds // 2)):
        start = time.perf_counter()
        a1, b1 = stieltjes(disc, size, kernel="compiled")
        compiled = time.perf_counter() - start
        start = time.perf_counter()
        a0, b0 = stieltjes(disc, size, kernel="numpy")
        numpy_time = time.perf_counter() - start
        pairs.append((compiled, numpy_time))
    difference = max(np.max(np.abs(a1 - a0)), np.max(np.abs(b1 - b0)))
    for compiled, numpy_time in pairs:
        print(f"  compiled {compiled:.2f} s ({compiled / disc.size / size * 1e9:.2f} ns per node and step), "
              f"numpy {numpy_time:.2f} s: {numpy_time / compiled:.1f}x")
    print(f"  largest difference of the coefficients between the loops: {difference:.1e}")


def table_large() -> None:
    print()
    print(f"issue 16: workbench recurrence --n {LARGE_SIZE} --count {LARGE_SIZE} --json; "
          f"load average {os.getloadavg()[0]:.2f}")
    wall, cpu, rss, out = cli(LARGE_SIZE)
    checks = out["checks"]
    print(f"  wall {wall:.1f} s (target {LARGE_TARGETS[0]:.0f} s), cpu {cpu:.1f} s, peak resident {rss:.0f} MB "
          f"(target {LARGE_TARGETS[1]:.0f} MB), nodes {int(checks['nodes_primary'])}+{int(checks['nodes_secondary'])}, "
          f"error estimate {out['error_estimate']:.1e}, verified {out['verified']}")


def table_floor(sizes) -> None:
    """How far below the two-discretisation estimate rounding alone reaches (issue 16).

    The primary discretisation (log weights as double-double pairs, compensated
    Horner for -nV: ``Weight.log_weight_pair``) run once plainly, then perturbed one
    way at a time; each column is the largest change of a_k, b_k (k ≤ K):

    * order: the nodes summed in a random order (only the order of the sums changes);
    * log w ±1 ulp: every log weight moved by up to one ulp of its own value (the
      rounding of a log weight stored as one double: ~1e-11 absolute at n = 10⁵);
    * plain Horner: the log weights of the code before the compensated evaluation
      (-nV by plain Horner in double, one double per weight);
    * nodes ±1 ulp: every node moved by up to one ulp (relative eps) and its log
      weight recomputed at the moved node (double-double): the rounding of the nodes
      themselves, what remains with exact weights;
    * nodes, w kept: the nodes moved, the log weights not (a weight error of
      ~n |V'| eps |x| on top of the node move);
    * two discretisations: the error estimate.
    The columns run on two threads (the compiled loop releases the GIL).
    """
    import dataclasses
    from concurrent.futures import ThreadPoolExecutor

    from equilibrium.compensated import two_sum
    from workbench.polynomials.discretisation import SECONDARY

    print()
    print(f"rounding floor of the coefficients (largest |change| of a_k, b_k, k <= K); "
          f"load average {os.getloadavg()[0]:.2f}")
    names = ["order", "log w +-1 ulp", "plain Horner", "nodes +-1 ulp", "nodes, w kept", "two discr."]
    print(f"{'K':>7} {'M':>7} " + " ".join(f"{name:>14}" for name in names), flush=True)
    eps = np.finfo(float).eps
    for size in sizes:
        weight = Weight(Field.from_expression(FIELD), size)
        m = measure_for(weight, size + 1)
        disc = discretise(weight, size + 1, PRIMARY, m)
        low = disc.log_weights_low if disc.log_weights_low is not None else np.zeros(disc.size)
        rng = np.random.default_rng(size)
        perm = rng.permutation(disc.size)
        shuffled = dataclasses.replace(disc, nodes=disc.nodes[perm], log_weights=disc.log_weights[perm],
                                       log_weights_low=low[perm])
        ulp_weights = dataclasses.replace(disc, log_weights=disc.log_weights * (1 + eps * rng.uniform(-1, 1, disc.size)))
        hi, lo = weight.log_weight_pair(disc.nodes)
        horner_error = (weight.log_weight(disc.nodes) - hi) - lo   # plain Horner minus the pair
        plain = dataclasses.replace(disc, log_weights=disc.log_weights + (low + horner_error), log_weights_low=None)
        moved = disc.nodes * (1 + eps * rng.uniform(-1, 1, disc.size))
        hi2, lo2 = weight.log_weight_pair(moved)
        change = (hi2 - hi) + (lo2 - lo)                             # hi2 - hi is exact (Sterbenz)
        top, rest = two_sum(disc.log_weights, low + change)
        recomputed = dataclasses.replace(disc, nodes=moved, log_weights=top, log_weights_low=rest)
        kept = dataclasses.replace(disc, nodes=moved)
        others = [shuffled, ulp_weights, plain, recomputed, kept, discretise(weight, size + 1, SECONDARY, m)]
        with ThreadPoolExecutor(max_workers=2) as pool:
            runs = list(pool.map(lambda d: stieltjes(d, size), [disc] + others))
        a, b = runs[0]
        rows = [max(np.max(np.abs(a - a2)), np.max(np.abs(b - b2))) for a2, b2 in runs[1:]]
        print(f"{size:>7} {disc.size:>7} " + " ".join(f"{value:>14.1e}" for value in rows), flush=True)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="only the two target sizes of table 1")
    parser.add_argument("--plot", action="store_true", help="write benchmarks/results/polynomials_time.png")
    parser.add_argument("--rounds", type=int, default=5, help="interleaved rounds of table 2 (default 5)")
    parser.add_argument("--large", action="store_true", help="also n = K = 10^5 through the CLI (about a minute)")
    parser.add_argument("--only-cli", action="store_true", help="skip table 1")
    parser.add_argument("--floor", type=int, nargs="*", default=None, metavar="K",
                        help="only the rounding-floor table at these K (default 4000 16000)")
    args = parser.parse_args()
    if args.floor is not None:
        table_floor(args.floor or [4000, 16000])
        return
    if not args.only_cli:
        table_in_process(args)
    table_cli(args.rounds)
    if args.large:
        table_large()


if __name__ == "__main__":
    main()
