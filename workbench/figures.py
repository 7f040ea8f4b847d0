"""Figures of a run (and of a sweep), drawn from the stored data alone.

Every function here takes the tree read back from an HDF5 file
(:func:`workbench.results.read_run`) and returns a matplotlib ``Figure``, or
``None`` when the file does not hold what the figure needs (e.g. no gap in
a one-band case).  Nothing here imports the numerical packages: ``workbench
plot`` redraws every figure from a file without recomputing anything.

Figures (one journal column, :mod:`workbench.style`):

density       equilibrium density ψ against the histogram of the zeros of p_n
              at the largest n, normalised to density (mass 1), band by band
coefficients  direct a_n^{(n)}, b_n^{(n)} against the model prediction over n;
              for several bands the prediction is quasi-periodic in n
errors        errors against n on log-log axes with the fitted slope ± its
              standard error
gap_zeros     position of the zero of p_n in each gap against n, direct and predicted
edge_zeros    zeros next to the rightmost soft edge in the Airy scaling
              (n^{2/3} c (x_j - b) against the Airy zeros a_j)
phase         (sweep files) number of bands over the parameter grid with the
              transition curves, and Ω_1 where there is a gap
"""

from __future__ import annotations

from pathlib import Path
from typing import Callable, Iterable

import numpy as np

from workbench.results import Group
from workbench.style import DASHES, MARKERS, SERIES, journal_style, new_figure

__all__ = [
    "FIGURES",
    "draw_density",
    "draw_coefficients",
    "draw_errors",
    "draw_gap_zeros",
    "draw_edge_zeros",
    "draw_phase_diagram",
    "draw_all",
    "save_figure",
]

ERROR_LABELS = {
    "err_a": r"$|a_n - a_n^{\rm model}|$",
    "err_b": r"$|b_n - b_n^{\rm model}|$",
    "err_values": r"values of $p_n$ (bulk)",
    "err_zeros_bulk": "zeros, bulk",
    "err_zeros_edge": "zeros, edge",
    "err_zeros_gap": "zeros, gaps",
    "small_norm": r"$\max|TM^{-1} - I|$ on circles",
}


def _largest_direct(tree: Group) -> Group | None:
    direct = tree.groups.get("direct")
    if not direct or not direct.groups:
        return None
    name = max(direct.groups, key=lambda k: int(k.split("_")[1]))
    return direct.groups[name]


def draw_density(tree: Group):
    """ψ(x) on each band against the normalised histogram of the zeros of p_n."""
    eq = tree.groups.get("equilibrium")
    last = _largest_direct(tree)
    if eq is None or not eq.has("x") or last is None or not last.has("zeros"):
        return None
    x, psi = eq.get("x"), eq.get("density")
    support = np.atleast_2d(eq.get("support"))
    zeros = np.asarray(last.get("zeros"), dtype=float)
    n = int(last.attrs.get("n", zeros.size))
    fig, axes = new_figure()
    ax = axes[0, 0]
    for j, (a, b) in enumerate(support):
        colour = SERIES[j % len(SERIES)]
        inside = zeros[(zeros >= a) & (zeros <= b)]
        # bins of about sqrt(count) per band; heights = count / (n * width) estimate ψ
        bins = max(4, int(np.sqrt(max(inside.size, 1))) + 2)
        counts, edges = np.histogram(inside, bins=bins, range=(a, b))
        ax.stairs(counts / (n * np.diff(edges)), edges, fill=True, alpha=0.35, color=colour,
                  label=f"zeros, band {j + 1}" if support.shape[0] > 1 else "zeros of $p_n$")
        mask = (x >= a) & (x <= b)
        ax.plot(x[mask], psi[mask], color=colour, lw=1.0)
    ax.plot([], [], color="k", lw=1.0, label=r"$\psi(x)$")
    ax.set_xlabel("$x$")
    ax.set_ylabel("density")
    ax.set_title(f"equilibrium density and zeros, $n = {n}$")
    ax.set_ylim(bottom=0)
    ax.legend(loc="best")
    return fig


def draw_coefficients(tree: Group):
    """a_n^{(n)}, b_n^{(n)}: direct (markers) and model (line) against n."""
    comp = tree.groups.get("comparison")
    if comp is None or not comp.has("a_direct"):
        return None
    model = tree.groups.get("model", Group())
    n = comp.get("n")
    fig, axes = new_figure(height=3.0, nrows=2, sharex=True)
    for ax, key, label in ((axes[0, 0], "a", "$a_n^{(n)}$"), (axes[1, 0], "b", "$b_n^{(n)}$")):
        if model.has(f"{key}_dense"):
            ax.plot(model.get("n_dense"), model.get(f"{key}_dense"), color=SERIES[0], lw=0.5,
                    marker=".", ms=1.5, label="model problem")
        elif comp.has(f"{key}_model"):
            ax.plot(n, comp.get(f"{key}_model"), color=SERIES[0], lw=0.8, ls="--",
                    label="model problem")
        ax.plot(n, comp.get(f"{key}_direct"), ls="none", marker="o", mfc="none",
                color=SERIES[1], label="direct")
        ax.set_ylabel(label)
    axes[0, 0].legend(loc="lower center", bbox_to_anchor=(0.5, 1.12), ncol=2)
    axes[1, 0].set_xlabel("$n$")
    fig.suptitle("recurrence coefficients, direct and predicted", fontsize=9)
    return fig


def draw_errors(tree: Group):
    """Errors against n (log-log) with the fitted slope s ± standard error."""
    comp = tree.groups.get("comparison")
    if comp is None or not comp.has("n"):
        return None
    n = np.asarray(comp.get("n"), dtype=float)
    rates = comp.groups.get("rates", Group())
    fig, axes = new_figure(height=3.6)
    ax = axes[0, 0]
    drawn = 0
    for k, (key, label) in enumerate(ERROR_LABELS.items()):
        if not comp.has(key):
            continue
        err = np.asarray(comp.get(key), dtype=float)
        ok = np.isfinite(err) & (err > 0)
        if ok.sum() == 0:
            continue
        colour, marker = SERIES[k % len(SERIES)], MARKERS[k % len(MARKERS)]
        text = label
        fit = rates.groups.get(key)
        if fit is not None and np.isfinite(fit.attrs.get("slope", np.nan)):
            s, se, c = fit.attrs["slope"], fit.attrs["stderr"], fit.attrs["intercept"]
            grid = np.geomspace(n[ok].min(), n[ok].max(), 20)
            ax.plot(grid, np.exp(c) * grid ** s, color=colour, lw=0.7, ls=DASHES[1])
            text += f": slope ${s:.2f} \\pm {se:.2f}$" if np.isfinite(se) else f": slope ${s:.2f}$"
        ax.plot(n[ok], err[ok], ls="none", marker=marker, color=colour, mfc="none", label=text)
        drawn += 1
    if not drawn:
        return None
    ax.set_xscale("log")
    ax.set_yscale("log")
    ax.set_xlabel("$n$")
    ax.set_ylabel("error")
    ax.set_title("errors against $n$ with fitted rates")
    # below the axes: the legend never hides a point
    ax.legend(loc="upper center", bbox_to_anchor=(0.5, -0.2), ncol=1, fontsize=6.5)
    return fig


def draw_gap_zeros(tree: Group):
    """The zero of p_n in each gap against n (direct markers, model line)."""
    comp = tree.groups.get("comparison")
    if comp is None or not comp.has("gap_zeros_direct"):
        return None
    direct = np.atleast_2d(np.asarray(comp.get("gap_zeros_direct"), dtype=float))
    if direct.size == 0 or direct.shape[1] == 0:
        return None
    n = comp.get("n")
    model = tree.groups.get("model", Group())
    eq = tree.groups.get("equilibrium", Group())
    support = np.atleast_2d(eq.get("support")) if eq.has("support") else None
    fig, axes = new_figure(height=2.4)
    ax = axes[0, 0]
    for j in range(direct.shape[1]):
        colour = SERIES[j % len(SERIES)]
        if model.has("gap_zeros_dense"):
            # dots, not a line: the zero jumps across the gap between consecutive n
            ax.plot(model.get("n_dense"), np.atleast_2d(model.get("gap_zeros_dense"))[:, j],
                    ls="none", marker=".", ms=2.0, color=colour, label="model" if j == 0 else None)
        elif comp.has("gap_zeros_model"):
            ax.plot(n, np.atleast_2d(comp.get("gap_zeros_model"))[:, j], color=colour, lw=0.8,
                    ls="--", label="model" if j == 0 else None)
        ax.plot(n, direct[:, j], ls="none", marker=MARKERS[(j + 1) % len(MARKERS)], mfc="none",
                ms=5, color=SERIES[(j + 1) % len(SERIES)], label=f"gap {j + 1}, direct")
        if support is not None and support.shape[0] > j + 1:
            ax.axhspan(support[j, 1], support[j + 1, 0], color=colour, alpha=0.08, lw=0)
    ax.set_xlabel("$n$")
    ax.set_ylabel("zero of $p_n$ in the gap")
    ax.set_title("zeros in the gaps (no marker: no zero there)")
    ax.legend(loc="upper center", bbox_to_anchor=(0.5, -0.22), ncol=3)
    return fig


def draw_edge_zeros(tree: Group):
    """Largest zeros in the Airy scaling against the Airy zeros (at each stored n)."""
    comp = tree.groups.get("comparison")
    if comp is None or not comp.has("edge_scaled_direct"):
        return None
    scaled = np.atleast_2d(np.asarray(comp.get("edge_scaled_direct"), dtype=float))
    airy = np.asarray(comp.get("airy_zeros"), dtype=float)
    n = comp.get("n")
    fig, axes = new_figure(height=2.4)
    ax = axes[0, 0]
    j = np.arange(1, airy.size + 1)
    ax.plot(j, airy, color="k", lw=0.8, label="Airy zeros $a_j$")
    for i in range(scaled.shape[0]):
        ax.plot(j, scaled[i], ls="none", marker=MARKERS[i % len(MARKERS)], mfc="none",
                color=SERIES[i % len(SERIES)], label=f"$n = {int(n[i])}$")
    ax.set_xlabel("$j$ (counted from the edge)")
    ax.set_ylabel(r"$n^{2/3} c\,(x_j - b)$")
    ax.set_title("zeros at the soft edge, Airy scaling")
    ax.legend(loc="best", ncol=2)
    return fig


def draw_phase_diagram(tree: Group):
    """Sweep file: band count over the grid (1-D: against the parameter) and Ω_1."""
    if tree.attrs.get("format") != "workbench-sweep" or not tree.has("grid/bands"):
        return None
    grid = tree.groups["grid"]
    names = list(tree.attrs.get("axes", "").split(",")) if tree.attrs.get("axes") else []
    bands = np.asarray(grid.get("bands"))
    from matplotlib.colors import BoundaryNorm, ListedColormap

    if bands.ndim == 1:
        x = grid.get(f"axis_{names[0]}")
        fig, axes = new_figure(height=2.8, nrows=2, sharex=True)
        axes[0, 0].step(x, np.where(bands > 0, bands, np.nan), where="mid", color=SERIES[0])
        axes[0, 0].set_ylabel("bands")
        support = np.asarray(grid.get("support")) if grid.has("support") else np.zeros((x.size, 0, 2))
        for j in range(support.shape[1]):
            for e in (0, 1):
                axes[1, 0].plot(x, support[:, j, e], color=SERIES[j % len(SERIES)], lw=0.8)
        axes[1, 0].set_ylabel("support edges")
        axes[1, 0].set_xlabel(f"${names[0]}$")
        axes[0, 0].set_title("phase diagram")
        return fig
    x, y = grid.get(f"axis_{names[0]}"), grid.get(f"axis_{names[1]}")
    top = int(max(1, bands.max()))
    fig, axes = new_figure(height=2.8)
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
        ax.contour(x, y, bands.T.astype(float), levels=np.arange(1.5, top, 1.0), colors="k",
                   linewidths=0.7)
    cbar = fig.colorbar(mesh, ax=ax, ticks=list(range(1, top + 1)))
    cbar.set_label("number of bands")
    if grid.has("omega") and np.isfinite(np.asarray(grid.get("omega"), dtype=float)[..., 0]).any():
        omega = np.asarray(grid.get("omega"), dtype=float)[..., 0]
        cs = ax.contour(x, y, omega.T, levels=[0.2, 0.4, 0.6, 0.8], colors="w", linewidths=0.5,
                        linestyles=":")
        ax.clabel(cs, fontsize=5.5, fmt=r"$\Omega_1=%.1f$")
    ax.set_xlabel(f"${names[0]}$")
    ax.set_ylabel(f"${names[1]}$")
    ax.set_title("phase diagram: bands of the equilibrium measure")
    return fig


FIGURES: dict[str, Callable[[Group], object]] = {
    "density": draw_density,
    "coefficients": draw_coefficients,
    "errors": draw_errors,
    "gap_zeros": draw_gap_zeros,
    "edge_zeros": draw_edge_zeros,
    "phase": draw_phase_diagram,
}


def save_figure(fig, stem: Path, formats: Iterable[str], dpi: int = 300) -> list[Path]:
    """Save ``fig`` as ``stem.<fmt>`` for each format, each file written then renamed."""
    import logging

    paths = []
    stem.parent.mkdir(parents=True, exist_ok=True)
    # fontTools (TrueType embedding in PDF) warns about the fonts' own time stamps
    font_log = logging.getLogger("fontTools")
    level = font_log.level
    font_log.setLevel(logging.ERROR)
    try:
        for fmt in formats:
            target = stem.with_suffix("." + fmt)
            tmp = target.with_name(target.name + ".tmp")
            fig.savefig(tmp, format=fmt, dpi=dpi, metadata=_metadata(fmt))
            tmp.replace(target)
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
    """Draw every available figure of ``tree`` into ``directory``; name -> files written."""
    formats = tuple(formats)
    directory = Path(directory)
    names = list(which) if which is not None else list(FIGURES)
    if tree.attrs.get("format") == "workbench-sweep":
        names = ["phase"]
    written: dict[str, list[Path]] = {}
    with journal_style():
        for name in names:
            fig = FIGURES[name](tree)
            if fig is None:
                continue
            written[name] = save_figure(fig, directory / name, formats, dpi)
    return written
