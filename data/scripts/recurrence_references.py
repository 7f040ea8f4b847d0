"""Regenerate data/recurrence/*.csv: recurrence coefficients from the mpmath referee.

Each table is computed by ``workbench.polynomials.highprecision.recurrence_coefficients_mp``
(composite tanh–sinh quadrature in mpmath at 34 digits, step halving for its own error
estimate, Stieltjes procedure in fixed point; see that module's docstring for the method
and its sources).  The tests compare the double-precision engine against these files; they
never run this script (it takes minutes).

Usage (from the repository root)::

    python data/scripts/recurrence_references.py            # all tables
    python data/scripts/recurrence_references.py trap_quartic_n40_K36
"""

from __future__ import annotations

import datetime
import sys
from pathlib import Path

from equilibrium import Field, IntervalSet
from equilibrium.weight import PowerFactor, Weight
from workbench import __version__
from workbench.polynomials.highprecision import recurrence_coefficients_mp

OUT = Path(__file__).resolve().parents[1] / "recurrence"
DPS, LEVEL = 34, 5


def _quartic(t: float) -> Field:
    return Field.from_expression("x**4/4 - t*x**2/2", parameters={"t": t})


#: name -> (weight, K); the weights of the tests in tests/polynomials
TABLES = {
    "double_well_n30_K40": (Weight(Field.from_expression("x**4/4 - x**2 + 0.1*x"), 30), 40),
    "fisher_hartwig_n12_K30": (Weight(Field.from_expression("x**2/2"), 12, IntervalSet.real_line(),
                                      (PowerFactor(0.3, 0.4),)), 30),
    "trap_quartic_n40_K36": (Weight(Field.from_expression("x**4/4 - 1.5*x**2 + 0.3*x"), 40), 36),
    "quartic_t1.96_n40_K40": (Weight(_quartic(1.96), 40), 40),
    "quartic_t2.0_n40_K40": (Weight(_quartic(2.0), 40), 40),
    "quartic_t2.02_n40_K40": (Weight(_quartic(2.02), 40), 40),
}


def write(name: str) -> Path:
    weight, count = TABLES[name]
    ref = recurrence_coefficients_mp(weight, count, dps=DPS, level=LEVEL)
    if not ref.verified:
        raise SystemExit(f"{name}: the referee did not verify (step-halving difference {ref.error_estimate:.2e})")
    path = OUT / f"{name}.csv"
    lines = [
        f"# recurrence coefficients a_k, b_k (k = 0..{count}, a_0 = 0) of the weight {weight.description}",
        f"# source: workbench.polynomials.highprecision.recurrence_coefficients_mp, {ref.method}",
        f"# precision: the step-halving difference of the referee is {ref.error_estimate:.3e} "
        "(a bound for the coarse rule); values rounded to double precision (17 digits)",
        f"# log_mass: {ref.log_mass!r}",
        f"# generated: {datetime.date.today().isoformat()} by data/scripts/recurrence_references.py "
        f"(workbench {__version__})",
        "k,a,b",
    ]
    lines += [f"{k},{a!r},{b!r}" for k, (a, b) in enumerate(zip(ref.a.tolist(), ref.b.tolist()))]
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


def main(names: list[str]) -> None:
    for name in names or list(TABLES):
        print(write(name))


if __name__ == "__main__":
    main(sys.argv[1:])
