r"""Zeros of π_n next to an edge of the support: Airy (soft) and Bessel (hard) forms.

Inside the matching disc around an edge ``e`` the steepest-descent analysis gives
(``gfunction.local``, module docstring, for the matrices ``E``, ``Φ``, ``Ψ``)

    S = R P,   P = E · (model matrix of ζ) · e^{…σ₃} W^{-σ₃/2},

and the first column of the model matrix continues analytically from outside the
lens to the band (the lens factors undo its ray jumps), so on the band near ``e``

    π_n(x) ∝ (R E)_11 · m_11(ζ) + (R E)_12 · m_21(ζ)

with the first column ``(m_11, m_21)`` of ``Φ`` (Airy) or ``Ψ`` (Bessel), conjugated
by ``σ₃`` at left edges.  Its zeros solve one real equation in the exact local
variable ``ζ(x)``:

* soft edge:  ``Ai(ζ) + c Ai'(ζ) = 0``,  ``c = s (RK)_12 / ((RK)_11 ζ^{1/2})``;
* hard edge:  ``J_α(u) + (κ/2) u J_α'(u) = 0``,  ``u = 2|ζ|^{1/2} = n|φ_e|/2``,
  ``κ = i s (RK)_12 / ((RK)_11 ζ^{1/2})``,

where ``K = N U A^{-1}`` (``A = A_0`` or ``B_0``, σ₃-conjugated at left edges),
``s = +1`` at right and ``−1`` at left edges, and ``ζ^{1/2}`` is the Airy root
``ζ^{1/2}`` (``ζ = n^{2/3} f_e``) or the Bessel root ``−nφ_e/4``.  Both ``c`` and
``κ`` are real up to rounding (recorded in ``checks['imag_ratio']``).

Derivation of the Bessel form.  On the band ``ζ^{1/2} = σ i u/2`` (``σ = ±1``, the side
of the axis), and ``I_α(σ i y) = e^{σαπi/2} J_α(y)`` (NIST DLMF 10.27.6), so
``I_α'(σ i y) = −σ i e^{σαπi/2} J_α'(y)``: the first column of ``Ψ`` is
``e^{σαπi/2} (J_α(u), 2πi (u/2) J_α'(u))`` and the factor ``(2πζ^{1/2})^{σ₃/2}`` of
``E`` turns ``(RE)_12/(RE)_11`` into ``(RK)_12/((RK)_11 2πζ^{1/2})``.

Orders (the project's convention: order K keeps ``R = I + R^{(1)}/n + … + R^{(K)}/n^K``;
``E`` and the model functions are exact).  ``E_12/E_11`` is ``O(n^{-1/3})`` (Airy)
or ``O(n^{-1})`` (Bessel), while ``E_22/E_11 = O(n^{-2/3})`` resp. ``O(n^{-1})``
and ``E_21/E_11 = O(1)``; so the residual moves the ratio by ``O(n^{-1} ·
n^{-1/3})`` resp. ``O(n^{-2})``.  Measured in the local variable, the zeros have
the errors

=========  ======================  =========================  =================
order      ζ-error, soft edge      ζ-error, hard edge          x-error (soft/hard)
=========  ======================  =========================  =================
scaling    O(n^{-1/3})             O(n^{-1})                   n^{-1} / n^{-3}
0          O(n^{-4/3})             O(n^{-2})                   n^{-2} / n^{-4}
1          O(n^{-7/3})             O(n^{-3})                   n^{-3} / n^{-5}
2          O(n^{-10/3})            O(n^{-4})                   n^{-4} / n^{-6}
=========  ======================  =========================  =================

("scaling" is ``f_e(x) = ι_m n^{-2/3}`` or ``f_e(x) = −j_{α,m}²/(4n²)``: the model
zero with the exact local variable and nothing else; ``ζ = n^{2/3} f_e`` resp.
``n² f_e``).  At a hard edge ``x − e = O(n^{-2})``, so the relative errors are
``n^{-1}, n^{-2}, n^{-3}, n^{-4}``.  References: Deift, Kriecherbauer, McLaughlin, Venakides,
Zhou, Comm. Pure Appl. Math. 52 (1999) 1335–1425, §7 (Airy); Kuijlaars, McLaughlin,
Van Assche, Vanlessen, Adv. Math. 188 (2004) 337–398, §6 (Bessel); the error table
is derived here.
"""

from __future__ import annotations

import numpy as np
from scipy.special import ai_zeros, airy, jn_zeros, jv, jvp

from equilibrium.errors import InputError
from equilibrium.verification import failure_policy, settle

from .local import _A0, _B0, _S3, EdgeParametrix, edge_parametrix
from .predict import EdgeZeros, _refine_sign_changes

__all__ = ["EdgeZeros", "bessel_zeros", "edge_zeros", "edge_scaling_zeros"]

def bessel_zeros(alpha: float, count: int) -> np.ndarray:
    r"""The first ``count`` positive zeros ``j_{α,1} < j_{α,2} < …`` of ``J_α``, ``α > −1``.

    Integer ``α``: ``scipy.special.jn_zeros`` (``J_{−k} = (−1)^k J_k`` has the same
    zeros).  Otherwise the sign changes of ``scipy.special.jv`` on a grid of step
    0.05 are refined by the Illinois method to rounding; ``j_{α,m}`` lies below
    ``(m + α/2 + 1/2) π`` for ``α > -1`` (McMahon's expansion ``j ≈ (m + α/2 − 1/4)π``,
    DLMF 10.21.19, plus margin; the grid is extended until ``count`` zeros are found).
    """
    alpha = float(alpha)
    count = int(count)
    if not alpha > -1.0 or not np.isfinite(alpha):
        raise InputError(f"the Bessel exponent must be a finite number > -1; got {alpha}")
    if count < 1:
        raise InputError(f"the number of Bessel zeros must be at least 1; got {count}")
    if alpha == round(alpha):
        return np.asarray(jn_zeros(abs(int(round(alpha))), count), dtype=float)
    top = (count + 0.5 * abs(alpha) + 1.0) * np.pi
    while True:
        u = np.arange(0.025, top, 0.05)
        f = jv(alpha, u)
        change = np.nonzero(np.sign(f[:-1]) * np.sign(f[1:]) < 0)[0]
        if change.size >= count:
            break
        top *= 1.5
    change = change[:count]
    return _refine_sign_changes(lambda t, _: jv(alpha, t), u[change], u[change + 1], f[change], f[change + 1])


def _model_zeros(ep: EdgeParametrix, count: int) -> tuple[np.ndarray, np.ndarray]:
    """Model zeros in ζ (descending from the edge into the band side) and bracket ends between them."""
    if ep.kind == "soft":
        iota = ai_zeros(count + 1)[0]             # ι_1 > ι_2 > … (negative)
        mids = np.concatenate([[0.5 * iota[0]], 0.5 * (iota[:-1] + iota[1:])])
        return iota[:count], mids                  # bracket m: (mids[m+1], mids[m]) in ζ
    j = bessel_zeros(ep.alpha, count + 1)
    mids = np.concatenate([[0.5 * j[0]], 0.5 * (j[:-1] + j[1:])])
    return -0.25 * j[:count] ** 2, -0.25 * mids ** 2


def _zeta_scale(ep: EdgeParametrix, degree: int) -> float:
    """``ζ = scale · f_e``: ``n^{2/3}`` at soft edges, ``n²`` at hard edges."""
    n = float(degree)
    return n ** (2.0 / 3.0) if ep.kind == "soft" else n * n


def _invert_local_variable(ep: EdgeParametrix, targets: np.ndarray) -> np.ndarray:
    """Real points ``x`` near the edge with ``f_e(x) = targets`` (secant steps from ``e + t/f'(e)``).

    ``targets`` grow in modulus (moving from the edge into the band).  Where the steps do not
    reach the target (relative residual above 1e-8: far from the edge, where ``f_e`` need not be
    one-to-one on the real line), or the points stop moving away from the edge, the entries are
    NaN.
    """
    gf = ep.predictor.g
    e = ep.edge
    targets = np.asarray(targets, dtype=float)
    x = e + targets / gf.edges[ep.index].derivative
    eps = np.finfo(float).eps
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        for _ in range(40):
            d = x - e
            h = 1e-7 * d
            f0 = gf.local_variable(ep.index, x + 0j).real - targets
            f1 = gf.local_variable(ep.index, x + h + 0j).real - targets
            step = f0 * h / (f1 - f0)
            step = np.where(np.isfinite(step), step, 0.0)
            x = x - step
            if np.all(np.abs(step) <= 4 * eps * np.abs(x - e)):
                break
        residual = np.abs(gf.local_variable(ep.index, x + 0j).real - targets) / np.abs(targets)
    good = np.isfinite(x) & (residual <= 1e-8)
    distance = np.abs(x - e)
    good &= np.concatenate([[True], np.diff(distance) > 0])
    good = np.logical_and.accumulate(good)       # nothing beyond the first failure
    return np.where(good, x, np.nan)


def _form_coefficient(ep: EdgeParametrix, x: np.ndarray, degree: int, cor) -> tuple[np.ndarray, np.ndarray]:
    """``(ζ or u, coefficient)`` at real band points ``x`` (+ side): ``c`` (soft) or ``κ`` (hard).

    Module docstring: ``s (RK)_12/((RK)_11 ζ^{1/2})`` (soft) and ``i`` times it (hard),
    ``K = N U A^{-1}``.  Returns the complex coefficient (its imaginary part is a check).
    """
    z = np.asarray(x, dtype=float) + 1e-300j
    NU = ep.outer_times_U(z, degree)
    if ep.kind == "soft":
        A = _A0 if ep.side > 0 else _S3 @ _A0 @ _S3
    else:
        A = _B0 if ep.side > 0 else _S3 @ _B0 @ _S3
    K = NU @ np.linalg.inv(A)
    if cor is not None:
        K = cor.matrix(z, degree) @ K
    root = ep.zeta(z, degree)
    if ep.kind == "soft":
        zeta = root
        root = np.sqrt(zeta + 0j)
        coef = ep.side * K[..., 0, 1] / (K[..., 0, 0] * root)
        return zeta.real, coef
    coef = 1j * ep.side * K[..., 0, 1] / (K[..., 0, 0] * root)
    return 2.0 * np.abs(root), coef


def edge_scaling_zeros(predictor, index: int, degree: int, count: int = 5, *,
                       on_failure: str = "raise") -> EdgeZeros:
    r"""The scaling prediction: ``f_e(x_m) = ι_m n^{-2/3}`` (soft) or ``−j_{α,m}²/(4n²)`` (hard).

    The model zeros with the exact local variable ``f_e`` of ``gfunction.gfunction``
    (``ι_m``: ``scipy.special.ai_zeros``; ``j_{α,m}``: :func:`bessel_zeros`), from the edge
    inward; those beyond the matching disc are NaN (``checks['outside_disc']``).  Errors (module
    docstring): ``O(n^{-1})`` at soft and ``O(n^{-3})`` (relative ``O(n^{-1})``) at hard edges.  Check: ``local_variable_residual``, the relative residual of
    ``f_e(x_m) = ζ_m/scale``.  ``on_failure``: ``"raise"`` or ``"mark"``
    (:mod:`equilibrium.verification`).
    """
    failure_policy(on_failure)
    ep, count, degree = _checked(predictor, index, degree, count)
    model, _ = _model_zeros(ep, count)
    scale = _zeta_scale(ep, degree)
    x = _invert_local_variable(ep, model / scale)
    inside = _in_disc(ep, x)
    x = np.where(inside, x, np.nan)
    f = np.full(x.shape, np.nan)
    f[inside] = ep.predictor.g.local_variable(index, x[inside] + 0j).real
    residual = np.abs(scale * f[inside] - model[inside]) / np.abs(model[inside])
    checks = {"local_variable_residual": float(np.max(residual, initial=0.0)) if np.all(np.isfinite(residual))
              else float("nan"),
              "outside_disc": float(np.sum(~inside))}
    # built on the predictor: an unverified g-function or model problem makes the zeros unverified
    verified, message = ep.predictor._verdict(checks, f"scaling zeros at edge {index}")
    result = EdgeZeros(int(index), degree, x, "scaling", verified, checks, message, order=0, kind=ep.kind,
                       position=ep.edge, alpha=ep.alpha, offsets=x - ep.edge, zeta=scale * f, model_zeros=model)
    return settle(result, on_failure)


def _in_disc(ep: EdgeParametrix, x: np.ndarray) -> np.ndarray:
    """Finite points on the band side of the edge inside its matching disc, where the forms hold."""
    x = np.asarray(x, dtype=float)
    with np.errstate(invalid="ignore"):
        return np.isfinite(x) & (np.abs(x - ep.edge) < ep.radius) & (ep.side * (x - ep.edge) < 0)


def _checked(predictor, index: int, degree: int, count: int):
    ep = edge_parametrix(predictor, index)
    if int(degree) != degree or degree < 1:
        raise InputError(f"the degree must be a positive integer; got {degree}")
    if int(count) != count or count < 1:
        raise InputError(f"the number of edge zeros must be a positive integer; got {count}")
    return ep, int(count), int(degree)


def edge_zeros(predictor, index: int, degree: int, count: int = 5, *, order: int = 0,
               corrections=None, on_failure: str = "raise") -> EdgeZeros:
    r"""The first ``count`` zeros of π_n (degree = scaling = n) next to edge ``index``.

    Zeros of the Airy form ``Ai(ζ) + c Ai'(ζ)`` (soft edge) or the Bessel form
    ``J_α(u) + (κ/2) u J_α'(u)`` (hard edge with Jacobi exponent α) in the exact local
    variable (module docstring).  Each zero is bracketed between the images of the
    midpoints of consecutive model zeros (``ι_m`` or ``j_{α,m}``) and refined by the
    Illinois method to rounding.  Zeros whose bracket reaches beyond the matching disc (small
    ``n``) are NaN: the forms are derived inside it (``checks['outside_disc']`` counts them).

    ``order`` 0 uses ``R = I``; order ``K ≥ 1`` the residual matrix
    ``R(z) = I + R^{(1)}(z)/n + … + R^{(K)}(z)/n^K`` inside the disc at this degree
    (``corrections``: a ``gfunction.polynomial_form.Corrections`` of this order that covers
    the degree; built when not given).  Errors per order: module docstring.
    ``on_failure``: ``"raise"`` or ``"mark"`` (:mod:`equilibrium.verification`).
    """
    from .polynomial_form import _corrections_for

    failure_policy(on_failure)
    ep, count, degree = _checked(predictor, index, degree, count)
    if isinstance(order, bool) or int(order) != order or order < 0:
        raise InputError(f"the order must be a non-negative integer; got {order!r}")
    order = int(order)
    cor = _corrections_for(predictor, [degree], order, corrections)
    model, mids = _model_zeros(ep, count)
    scale = _zeta_scale(ep, degree)
    ends = _invert_local_variable(ep, mids / scale)         # x at the bracket ends, from the edge inward
    # the forms hold in the matching disc: brackets reaching beyond it give no prediction (NaN)
    usable = _in_disc(ep, ends[1:]) & _in_disc(ep, ends[:-1])
    inner, outer = ends[:-1][usable], ends[1:][usable]
    imag = [0.0]

    def form(x):
        var, coef = _form_coefficient(ep, x, degree, cor)
        imag[0] = max(imag[0], float(np.max(np.abs(coef.imag), initial=0.0)))
        if ep.kind == "soft":
            ai, aip, _, _ = airy(var)
            return ai + coef.real * aip
        return jv(ep.alpha, var) + 0.5 * coef.real * var * jvp(ep.alpha, var)

    x = np.full(count, np.nan)
    missing = np.zeros(0, dtype=bool)
    if inner.size:
        f_inner, f_outer = form(inner), form(outer)
        missing = ~(np.sign(f_inner) * np.sign(f_outer) < 0)
        swap = inner > outer                                 # the Illinois brackets run left to right
        lo, hi = np.where(swap, outer, inner), np.where(swap, inner, outer)
        f_lo, f_hi = np.where(swap, f_outer, f_inner), np.where(swap, f_inner, f_outer)
        found = _refine_sign_changes(lambda t, rows: form(t), lo, hi, f_lo, f_hi)
        x[usable] = np.where(missing, np.nan, found)
    zeta = np.full(count, np.nan)
    ok = np.isfinite(x)
    zeta[ok] = scale * ep.predictor.g.local_variable(index, x[ok] + 0j).real
    checks = {"imag_ratio": imag[0], "missing_sign_change": float(np.sum(missing)),
              "outside_disc": float(np.sum(~usable))}
    name = "Airy form" if ep.kind == "soft" else "Bessel form"
    # built on the predictor: an unverified g-function or model problem makes the zeros unverified
    verified, message = ep.predictor._verdict(checks, f"{name} zeros at edge {index} (order {order})")
    if cor is not None:
        checks, verified, message = cor.merged(checks, message)
    result = EdgeZeros(int(index), degree, x, name, verified, checks, message, order=order, kind=ep.kind,
                       position=ep.edge, alpha=ep.alpha, offsets=x - ep.edge, zeta=zeta, model_zeros=model)
    return settle(result, on_failure)
