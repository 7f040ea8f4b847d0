"""The equilibrium measure as text (table, JSON) and as an HDF5 group.

These are the only places where an :class:`equilibrium.EquilibriumMeasure`
is turned into output; the command ``workbench equilibrium`` and the run
pipeline both use them.
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING

import numpy as np

from equilibrium.measure import TOLERANCES, EquilibriumMeasure

if TYPE_CHECKING:
    from workbench.results import Group


def measure_summary(mu: EquilibriumMeasure) -> dict:
    """The JSON object of ``workbench equilibrium --json``."""
    data = mu.to_dict()
    data["tolerances"] = {k: v for k, v in TOLERANCES.items() if k in data["checks"]}
    return data


def measure_json(mu: EquilibriumMeasure) -> str:
    from workbench.jsontext import json_text

    return json_text(measure_summary(mu))


def _fmt(value: float) -> str:
    return f"{value:.15g}"


def measure_table(mu: EquilibriumMeasure, title: str) -> str:
    """A readable table: bands, masses, filling fractions, constants and the checks."""
    lines = [title]
    status = "verified" if mu.verified else "NOT VERIFIED"
    lines.append(f"kind: {mu.kind}   bands: {mu.bands}   {mu.classification}   {status}")
    lines.append(positivity_line(mu))
    lines.append("")
    lines.append(f"{'band':>4}  {'a_j':>22}  {'b_j':>22}  {'edges':<10}  {'mass':>18}")
    for j, ((a, b), (left, right), m) in enumerate(zip(mu.support, mu.edges, mu.masses), start=1):
        lines.append(f"{j:>4}  {_fmt(a):>22}  {_fmt(b):>22}  {left + '/' + right:<10}  {_fmt(m):>18}")
    if len(mu.omega):
        lines.append("")
        lines.append("filling fractions Omega_j = mu([a_{j+1}, b_k]): " + ", ".join(_fmt(o) for o in mu.omega))
    lines.append("")
    lines.append(f"equilibrium constant  ell = {_fmt(mu.lagrange)}")
    lines.append(f"energy                I_V = {_fmt(mu.energy)}")
    if mu.capacity is not None:
        lines.append(f"capacity              cap = {_fmt(mu.capacity)}")
    lines.append("")
    lines.append(f"{'check':<30} {'value':>10}  tolerance")
    for name, value in mu.checks.items():
        bound = TOLERANCES.get(name)
        if bound is None:
            mark, text = " ", ""
        else:
            lower = name in ("density_margin", "min_effective_potential")
            ok = (value >= bound) if lower else (value <= bound)
            mark = "ok" if ok else "FAIL"
            text = f"{'>=' if lower else '<='} {bound:.0e}"
        lines.append(f"  {name:<28} {value:10.2e}  {text:<10} {mark}")
    if mu.message:
        lines.append("")
        lines.append(mu.message)
    return "\n".join(lines)


def positivity_line(mu: EquilibriumMeasure) -> str:
    """``positive: yes`` or where the density is negative, how much, and what that means."""
    minimum = mu.to_dict()["density_minimum"]
    if mu.positive:
        return f"positive: yes   density_minimum = {minimum:.3g} (regular part, relative to its maximum)"
    pieces, mass = mu.negative_part()
    where = " U ".join(f"[{a:.6g}, {b:.6g}]" for a, b in pieces)
    return (f"positive: NO   the density is negative on {where} (negative mass {mass:.3g}, "
            f"density_minimum = {minimum:.3g})\n"
            "  the zeros of orthogonal polynomials on the set follow the positive equilibrium measure "
            "on it instead (without --signed)")


def density_grid(mu: EquilibriumMeasure, grid_points: int = 801, end_points: int = 64) -> np.ndarray:
    """Points of Σ for the stored density: uniform, plus ``end_points`` clustered at each band end.

    Near a soft end ψ ~ |x - e|^{1/2} and near a hard end ψ ~ |x - e|^{-1/2}; a uniform
    grid stops short of the end and a plotted curve seems to jump there.  The clustered
    points are x = e ± w sin²(πk/(4m)) (w the band width, k = 1..m), and soft ends are
    points of the grid themselves.
    """
    support = np.asarray(mu.support, dtype=float).reshape(-1, 2)
    lo, hi = support[0, 0], support[-1, 1]
    pad = 0.08 * (hi - lo)
    pieces = [np.linspace(lo - pad, hi + pad, grid_points)]
    steps = np.sin(0.25 * np.pi * np.arange(1, end_points + 1) / end_points) ** 2
    for (a, b), (left, right) in zip(support, mu.edges):
        width = b - a
        pieces += [a + 0.5 * width * steps, b - 0.5 * width * steps]
        pieces += [np.array([e]) for e, kind in ((a, left), (b, right)) if kind == "soft"]
    x = np.unique(np.concatenate(pieces))
    hard = [e for (a, b), (left, right) in zip(support, mu.edges) for e, kind in ((a, left), (b, right))
            if kind == "hard"]
    keep = mu.on.contains(x) & ~np.isin(x, hard)
    return x[keep]


#: the entries of :meth:`EquilibriumMeasure.to_dict` stored as datasets of the group (the rest are attributes)
_ARRAYS = {
    "support": "bands [a_j, b_j], ascending (rows j = 1..k)",
    "edges": "kind of each band end: 'soft' (density ~ sqrt) or 'hard' (density ~ 1/sqrt)",
    "masses": "band masses mu([a_j, b_j]), sum 1",
    "omega": "filling fractions Omega_j = mu([a_{j+1}, b_k]), the mass right of gap j",
}


def measure_group(mu: EquilibriumMeasure, grid_points: int = 801) -> Group:
    """The /equilibrium group of a results file: :meth:`EquilibriumMeasure.to_dict` (arrays as
    datasets, the rest as attributes), the conventions, and the density on a grid."""
    from equilibrium.conventions import CONVENTIONS
    from workbench.results import Group  # h5py (0.2 s) only when a file is written

    data = mu.to_dict()
    node = Group()
    node.attrs.update({"description": "equilibrium measure mu_V of the field on the set", "conventions": CONVENTIONS})
    node.attrs.update({key: value for key, value in data.items() if key not in _ARRAYS and key != "singularities"})
    if data["capacity"] is None:
        node.attrs["capacity"] = "none"
    support = np.asarray(data["support"], dtype=float).reshape(-1, 2)
    node.add("support", support, _ARRAYS["support"])
    node.add("edges", np.asarray(data["edges"], dtype=object).reshape(-1, 2), _ARRAYS["edges"])
    node.add("masses", np.asarray(data["masses"], dtype=float), _ARRAYS["masses"])
    node.add("omega", np.asarray(data["omega"], dtype=float).reshape(-1), _ARRAYS["omega"])
    x = density_grid(mu, grid_points)
    node.add("x", x, "grid for the density and the effective potential: uniform over the support "
                     "and a margin, plus points clustered at every band end (soft ends included, "
                     "where the density is 0; hard ends, where it is infinite, left out)")
    node.add("density", np.asarray(mu.density(x), dtype=float), "density psi(x) of mu_V on the grid x")
    node.add("distribution", np.asarray(mu.distribution(x), dtype=float), "F(x) = mu((-inf, x])")
    node.add(
        "effective_potential",
        np.asarray(mu.effective_potential(x), dtype=float),
        "2 U^mu(x) + V(x) - ell: 0 on S, >= 0 off S for the minimiser",
    )
    return node
