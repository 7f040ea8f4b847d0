"""Timings of Riemann theta sums, period matrices and the Abel map (median of repeats after warm-up).

Run:  python benchmarks/bench_theta.py
Targets: theta of genus 3 at 1e5 points <= 1 s; curve of genus 2 in a few ms.
"""

from __future__ import annotations

import time

import numpy as np

from gfunction.curve import curve_of_bands
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


def main() -> None:
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
