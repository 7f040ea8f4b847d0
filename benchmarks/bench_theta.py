"""Timings of Riemann theta sums, period matrices and the Abel map (median of repeats after warm-up).

Run:  python benchmarks/bench_theta.py [--reduction-only]
Targets: theta of genus 3 at 1e5 points <= 1 s; curve of genus 2 in a few ms.
The basis reduction (issue 16): genus 4-6 with and without it, interleaved in one run.
"""

from __future__ import annotations

import os
import sys
import time

import numpy as np

from gfunction.curve import curve_of_bands
from gfunction import theta as theta_module
from gfunction.theta import riemann_theta


def median_time(fn, repeats: int = 5) -> float:
    """Median wall time; also records the median CPU time of this process in LAST_CPU."""
    global LAST_CPU
    fn()                                   # warm-up (rule caches, allocations)
    times, cpus = [], []
    for _ in range(repeats):
        t0, c0 = time.perf_counter(), time.process_time()
        fn()
        times.append(time.perf_counter() - t0)
        cpus.append(time.process_time() - c0)
    LAST_CPU = float(np.median(cpus))
    return float(np.median(times))


LAST_CPU = float("nan")


def bands_of_genus(g: int) -> list[tuple[float, float]]:
    edges = np.linspace(-3.0, 3.0, 2 * (g + 1))
    return [(edges[2 * j], edges[2 * j + 1]) for j in range(g + 1)]


def reduction_table(rounds: int = 3) -> None:
    """Lattice points and arguments per second with and without the basis reduction (same rounds)."""
    rng = np.random.default_rng(1)
    original = theta_module._reduction
    identity = lambda t: np.eye(t.shape[0], dtype=np.int64)  # noqa: E731
    print(f"Basis reduction (LLL), tol 1e-14, arguments u = x + 0.5 i y (normal); load {os.getloadavg()[0]:.1f}")
    print(f"{'case':>14} {'args':>6} {'points before':>13} {'after':>8} {'args/s before':>14} "
          f"{'after':>9} {'speed-up (rounds)':>18}")
    cases = []
    for g in (4, 5, 6):
        cases.append((f"bands g={g}", curve_of_bands(bands_of_genus(g)).tau))
    for g in (4, 5):
        t = curve_of_bands(bands_of_genus(g)).tau
        cases.append((f"0.5 Im, g={g}", t.real + 0.5j * t.imag))     # smaller Im tau
    for name, tau in cases:
        g = tau.shape[0]
        npts = {4: 2000, 5: 500, 6: 100}[g]
        u = rng.normal(size=(npts, g)) + 0.5j * rng.normal(size=(npts, g))
        counts, rates = {}, {True: [], False: []}
        for _ in range(rounds):
            for reduce in (False, True):
                theta_module._reduction = original if reduce else identity
                if reduce not in counts:
                    counts[reduce] = riemann_theta(u, tau).lattice_points     # covers all npts shifts
                t = median_time(lambda: riemann_theta(u, tau), repeats=1)
                rates[reduce].append(npts / t)
        theta_module._reduction = original
        ratio = [a / b for a, b in zip(rates[True], rates[False])]
        print(f"{name:>14} {npts:>6} {counts[False]:>13} {counts[True]:>8} {np.median(rates[False]):>14.0f} "
              f"{np.median(rates[True]):>9.0f} {min(ratio):>8.2f}-{max(ratio):<8.2f}")
    print()


def main() -> None:
    reduction_table()
    if "--reduction-only" in sys.argv:
        return
    rng = np.random.default_rng(0)
    print("Riemann theta (tol 1e-14), period matrices of equally spaced bands")
    print("(wall = elapsed seconds; cpu = CPU seconds of this process, less sensitive to a loaded machine)")
    print(f"{'genus':>5} {'points':>8} {'gradient':>8} {'lattice':>8} {'wall s':>9} {'cpu s':>9} {'us/point':>9}")
    for g in (1, 2, 3, 4, 5, 6):
        tau = curve_of_bands(bands_of_genus(g)).tau
        npts = 100_000 if g <= 3 else (10_000 if g == 4 else 1_000)
        u = rng.normal(size=(npts, g)) + 0.5j * rng.normal(size=(npts, g))
        for grad in (False, True):
            n_lat = riemann_theta(u[:2], tau, gradient=grad).lattice_points
            t = median_time(lambda: riemann_theta(u, tau, gradient=grad), repeats=3)
            print(f"{g:>5} {npts:>8} {str(grad):>8} {n_lat:>8} {t:>9.3f} {LAST_CPU:>9.3f} {1e6 * t / npts:>9.2f}")
    # a random genus-3 Riemann matrix as in the tests
    A = rng.normal(size=(3, 3))
    tau = 0.5 * (lambda X: X + X.T)(rng.normal(size=(3, 3))) + 1j * (A @ A.T + 0.4 * np.eye(3))
    u = rng.normal(size=(100_000, 3)) + 0.5j * rng.normal(size=(100_000, 3))
    n_lat = riemann_theta(u[:2], tau).lattice_points
    t = median_time(lambda: riemann_theta(u, tau), repeats=3)
    print(f"{'3 rnd':>5} {100_000:>8} {'False':>8} {n_lat:>8} {t:>9.3f} {LAST_CPU:>9.3f} {1e6 * t / 1e5:>9.2f}")
    # real arguments (y = 0): no shift, the smallest point set
    ur = u.real.copy()
    n_lat = riemann_theta(ur[:2], tau).lattice_points
    t = median_time(lambda: riemann_theta(ur, tau), repeats=3)
    print(f"{'3 re':>5} {100_000:>8} {'False':>8} {n_lat:>8} {t:>9.3f} {LAST_CPU:>9.3f} {1e6 * t / 1e5:>9.2f}")

    print()
    print("Curve construction (periods, two rule sizes, rays to infinity) and Abel map at 1e4 points")
    print(f"{'genus':>5} {'curve ms':>9} {'tiny-gap ms':>12} {'abel 1e4 ms':>12}")
    z = rng.uniform(-4, 4, 10_000) + 1j * rng.uniform(-2, 2, 10_000)
    for g in (1, 2, 3, 4, 6):
        bands = bands_of_genus(g)
        tiny = [(a, b) for a, b in bands]
        tiny[1] = (tiny[0][1] + 1e-8 * 6.0, tiny[1][1])          # gap of 1e-8 of the hull
        t_curve = median_time(lambda: curve_of_bands(bands), repeats=7)
        t_tiny = median_time(lambda: curve_of_bands(tiny), repeats=7)
        c = curve_of_bands(bands)
        t_abel = median_time(lambda: c.abel(z), repeats=3)
        print(f"{g:>5} {1e3 * t_curve:>9.2f} {1e3 * t_tiny:>12.2f} {1e3 * t_abel:>12.1f}")


if __name__ == "__main__":
    main()
