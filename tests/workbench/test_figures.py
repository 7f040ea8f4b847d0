"""Figures drawn from stored arrays: synthetic closed-form data, files, sizes, no recomputation.

The synthetic run tree is V = x^2/2 (semicircle law), built from closed forms only.
For w_n = exp(-n x^2/2) on R the orthonormal recurrence has (a_k^{(n)})^2 = k/n,
b_k = 0 (rescaled Hermite polynomials; DLMF 18.9.1 / 18.3), the equilibrium
density is sqrt(4 - x^2)/(2 pi) on [-2, 2] (Wigner semicircle), and the zeros
of p_n are the eigenvalues of the Jacobi matrix of these coefficients
(sqrt(2/n) times the zeros of the Hermite polynomial H_n).
"""

from __future__ import annotations

import numpy as np
from scipy.linalg import eigvalsh_tridiagonal

from workbench.results import Group


def semicircle_tree(ns=(20, 40, 80)) -> Group:
    tree = Group(attrs={"format": "workbench-run", "case_name": "semicircle"})
    eq = tree.group("equilibrium")
    eq.attrs.update({"kind": "positive", "bands": 1, "lagrange": 1.0, "energy": 0.75})
    eq.add("support", np.array([[-2.0, 2.0]]), "bands [a_j, b_j]")
    eq.add("masses", np.array([1.0]), "band masses")
    x = np.linspace(-2.2, 2.2, 401)
    eq.add("x", x, "grid")
    eq.add("density", np.where(np.abs(x) < 2, np.sqrt(np.clip(4 - x**2, 0, None)) / (2 * np.pi), 0),
           "psi(x)")
    ns = np.asarray(ns)
    for n in ns:
        d = tree.group(f"direct/n_{n:04d}")
        d.attrs["n"] = int(n)
        k = np.arange(n + 3)
        d.add("a", np.sqrt(k / n), "a_k^{(n)}")
        d.add("b", np.zeros(n + 3), "b_k^{(n)}")
        # zeros of p_n: eigenvalues of the n x n Jacobi matrix (Golub & Welsch, Math. Comp. 1969)
        d.add("zeros", eigvalsh_tridiagonal(np.zeros(n), np.sqrt(np.arange(1, n) / n)),
              "zeros of p_n")
    comp = tree.group("comparison")
    comp.add("n", ns, "n")
    comp.add("a_direct", np.ones(ns.size), "a_n^{(n)} direct")
    comp.add("a_model", np.ones(ns.size), "a_n^{(n)} model")
    comp.add("b_direct", np.zeros(ns.size), "b")
    comp.add("b_model", np.zeros(ns.size), "b")
    comp.add("err_zeros_edge", 3.0 * ns ** (-2.0 / 3.0), "edge zero error")
    comp.add("small_norm", 0.5 / ns, "small norm")
    rates = comp.group("rates")
    rates.group("small_norm").attrs.update({"slope": -1.0, "stderr": 0.01, "intercept": np.log(0.5)})
    comp.add("gap_zeros_direct", np.zeros((ns.size, 0)), "no gaps")
    airy = np.array([-2.33810741, -4.08794944, -5.52055983])  # DLMF Table 9.9.1
    comp.add("airy_zeros", airy, "Airy zeros")
    comp.add("edge_scaled_direct", airy[None, :] * (1 + 1.0 / ns[:, None]), "scaled")
    return tree


def sweep_tree(nt=12, ns=10) -> Group:
    tree = Group(attrs={"format": "workbench-sweep", "axes": "t,s"})
    grid = tree.group("grid")
    t = np.linspace(0, 3, nt)
    s = np.linspace(0, 0.5, ns)
    grid.add("axis_t", t, "t")
    grid.add("axis_s", s, "s")
    bands = np.where(t[:, None] > 2 + s[None, :], 2, 1)
    bands[0, 0] = -1
    grid.add("bands", bands, "bands")
    omega = np.where(bands == 2, 0.5 - s[None, :], np.nan)[..., None]
    grid.add("omega", omega, "Omega_1")
    grid.add("support", np.zeros((nt, ns, 2, 2)), "support")
    return tree


# ----------------------------------------------------------------------------- tests
import struct  # noqa: E402


from workbench.figures import FIGURES, draw_all, draw_density  # noqa: E402
from workbench.results import read_run, write_run  # noqa: E402
from workbench.style import COLUMN_WIDTH_IN, OKABE_ITO, SERIES  # noqa: E402


def _png_size(path):
    with open(path, "rb") as stream:
        header = stream.read(24)
    assert header[:8] == b"\x89PNG\r\n\x1a\n"
    return struct.unpack(">II", header[16:24])


def test_all_run_figures_are_drawn(tmp_path):
    written = draw_all(semicircle_tree(), tmp_path, formats=("pdf", "png"), dpi=200)
    # one band: no gap figure; every other figure has its data
    assert set(written) == {"density", "coefficients", "errors", "edge_zeros"}
    for name, paths in written.items():
        pdf, png = sorted(paths)
        assert pdf.read_bytes()[:5] == b"%PDF-"
        width, height = _png_size(png)
        # one journal column: 3.4 in at 200 dpi is 680 px exactly
        assert width == round(COLUMN_WIDTH_IN * 200), name
        assert height > 100


def test_density_histogram_matches_semicircle():
    # The histogram of the Hermite zeros approximates the semicircle (the check of the
    # figure's normalisation: heights = counts / (n * bin width)).
    tree = semicircle_tree(ns=(400,))
    with __import__("workbench.style", fromlist=["journal_style"]).journal_style():
        fig = draw_density(tree)
    ax = fig.axes[0]
    patch = ax.patches[0]
    # the stairs artist holds the histogram values
    values = patch.get_data().values
    edges = patch.get_data().edges
    mids = 0.5 * (edges[1:] + edges[:-1])
    exact = np.sqrt(4 - mids**2) / (2 * np.pi)
    assert np.max(np.abs(values - exact)) < 0.03


def test_palette_is_okabe_ito():
    assert set(SERIES) <= set(OKABE_ITO.values())


def test_phase_diagram(tmp_path):
    written = draw_all(sweep_tree(), tmp_path, formats=("png",))
    assert list(written) == ["phase"]
    assert _png_size(written["phase"][0])[0] > 500


def test_figures_after_round_trip(tmp_path):
    path = write_run(tmp_path / "run.h5", semicircle_tree())
    again = draw_all(read_run(path), tmp_path / "figs", formats=("png",), dpi=100)
    assert set(again) == {"density", "coefficients", "errors", "edge_zeros"}


def test_missing_data_gives_no_figure():
    from workbench.results import Group

    for name, draw in FIGURES.items():
        assert draw(Group()) is None, name


def test_one_dimensional_phase_diagram(tmp_path):
    from workbench.results import Group

    tree = Group(attrs={"format": "workbench-sweep", "axes": "t"})
    grid = tree.group("grid")
    t = np.linspace(0, 4, 30)
    grid.add("axis_t", t, "t")
    grid.add("bands", np.where(t > 2, 2, 1), "bands")
    # symmetric quartic: one band [-b, b] with b^2 = (2/3)(t + sqrt(t^2 + 12)) for t < 2
    # (the one-cut endpoint condition, derived by hand; t = 0 gives b^4 = 16/3), used here
    # only as plotting data
    b = np.sqrt((2.0 / 3.0) * (t + np.sqrt(t**2 + 12)))
    support = np.full((t.size, 2, 2), np.nan)
    support[:, 0] = np.stack([-b, b], axis=1)
    grid.add("support", support, "support")
    written = draw_all(tree, tmp_path, formats=("png",), dpi=100)
    assert list(written) == ["phase"] and written["phase"][0].stat().st_size > 1000
