"""Figures of a run (and of a sweep), drawn from the stored data alone.

Every function here takes the tree read back from an HDF5 file
(:func:`workbench.results.read_run`) and returns a matplotlib ``Figure``, or
``None`` when the file does not hold what the figure needs (e.g. no gap in
a one-band case).  Nothing here imports the numerical packages: ``workbench
plot`` redraws every figure from a file without recomputing anything.

Figures (one journal column, :mod:`workbench.style`; legends under the axes, inside
the figure; tick labels that would collide are thinned):

density       equilibrium density ψ (lines, reaching the band ends) against the
              histogram of the zeros of p_n at the largest n, normalised to density
              (mass 1), one colour per band; a signed measure set aside by the run
              is drawn dashed, negative parts included
coefficients  direct a_n^{(n)}, b_n^{(n)} (circles) against the model prediction
              (dots, not joined: for several bands it is quasi-periodic in n); one
              band: direct minus model (the model is constant in n)
errors        errors against n on log-log axes with the fitted slope ± its standard
              error; every err_* dataset of /comparison, each in its own colour; with
              [model] order or method (workbench.orders) the errors of a_n and b_n at
              every order, and of the residual method, side by side below
gap_zeros     the zero of p_n in each gap against n, direct (squares) and predicted
              (dots) in the colour of the gap
edge_zeros    zeros next to the outer edges in the Airy (soft) or Bessel (hard) scaling
              (n^{2/3} c (x_j - e) against the Airy zeros a_j, n^2 c (x_j - e) against
              -j_{alpha,j}^2/4), one panel per outer edge
recurrence    (files of ``recurrence --out``) a_k and b_k against k
zeros         (files of ``zeros --out``) histogram of the zeros of p_K, mass 1
              (files of ``equilibrium --out`` get the density alone)
phase         (sweep files) number of bands over the parameter grid; the transition
              curves through the located transitions of the grid edges
              (/grid/transition_*); Ω_1 contours inside each region of one band count
"""

from __future__ import annotations

from pathlib import Path
from typing import Callable, Iterable

import numpy as np

from workbench.results import Group
from workbench.style import (DASHES, MARKERS, SERIES, journal_style, laid_out_once, legend_below,
                             new_figure, set_log_axis, thin_tick_labels)

__all__ = [
    "FIGURES",
    "draw_density",
    "draw_coefficients",
    "draw_errors",
    "draw_gap_zeros",
    "draw_edge_zeros",
    "draw_phase_diagram",
    "draw_recurrence",
    "draw_zeros",
    "draw_all",
    "save_figure",
]

#: short legend labels of the error quantities of /comparison, in drawing order; any other
#: ``err_*`` dataset is drawn too, labelled by its ``label`` attribute (or its name)
ERROR_LABELS = {
    "err_a": r"$a_n$",
    "err_b": r"$b_n$",
    "err_values": r"$p_n$, bulk",
    "err_zeros_bulk": "zeros, bulk",
    "err_zeros_edge": "zeros, edge",
    "err_zeros_gap": "zeros, gaps",
    "small_norm": r"$|TM^{-1} - I|$",
    "err_log_hankel": r"$\log D_n$",
    "err_zeros_edge_left": "zeros, left edge",
    "err_zeros_edge_right": "zeros, right edge",
    "err_zeros_edge_scaling": "edge scaling",
}


def _largest_direct(tree: Group) -> Group | None:
    direct = tree.groups.get("direct")
    if not direct or not direct.groups:
        return None
    name = max(direct.groups, key=lambda k: int(k.split("_")[1]))
    return direct.groups[name]


def _genus(tree: Group) -> int:
    eq = tree.groups.get("equilibrium", Group())
    return int(np.atleast_2d(eq.get("support")).shape[0]) - 1 if eq.has("support") else 0


def _legend_below(fig, handles, labels, entries_per_row: int = 2, **kwargs):
    """The legend under the axes, inside the figure (constrained layout makes room for it)."""
    return legend_below(fig, handles, labels, ncol=entries_per_row, **kwargs)


def _band_density(x: np.ndarray, psi: np.ndarray, a: float, b: float):
    """The stored ψ on [a, b] (ends included when stored), in ascending x."""
    mask = (x >= a) & (x <= b) & np.isfinite(psi)
    order = np.argsort(x[mask])
    return x[mask][order], psi[mask][order]


def _visible_top(x: np.ndarray, psi: np.ndarray, support: np.ndarray, edges: np.ndarray) -> float:
    """Largest ψ away from hard ends (where ψ ~ |x - e|^{-1/2} would dwarf the rest)."""
    keep = np.isfinite(psi)
    for (a, b), (left, right) in zip(support, edges):
        width = b - a
        if str(left) == "hard":
            keep &= ~((x >= a) & (x < a + 0.03 * width))
        if str(right) == "hard":
            keep &= ~((x > b - 0.03 * width) & (x <= b))
    return float(np.max(psi[keep])) if np.any(keep) else 1.0


def draw_density(tree: Group):
    """ψ(x) on each band (line) against the normalised histogram of the zeros of p_n (bars)."""
    eq = tree.groups.get("equilibrium")
    last = _largest_direct(tree)
    if eq is None or not eq.has("x"):
        return None
    if last is None or not last.has("zeros"):
        if tree.attrs.get("format") != "workbench-equilibrium":
            return None
        return _density_alone(eq)
    x = np.asarray(eq.get("x"), dtype=float)
    psi = np.asarray(eq.get("density"), dtype=float)
    support = np.atleast_2d(eq.get("support"))
    edges = (np.asarray(eq.get("edges")).reshape(-1, 2) if eq.has("edges")
             else np.full(support.shape, "soft", dtype=object))
    zeros = np.asarray(last.get("zeros"), dtype=float)
    n = int(last.attrs.get("n", zeros.size))
    fig, axes = new_figure(height=2.7)
    ax = axes[0, 0]
    handles, labels = [], []
    top = _visible_top(x, psi, support, edges)
    for j, (a, b) in enumerate(support):
        colour = SERIES[j % len(SERIES)]
        inside = zeros[(zeros >= a) & (zeros <= b)]
        # bins of about sqrt(count) per band; heights = count / (n * width) estimate ψ
        bins = max(4, int(np.sqrt(max(inside.size, 1))) + 2)
        counts, bin_edges = np.histogram(inside, bins=bins, range=(a, b))
        heights = counts / (n * np.diff(bin_edges))
        top = max(top, float(np.max(heights)) if heights.size else 0.0)
        bars = ax.stairs(heights, bin_edges, fill=True, alpha=0.35, color=colour, lw=0)
        xs, ys = _band_density(x, psi, a, b)
        (line,) = ax.plot(xs, ys, color=colour, lw=1.0)
        if support.shape[0] == 1:
            handles += [line, bars]
            labels += [r"$\psi(x)$", f"zeros of $p_{{{n}}}$"]
        else:
            handles.append((bars, line))
            labels.append(f"band {j + 1}")
    bottom = 0.0
    signed = tree.groups.get("equilibrium_signed")
    if signed is not None and signed.has("x"):
        # the signed measure the case asked for, set aside because it is negative somewhere
        xs_signed = np.asarray(signed.get("x"), dtype=float)
        psi_signed = np.asarray(signed.get("density"), dtype=float)
        (line,) = ax.plot(xs_signed, np.where(np.isfinite(psi_signed), psi_signed, np.nan), color="0.35",
                          lw=0.8, ls=DASHES[1])
        handles.append(line)
        labels.append("signed measure (not the model)")
        finite = psi_signed[np.isfinite(psi_signed)]
        if finite.size and finite.min() < 0:
            bottom = -0.5 * top  # ψ of the signed measure tends to -inf at a hard end
    ax.set_ylim(bottom, 1.15 * top)
    if bottom < 0:
        ax.axhline(0.0, color="k", lw=0.5)
    ax.set_xlabel("$x$")
    ax.set_ylabel("density")
    ax.set_title(f"$\\psi$ (lines) and zeros (bars), $n = {n}$" if len(handles) > 2
                 else f"equilibrium density and zeros, $n = {n}$")
    from matplotlib.legend_handler import HandlerTuple

    _legend_below(fig, handles, labels, entries_per_row=3,
                  handler_map={tuple: HandlerTuple(ndivide=None, pad=0.0)})
    return fig


def _density_alone(eq: Group):
    """ψ(x) on each band of a file of ``workbench equilibrium --out`` (no zeros there)."""
    x = np.asarray(eq.get("x"), dtype=float)
    psi = np.asarray(eq.get("density"), dtype=float)
    support = np.atleast_2d(eq.get("support"))
    edges = (np.asarray(eq.get("edges")).reshape(-1, 2) if eq.has("edges")
             else np.full(support.shape, "soft", dtype=object))
    fig, axes = new_figure(height=2.4)
    ax = axes[0, 0]
    for j, (a, b) in enumerate(support):
        xs, ys = _band_density(x, psi, a, b)
        ax.plot(xs, ys, color=SERIES[j % len(SERIES)], lw=1.0)
    ax.set_ylim(0.0, 1.15 * _visible_top(x, psi, support, edges))
    ax.set_xlabel("$x$")
    ax.set_ylabel(r"$\psi(x)$")
    ax.set_title(f"equilibrium density, {support.shape[0]} band" + ("s" if support.shape[0] > 1 else ""))
    return fig


def draw_recurrence(tree: Group):
    """a_k, b_k against k of a file of ``workbench recurrence --out``."""
    rec = tree.groups.get("recurrence")
    if rec is None or not rec.has("a") or np.asarray(rec.get("a")).size < 2:
        return None
    a, b = np.asarray(rec.get("a"), dtype=float), np.asarray(rec.get("b"), dtype=float)
    k = np.arange(a.size)
    fig, axes = new_figure(height=2.6)
    ax = axes[0, 0]
    marker = "o" if a.size <= 60 else None
    (ha,) = ax.plot(k[1:], a[1:], color=SERIES[0], lw=0.9, marker=marker, ms=2.5, mfc="none")
    (hb,) = ax.plot(k, b, color=SERIES[1], lw=0.9, ls=DASHES[1], marker=marker and "s", ms=2.5, mfc="none")
    ax.set_xlabel("$k$")
    ax.set_ylabel("coefficient")
    ax.set_title(f"recurrence coefficients, $n = {rec.attrs.get('n', '?'):g}$"
                 if isinstance(rec.attrs.get("n"), (int, float)) else "recurrence coefficients")
    _legend_below(fig, [ha, hb], [r"$a_k^{(n)}$", r"$b_k^{(n)}$"])
    return fig


def draw_zeros(tree: Group):
    """Histogram of the zeros of p_K (normalised to mass 1) of a file of ``workbench zeros --out``."""
    node = tree.groups.get("zeros")
    if node is None or not node.has("zeros") or np.asarray(node.get("zeros")).size < 2:
        return None
    x = np.asarray(node.get("zeros"), dtype=float)
    fig, axes = new_figure(height=2.4)
    ax = axes[0, 0]
    bins = max(4, int(np.sqrt(x.size)) + 2)
    counts, edges = np.histogram(x, bins=bins)
    ax.stairs(counts / (x.size * np.diff(edges)), edges, fill=True, alpha=0.35, color=SERIES[0], lw=0)
    ax.plot(x, np.zeros_like(x), ls="none", marker="|", color=SERIES[0], ms=4)
    ax.set_xlabel("$x$")
    ax.set_ylabel("zeros per unit length / $K$")
    ax.set_title(f"zeros of $p_{{{node.attrs.get('degree', x.size)}}}$")
    return fig


def draw_coefficients(tree: Group):
    """a_n^{(n)}, b_n^{(n)}: direct (circles) and model (dots); one band: their difference."""
    comp = tree.groups.get("comparison")
    if comp is None or not comp.has("a_direct"):
        return None
    model = tree.groups.get("model", Group())
    n = np.asarray(comp.get("n"))
    genus = _genus(tree)
    fig, axes = new_figure(height=3.1, nrows=2, sharex=True)
    handles, labels = {}, []
    for ax, key, symbol in ((axes[0, 0], "a", "a"), (axes[1, 0], "b", "b")):
        direct = np.asarray(comp.get(f"{key}_direct"), dtype=float)
        have_model = comp.has(f"{key}_model")
        if genus == 0 and have_model:
            # one band: the model is (nearly) constant in n; plot what differs from it
            difference = direct - np.asarray(comp.get(f"{key}_model"), dtype=float)
            handles["model"] = ax.axhline(0.0, color=SERIES[0], lw=0.8, ls=DASHES[1])
            handles["direct"], = ax.plot(n, difference, ls="none", marker="o", mfc="none", color=SERIES[1])
            ax.set_ylabel(f"${symbol}_n - {symbol}_n^{{\\rm model}}$")
            value = float(np.asarray(comp.get(f"{key}_model"))[-1])
            ax.text(0.98, 0.92, f"model ${symbol} = {value:.8g}$", transform=ax.transAxes,
                    ha="right", va="top", fontsize=7)
            ax.ticklabel_format(axis="y", style="sci", scilimits=(-2, 3), useMathText=True, useOffset=False)
        else:
            if model.has(f"{key}_dense"):
                # dots, not a line: with several bands the prediction jumps between consecutive n
                handles["model"], = ax.plot(model.get("n_dense"), model.get(f"{key}_dense"), ls="none",
                                            marker=".", ms=2.0, color=SERIES[0])
            elif have_model:
                handles["model"], = ax.plot(n, comp.get(f"{key}_model"), ls="none", marker=".", ms=3.0,
                                            color=SERIES[0])
            handles["direct"], = ax.plot(n, direct, ls="none", marker="o", mfc="none", color=SERIES[1])
            ax.set_ylabel(f"${symbol}_n^{{(n)}}$")
            ax.ticklabel_format(axis="y", useOffset=False)
    axes[1, 0].set_xlabel("$n$")
    names = {"model": "model problem", "direct": "direct"}
    _legend_below(fig, [handles[k] for k in names if k in handles], [names[k] for k in names if k in handles])
    fig.suptitle("recurrence coefficients, direct minus predicted" if genus == 0 and comp.has("a_model")
                 else "recurrence coefficients, direct and predicted", fontsize=9)
    return fig


#: the predictions of a_n, b_n beyond leading order (workbench.orders), in drawing order
ORDER_VARIANTS = (("", "order 0"), ("_order1", "order 1"), ("_order2", "order 2"), ("_residual", "residual"))


#: the quantities drawn by order in the second row of the errors figure: (name in err_<name>, title,
#: an extra leading series); the zeros and values beyond leading order come from workbench.orders
ORDER_PANELS = (("a", "$a_n$ by order", None), ("b", "$b_n$ by order", None),
                ("values", "$p_n$, bulk, by order", None),
                ("zeros_edge_right", "zeros, right {kind} edge", None),
                ("zeros_edge_left", "zeros, left {kind_left} edge", None),
                ("zeros_gap", "zeros, gaps, by order", None))


def _is_order_key(key: str) -> bool:
    return key.startswith("err_") and any(key.endswith(suffix) for suffix, _ in ORDER_VARIANTS[1:])


def _error_series(ax, n, comp, rates, key, text, k):
    """One error series (markers, and its fitted line); returns ``(handle, label, n used)`` or None."""
    err = np.asarray(comp.get(key), dtype=float)
    if err.shape != n.shape:
        return None
    ok = np.isfinite(err) & (err > 0)
    if ok.sum() == 0:
        return None
    colour, marker = SERIES[k % len(SERIES)], MARKERS[k % len(MARKERS)]
    fit = rates.groups.get(key)
    if fit is not None and np.isfinite(fit.attrs.get("slope", np.nan)):
        s, se, c = fit.attrs["slope"], fit.attrs.get("stderr", np.nan), fit.attrs["intercept"]
        grid = np.geomspace(n[ok].min(), n[ok].max(), 20)
        ax.plot(grid, np.exp(c) * grid ** s, color=colour, lw=0.7, ls=DASHES[1])
        text += f": ${s:.2f} \\pm {se:.2f}$" if np.isfinite(se) else f": ${s:.2f}$"
    elif fit is not None and "note" in fit.attrs:
        text += " (rounding)"
    (points,) = ax.plot(n[ok], err[ok], ls="none", marker=marker, color=colour, mfc="none")
    return points, text, n[ok]


def _order_panel(ax, n, comp, rates, series) -> tuple[list, list]:
    """Error series ``(key, label)`` on log-log axes against n, one colour each; ``(handles, labels)``."""
    hs, ls, used = [], [], []
    for k, (key, label) in enumerate(series):
        got = _error_series(ax, n, comp, rates, key, label, k) if comp.has(key) else None
        if got is not None:
            hs.append(got[0])
            ls.append(got[1])
            used.append(got[2])
    ax.set_xscale("log")
    ax.set_yscale("log")
    if used:
        both = np.concatenate(used)
        set_log_axis(ax.xaxis, float(both.min()), float(both.max()))
    ax.set_xlabel("$n$")
    return hs, ls


def draw_errors(tree: Group):
    """Errors against n (log-log) with the fitted slope s ± standard error, one marker per quantity.

    With predictions beyond leading order (``[model] order``/``method``) a second row shows the
    errors of a_n and of b_n side by side, one series per order (and the residual method).
    """
    comp = tree.groups.get("comparison")
    if comp is None or not comp.has("n"):
        return None
    n = np.asarray(comp.get("n"), dtype=float)
    rates = comp.groups.get("rates", Group())
    variants = [(suffix, label) for suffix, label in ORDER_VARIANTS[1:]
                if any(comp.has(f"err_{q}{suffix}") for q, _, _ in ORDER_PANELS)]
    panels = [p for p in ORDER_PANELS if any(comp.has(f"err_{p[0]}{suffix}") for suffix, _ in variants)]
    formulas = comp.groups.get("formulas")
    formulas = formulas if formulas is not None and formulas.groups else None
    if variants or formulas is not None:
        from matplotlib.figure import Figure

        order_rows = (len(panels) + 1) // 2 if variants else 0
        heights = [1.2] + ([1.0 * order_rows] if variants else []) + ([1.0] if formulas is not None else [])
        fig = Figure(figsize=(3.4, 3.4 + 2.8 * order_rows + (2.9 if formulas is not None else 0.0)),
                     layout="constrained")
        rows = list(fig.subfigures(len(heights), 1, height_ratios=heights))
        top = rows.pop(0)
        bottom = rows.pop(0) if variants else None
        below = rows.pop(0) if formulas is not None else None
        ax = top.subplots()
    else:
        fig, axes = new_figure(height=3.2)
        top, ax = fig, axes[0, 0]
    # every quantity the file has: the known ones in their order, then any other err_* (data-driven);
    # the orders beyond the leading one go to the second row
    keys = [k for k in ERROR_LABELS if comp.has(k)] + sorted(
        k for k in comp.datasets if k.startswith("err_") and k not in ERROR_LABELS and not _is_order_key(k))
    handles, labels = [], []
    drawn_n = []
    if comp.has("err_zeros_edge_left") and comp.has("err_zeros_edge_right") and "err_zeros_edge" in keys:
        keys.remove("err_zeros_edge")   # the larger of the two drawn beside it: it would hide under one of them
    others = [key for key in keys if key not in ERROR_LABELS]
    for key in keys:
        # a quantity keeps its colour and marker from figure to figure (its place in ERROR_LABELS);
        # the others follow after all of those, so no two series share a colour and a marker
        k = list(ERROR_LABELS).index(key) if key in ERROR_LABELS else len(ERROR_LABELS) + others.index(key)
        text = ERROR_LABELS.get(key) or comp.datasets[key].attrs.get("label", key)
        got = _error_series(ax, n, comp, rates, key, text, k)
        if got is not None:
            handles.append(got[0])
            labels.append(got[1])
            drawn_n.append(got[2])
    if not handles:
        return None
    _log_log_errors(ax, drawn_n, "|direct $-$ model|")
    ax.set_title("errors and fitted slopes" + (", leading order" if variants else " against $n$"))
    _legend_below(top, handles, labels, entries_per_row=2 if len(labels) <= 8 else 3, fontsize=6.5,
                  columnspacing=1.0, handletextpad=0.3)
    thin_tick_labels(fig, ax.xaxis)
    if variants:
        grid = bottom.subplots((len(panels) + 1) // 2, 2, squeeze=False)
        if len(panels) % 2:
            grid[-1, -1].set_visible(False)
        model = tree.groups.get("model", Group())
        kinds = {"kind": model.attrs.get("edge_kind", "soft"), "kind_left": model.attrs.get("edge_kind_left", "soft")}
        for axq, (q, title, extra) in zip(grid.ravel(), panels):
            title = title.format(**kinds)
            series = [(f"err_{q}{suffix}", label) for suffix, label in [ORDER_VARIANTS[0]] + variants]
            if extra is not None:
                series.insert(0, extra)
            hs, ls = _order_panel(axq, n, comp, rates, series)
            axq.set_title(title, fontsize=8)
            axq.legend(hs, ls, loc="upper center", bbox_to_anchor=(0.5, -0.24), ncol=1, fontsize=5.5,
                       handletextpad=0.3, borderaxespad=0.0)
            thin_tick_labels(fig, axq.xaxis)
        for axq in grid[:, 0]:
            axq.set_ylabel("|direct $-$ model|")
    if formulas is not None:
        _formula_panel(fig, below, n, formulas)
    return fig


def _log_log_errors(ax, drawn_n, ylabel: str) -> None:
    """Log-log axes of errors against n, the n axis with plain ticks over the n drawn."""
    ax.set_xscale("log")
    ax.set_yscale("log")
    used = np.concatenate(drawn_n)
    set_log_axis(ax.xaxis, float(used.min()), float(used.max()))
    ax.set_xlabel("$n$")
    ax.set_ylabel(ylabel)


def _formula_panel(fig, sub, n, formulas: Group) -> None:
    """The case's own formulas: |direct - formula| against n with the fitted slope, one series each;
    a formula that agrees to rounding is drawn at its errors' level and marked so."""
    from workbench.results import text_list

    ax = sub.subplots()
    handles, labels, drawn = [], [], []
    names = text_list(formulas.attrs.get("names")) or sorted(formulas.groups)
    for k, name in enumerate(names):
        entry = formulas.groups[name]
        err = np.asarray(entry.get("error"), dtype=float)
        ok = np.isfinite(err) & (err > 0)
        if not ok.any():
            continue
        colour, marker = SERIES[k % len(SERIES)], MARKERS[k % len(MARKERS)]
        text = f"{name} ({entry.attrs.get('quantity')})"
        s, se, c = (entry.attrs.get(key, np.nan) for key in ("slope", "stderr", "intercept"))
        verdict = entry.attrs.get("verdict", "")
        if verdict == "agrees to rounding":
            text += ": rounding"
        elif np.isfinite(s):
            grid = np.geomspace(n[ok].min(), n[ok].max(), 20)
            ax.plot(grid, np.exp(c) * grid ** s, color=colour, lw=0.7, ls=DASHES[1])
            text += f": ${s:.2f} \\pm {se:.2f}$" if np.isfinite(se) else f": ${s:.2f}$"
            if verdict == "rejected":
                text += f", rejected (claim {entry.attrs.get('expected_slope'):g})"
        (points,) = ax.plot(n[ok], err[ok], ls="none", marker=marker, color=colour, mfc="none")
        handles.append(points)
        labels.append(text)
        drawn.append(n[ok])
    if not handles:
        ax.set_axis_off()
        ax.text(0.5, 0.5, "formulas: no error above zero", ha="center", va="center", transform=ax.transAxes)
        return
    _log_log_errors(ax, drawn, "|direct $-$ formula|")
    ax.set_title("the case's formulas", fontsize=8)
    _legend_below(sub, handles, labels, entries_per_row=1 if max(len(t) for t in labels) > 28 else 2,
                  fontsize=6.5, columnspacing=1.0, handletextpad=0.3)
    thin_tick_labels(fig, ax.xaxis)


def draw_gap_zeros(tree: Group):
    """The zero of p_n in each gap against n: direct (squares) and predicted (dots), one colour per gap."""
    comp = tree.groups.get("comparison")
    if comp is None or not comp.has("gap_zeros_direct"):
        return None
    direct = np.atleast_2d(np.asarray(comp.get("gap_zeros_direct"), dtype=float))
    if direct.size == 0 or direct.shape[1] == 0:
        return None
    n = comp.get("n")
    model = tree.groups.get("model", Group())
    if model.has("gap_zeros_dense"):
        model_n, predicted = model.get("n_dense"), np.atleast_2d(model.get("gap_zeros_dense"))
    elif comp.has("gap_zeros_model"):
        model_n, predicted = n, np.atleast_2d(comp.get("gap_zeros_model"))
    else:
        model_n, predicted = n, np.full(direct.shape, np.nan)
    predicted = np.asarray(predicted, dtype=float)
    if not (np.isfinite(direct).any() or np.isfinite(predicted).any()):
        return None  # nothing to show (e.g. the model failed and no zero fell in a gap)
    eq = tree.groups.get("equilibrium", Group())
    support = np.atleast_2d(eq.get("support")) if eq.has("support") else None
    orders = [(suffix, label) for suffix, label in ORDER_VARIANTS[1:] if comp.has(f"err_zeros_gap{suffix}")]
    if orders:
        fig, axes = new_figure(height=5.4, nrows=2, height_ratios=[1.2, 1.0])
    else:
        fig, axes = new_figure(height=2.7)
    ax = axes[0, 0]
    handles, labels = [], []
    for j in range(direct.shape[1]):
        colour = SERIES[j % len(SERIES)]
        if np.isfinite(predicted[:, j]).any():
            # dots, not a line: the zero jumps across the gap between consecutive n
            (dots,) = ax.plot(model_n, predicted[:, j], ls="none", marker=".", ms=2.5, color=colour)
            handles.append(dots)
            labels.append(f"gap {j + 1}, model")
        (squares,) = ax.plot(n, direct[:, j], ls="none", marker="s", mfc="none", ms=4.5, color=colour)
        handles.append(squares)
        labels.append(f"gap {j + 1}, direct")
        if support is not None and support.shape[0] > j + 1:
            ax.axhspan(support[j, 1], support[j + 1, 0], color=colour, alpha=0.08, lw=0)
    ax.set_xlabel("$n$")
    ax.set_ylabel("zero of $p_n$ in the gap")
    ax.set_title("zeros in the gaps (no marker: no zero there)")
    if not orders:
        _legend_below(fig, handles, labels)
        return fig
    # beyond leading order (workbench.orders): the error of the gap zeros by order, with fitted slopes
    ax.legend(handles, labels, loc="upper center", bbox_to_anchor=(0.5, -0.2), ncol=2, fontsize=6.5)
    axe = axes[1, 0]
    hs, ls = _order_panel(axe, np.asarray(n, dtype=float), comp, comp.groups.get("rates", Group()),
                          [(f"err_zeros_gap{suffix}", label) for suffix, label in [ORDER_VARIANTS[0]] + orders])
    axe.set_ylabel("|direct $-$ model|")
    axe.set_title("error of the gap zeros by order (max over gaps)", fontsize=8)
    axe.legend(hs, ls, loc="upper center", bbox_to_anchor=(0.5, -0.3), ncol=2, fontsize=6.5)
    thin_tick_labels(fig, axe.xaxis)
    return fig


def draw_edge_zeros(tree: Group):
    """Zeros next to the outer edges in the scaling of the local variable against the model zeros
    (at each stored n): Airy zeros a_j at a soft edge, -j_{alpha,j}^2/4 at a hard one.  One panel per
    compared edge, the right one first (files before the hard-edge predictions store ``airy_zeros``
    for the right edge only)."""
    comp = tree.groups.get("comparison")
    if comp is None:
        return None
    model = tree.groups.get("model", Group())
    panels = []
    for suffix, side, letter in (("", "right", "b"), ("_left", "left", "a")):
        if not comp.has(f"edge_scaled_direct{suffix}"):
            continue
        key = f"edge_model_zeros{suffix}" if comp.has(f"edge_model_zeros{suffix}") else "airy_zeros"
        panels.append((suffix, side, letter, key, model.attrs.get(f"edge_kind{suffix}", "soft") == "hard"))
    if not panels:
        return None
    n = comp.get("n")
    by_order = any(model.has(f"edge_zeros{p[0]}_order1") for p in panels)
    fig, axes = new_figure(height=2.2 * len(panels) + 0.5, nrows=len(panels), ncols=2 if by_order else 1,
                           **({"width_ratios": [1.0, 0.8]} if by_order else {}))
    references, handles, labels, order_lines = {}, [], [], {}
    for row, (ax, (suffix, side, letter, key, hard)) in enumerate(zip(axes[:, 0], panels)):
        if by_order:
            drawn = _edge_errors_by_order(axes[row, 1], comp, model, suffix, int(np.asarray(n)[-1]))
            for label, line in drawn.items():
                order_lines.setdefault(label, line)
        scaled = np.atleast_2d(np.asarray(comp.get(f"edge_scaled_direct{suffix}"), dtype=float))
        reference = np.asarray(comp.get(key), dtype=float)
        j = np.arange(1, reference.size + 1)
        (line,) = ax.plot(j, reference, color="k", lw=0.8, ls=DASHES[1] if hard else DASHES[0])
        references.setdefault(r"$-j_{\alpha,j}^2/4$ (Bessel)" if hard else "Airy zeros $a_j$", line)
        for i in range(scaled.shape[0]):
            (points,) = ax.plot(j, scaled[i], ls="none", marker=MARKERS[i % len(MARKERS)], mfc="none",
                                color=SERIES[i % len(SERIES)])
            if row == 0:   # the same markers in every panel: one legend entry per n
                handles.append(points)
                labels.append(f"$n = {int(n[i])}$")
        ax.set_xlabel("$j$ (counted from the edge)")
        ax.set_ylabel((r"$n^{2} c\,(x_j - %s)$" if hard else r"$n^{2/3} c\,(x_j - %s)$") % letter)
        ax.set_title(f"{'' if by_order else 'zeros at the '}{side} {'hard' if hard else 'soft'} edge, "
                     f"{'Bessel' if hard else 'Airy'} scaling", fontsize=8 if by_order else None)
        ax.xaxis.set_major_locator(__import__("matplotlib.ticker", fromlist=["MaxNLocator"]).MaxNLocator(integer=True))
    handles = list(references.values()) + handles + list(order_lines.values())
    labels = list(references) + labels + [f"error, {label}" for label in order_lines]
    _legend_below(fig, handles, labels, entries_per_row=4 if not order_lines else 3, fontsize=6.5)
    return fig


def _edge_errors_by_order(ax, comp, model, suffix: str, n_last: int) -> dict:
    """|direct - predicted| of each zero next to an edge at the largest n, one series per order
    (the scaling prediction, the form with R = I, with R through R^(k)): stored data only.
    Returns the lines by label (for the legend)."""
    found = np.atleast_2d(np.asarray(comp.get(f"edge_zeros{suffix}_direct"), dtype=float))[-1]
    j = np.arange(1, found.size + 1)
    series = [(f"edge_zeros{suffix}_scaling", "scaling"), (f"edge_zeros{suffix}", "order 0")] + [
        (f"edge_zeros{suffix}_order{k}", f"order {k}") for k in range(1, 10) if model.has(f"edge_zeros{suffix}_order{k}")]
    drawn = {}
    for k, (key, label) in enumerate(series):
        if not model.has(key):
            continue
        err = np.abs(found - np.atleast_2d(np.asarray(model.get(key), dtype=float))[-1])
        ok = np.isfinite(err) & (err > 0)
        # grey shades and their own markers: the colours of the left panels stand for n
        (line,) = ax.plot(j[ok], err[ok], marker=MARKERS[-1 - k % len(MARKERS)], mfc="none", lw=0.6, ms=3.5,
                          color=str(0.65 - 0.65 * k / max(1, len(series) - 1)), ls=DASHES[k % len(DASHES)])
        drawn[label] = line
    ax.set_yscale("log")
    ax.set_xlabel("$j$")
    ax.set_ylabel(r"$|x_j - x_j^{\mathrm{model}}|$")
    ax.set_title(f"by order, $n = {n_last}$", fontsize=7)
    ax.xaxis.set_major_locator(__import__("matplotlib.ticker", fromlist=["MaxNLocator"]).MaxNLocator(integer=True))
    return drawn


def _snap_to_transitions(line: np.ndarray, x: np.ndarray, y: np.ndarray, grid: Group, names) -> np.ndarray:
    """Move each vertex of a band-count contour onto the located transition of its grid edge.

    A contour of the integer band count at level k + 1/2 passes through grid edges only
    (midway between two points of different counts); where the sweep located the change
    on that edge (``transition_<name>``), the vertex moves there, so the curve runs through
    located points instead of a staircase of midpoints.
    """
    out = line.copy()
    along_x = np.asarray(grid.get(f"transition_{names[0]}"), dtype=float) if grid.has(f"transition_{names[0]}") else None
    along_y = np.asarray(grid.get(f"transition_{names[1]}"), dtype=float) if grid.has(f"transition_{names[1]}") else None
    tiny_x, tiny_y = 1e-9 * np.ptp(x), 1e-9 * np.ptp(y)
    for v, (px, py) in enumerate(line):
        j = int(np.argmin(np.abs(y - py)))
        i = int(np.argmin(np.abs(x - px)))
        if abs(y[j] - py) <= tiny_y and along_x is not None:  # on an edge along the first axis
            i = int(np.clip(np.searchsorted(x, px) - 1, 0, x.size - 2))
            if np.isfinite(along_x[i, j]):
                out[v, 0] = along_x[i, j]
        elif abs(x[i] - px) <= tiny_x and along_y is not None:  # on an edge along the second axis
            j = int(np.clip(np.searchsorted(y, py) - 1, 0, y.size - 2))
            if np.isfinite(along_y[i, j]):
                out[v, 1] = along_y[i, j]
    return out


def _label_point(line: np.ndarray, x: np.ndarray, y: np.ndarray):
    """A vertex near the middle of ``line`` and away from the frame (a contour label there is not cut)."""
    inner = ((line[:, 0] > x.min() + 0.12 * np.ptp(x)) & (line[:, 0] < x.max() - 0.12 * np.ptp(x))
             & (line[:, 1] > y.min() + 0.1 * np.ptp(y)) & (line[:, 1] < y.max() - 0.1 * np.ptp(y)))
    candidates = np.nonzero(inner)[0]
    if candidates.size == 0:
        return None
    return tuple(line[candidates[candidates.size // 2]])


def draw_phase_diagram(tree: Group):
    """Sweep file: band count over the grid (1-D: against the parameter), transitions and Ω_1."""
    if tree.attrs.get("format") != "workbench-sweep" or not tree.has("grid/bands"):
        return None
    grid = tree.groups["grid"]
    names = list(tree.attrs.get("axes", "").split(",")) if tree.attrs.get("axes") else []
    bands = np.asarray(grid.get("bands"))
    from matplotlib.colors import BoundaryNorm, ListedColormap

    if bands.ndim == 1:
        x = np.asarray(grid.get(f"axis_{names[0]}"), dtype=float)
        fig, axes = new_figure(height=2.8, nrows=2, sharex=True)
        axes[0, 0].plot(x, np.where(bands > 0, bands, np.nan), ls="none", marker="o", ms=2.5,
                        color=SERIES[0])
        axes[0, 0].set_ylabel("bands")
        axes[0, 0].yaxis.set_major_locator(__import__("matplotlib.ticker", fromlist=["x"]).MaxNLocator(integer=True))
        support = np.asarray(grid.get("support")) if grid.has("support") else np.zeros((x.size, 0, 2))
        # band j of one band count is another interval than band j of the next: one curve per run
        # of equal counts, never joined across a transition
        runs = np.split(np.arange(x.size), np.nonzero(np.diff(bands))[0] + 1)
        for run in runs:
            for j in range(support.shape[1]):
                for e in (0, 1):
                    axes[1, 0].plot(x[run], support[run, j, e], color=SERIES[j % len(SERIES)], lw=0.8,
                                    marker="." if run.size == 1 else None, ms=2.0)
        if grid.has(f"transition_{names[0]}"):
            located = np.asarray(grid.get(f"transition_{names[0]}"), dtype=float)
            for value in located[np.isfinite(located)]:
                for ax in axes[:, 0]:
                    ax.axvline(value, color="k", lw=0.6, ls=DASHES[3])
        axes[1, 0].set_ylabel("support edges")
        axes[1, 0].set_xlabel(f"${names[0]}$")
        axes[0, 0].set_title("phase diagram (dotted: located transitions)")
        return fig
    x = np.asarray(grid.get(f"axis_{names[0]}"), dtype=float)
    y = np.asarray(grid.get(f"axis_{names[1]}"), dtype=float)
    top = int(max(1, bands.max()))
    fig, axes = new_figure(height=2.9)
    ax = axes[0, 0]
    # grey: point failed or not computed (stored as -1); one Okabe-Ito colour per band count
    colours = [SERIES[(k - 1) % len(SERIES)] for k in range(1, top + 1)]
    boundaries = np.arange(0.5, top + 1.5, 1.0)
    if np.any(bands < 1):
        colours = ["#BBBBBB"] + colours
        boundaries = np.concatenate([[-1.5], boundaries])
    mesh = ax.pcolormesh(x, y, np.where(bands > 0, bands, -1).T, cmap=ListedColormap(colours),
                         norm=BoundaryNorm(boundaries, len(colours)), shading="nearest",
                         rasterized=True)
    if bands.shape[0] > 1 and bands.shape[1] > 1 and top > 1:
        import contourpy

        counts = np.where(bands > 0, bands, np.nan).astype(float)
        generator = contourpy.contour_generator(x, y, counts.T)
        for level in np.arange(1.5, top, 1.0):
            for line in generator.lines(level):
                snapped = _snap_to_transitions(np.asarray(line), x, y, grid, names)
                ax.plot(snapped[:, 0], snapped[:, 1], color="k", lw=0.8)
    cbar = fig.colorbar(mesh, ax=ax, ticks=list(range(1, top + 1)))
    cbar.set_label("number of bands")
    if grid.has("omega") and np.isfinite(np.asarray(grid.get("omega"), dtype=float)[..., 0]).any():
        omega = np.asarray(grid.get("omega"), dtype=float)[..., 0]
        # Ω_1 is the mass right of the first gap: a different mass for each band count, so
        # its contours are drawn in each region of one band count and stop at its border
        for k in range(2, top + 1):
            region = np.where(bands == k, omega, np.nan)
            if np.count_nonzero(np.isfinite(region)) < 4:
                continue
            cs = ax.contour(x, y, region.T, levels=[0.2, 0.4, 0.6, 0.8], colors="w", linewidths=0.5,
                            linestyles=":")
            places = [p for segs in cs.allsegs for seg in segs
                      if (p := _label_point(np.asarray(seg), x, y)) is not None]
            if places:
                ax.clabel(cs, fontsize=5.5, fmt=r"$\Omega_1=%.1f$", manual=places, inline=True)
    ax.set_xlabel(f"${names[0]}$")
    ax.set_ylabel(f"${names[1]}$")
    ax.set_title("bands of $\\mu_V$, transitions, $\\Omega_1$")
    return fig


FIGURES: dict[str, Callable[[Group], object]] = {
    "density": draw_density,
    "coefficients": draw_coefficients,
    "errors": draw_errors,
    "gap_zeros": draw_gap_zeros,
    "edge_zeros": draw_edge_zeros,
    "phase": draw_phase_diagram,
    "recurrence": draw_recurrence,
    "zeros": draw_zeros,
}
#: the figures of the files of single commands (``--out`` of equilibrium, recurrence, zeros)
COMMAND_FIGURES = {"workbench-equilibrium": ("density",), "workbench-recurrence": ("recurrence",),
                   "workbench-zeros": ("zeros",)}


def save_figure(fig, stem: Path, formats: Iterable[str], dpi: int = 300) -> list[Path]:
    """Save ``fig`` as ``stem.<fmt>`` for each format, each file written then renamed.

    The figure is laid out once, at ``dpi``, for all the formats (:func:`workbench.style.laid_out_once`).
    """
    import logging

    import os

    from workbench.hdf5 import make_output_directory, new_file_mode, temporary_beside

    paths = []
    make_output_directory(stem.parent)
    # fontTools (TrueType embedding in PDF) warns about the fonts' own time stamps
    font_log = logging.getLogger("fontTools")
    level = font_log.level
    font_log.setLevel(logging.ERROR)
    try:
        with laid_out_once(fig, dpi):
            for fmt in formats:
                target = stem.with_suffix("." + fmt)
                # a temporary name of its own (owned, with the pid): two runs drawing into one folder never share it
                fd, tmp = temporary_beside(target)
                os.fchmod(fd, new_file_mode())  # the permissions a plain open() would give
                try:
                    with os.fdopen(fd, "wb") as stream:
                        fig.savefig(stream, format=fmt, dpi=dpi, metadata=_metadata(fmt))
                    os.replace(tmp, target)
                except OSError as exc:
                    from equilibrium.errors import InputError

                    raise InputError(f"cannot write the figure {target}: {exc.strerror or exc}; "
                                     "free space or choose another folder") from None
                finally:
                    if os.path.exists(tmp):
                        os.remove(tmp)
                paths.append(target)
    finally:
        font_log.setLevel(level)
    return paths


def _metadata(fmt: str) -> dict[str, str]:
    import workbench

    # PNG/PDF creation dates would make files differ run to run; keep them reproducible
    if fmt == "pdf":
        return {"Creator": f"workbench {workbench.__version__}", "CreationDate": None}
    return {"Software": f"workbench {workbench.__version__}"}


def draw_all(tree: Group, directory: str | Path, *, formats: Iterable[str] = ("pdf", "png"),
             which: Iterable[str] | None = None, dpi: int = 300) -> dict[str, list[Path]]:
    """Draw every available figure of ``tree`` into ``directory``; name -> files written.

    The figures are independent files: with a second core free (:func:`workbench.forked.can_fork`)
    a forked child draws some of them while this process draws the others, each taking the next
    figure from a shared queue as it finishes one (what the child leaves undone, this process
    draws).  Every file is the same as when one process draws them all.
    """
    import importlib
    import os

    from workbench.forked import fork_call

    formats = tuple(formats)
    directory = Path(directory)
    names = list(which) if which is not None else list(FIGURES)
    if tree.attrs.get("format") == "workbench-sweep":
        names = ["phase"]
    elif tree.attrs.get("format") in COMMAND_FIGURES:
        names = list(COMMAND_FIGURES[tree.attrs["format"]])

    def draw(todo) -> dict[str, list[Path] | None]:
        done: dict[str, list[Path] | None] = {}
        # figures made at the PNG resolution: what is measured while building them is what is saved
        with journal_style(dpi=dpi):
            for name in todo:
                fig = FIGURES[name](tree)
                done[name] = None if fig is None else save_figure(fig, directory / name, formats, dpi)
        return done

    def from_queue(reader: int):
        # one byte per figure: a read of one byte from a pipe hands each figure to one process
        while byte := os.read(reader, 1):
            yield names[byte[0]]

    child = None
    if len(names) > 1:
        # matplotlib and the backends imported once, here, for both processes
        import matplotlib.figure  # noqa: F401

        for fmt in formats:
            importlib.import_module("matplotlib.backends.backend_" + ("pdf" if fmt == "pdf" else "agg"))
        reader, writer = os.pipe()
        try:
            os.write(writer, bytes(range(len(names))))   # a few bytes: never blocks
        finally:
            os.close(writer)
        try:
            child = fork_call(lambda: draw(from_queue(reader)))
            done = draw(from_queue(reader))
            theirs = child.result() if child is not None else {}
        finally:
            if child is not None:
                child.cancel()
            os.close(reader)
        done.update(theirs or {})
        # a child that failed: its figures are drawn here (a failure is then raised here)
        done.update(draw([name for name in names if name not in done]))
    else:
        done = draw(names)
    return {name: done[name] for name in names if done.get(name) is not None}
