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


def test_every_figure_a_case_can_ask_for_is_drawn():
    """[figures] which accepts the names of workbench.case.FIGURE_NAMES (the case reader does not
    import matplotlib); each must be in the FIGURES registry, which adds only the sweep's phase
    diagram and the figures of the single commands' files (COMMAND_FIGURES)."""
    from workbench.case import FIGURE_NAMES
    from workbench.figures import COMMAND_FIGURES

    command_only = {name for names in COMMAND_FIGURES.values() for name in names} - set(FIGURE_NAMES)
    assert set(FIGURE_NAMES) <= set(FIGURES)
    assert set(FIGURES) - set(FIGURE_NAMES) == {"phase"} | command_only


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


# ------------------------------------------------------------- as a referee reads them
from workbench.figures import draw_coefficients, draw_errors, draw_gap_zeros, draw_phase_diagram  # noqa: E402
from matplotlib.contour import ContourSet  # noqa: E402

from workbench.style import clipped_artists, journal_style, overlapping_labels  # noqa: E402


def _errors_tree(ns) -> Group:
    """Every error quantity of a run at the given n, as C n^s (slopes of the common rates)."""
    tree = semicircle_tree(ns=(20,))
    comp = tree.groups["comparison"] = Group()
    ns = np.asarray(ns)
    comp.add("n", ns, "n")
    rates = comp.group("rates")
    for k, (key, slope) in enumerate([("err_a", -2), ("err_b", -1), ("err_values", -1), ("err_zeros_bulk", -2),
                                      ("err_zeros_edge", -1), ("err_zeros_gap", -2), ("small_norm", -1)]):
        comp.add(key, 10.0 ** (-k) * ns ** float(slope), key)
        rates.group(key).attrs.update({"slope": float(slope), "stderr": 0.01, "intercept": -k * np.log(10)})
    return tree


def _drawn(draw, tree):
    with journal_style():
        return draw(tree)


def test_errors_tick_labels_never_collide():
    # 60 ... 800 used to print "6x10^1 10^2 2x10^2 3x10^2 4x10^2 ..." on top of each other
    for lo, hi in [(60, 800), (40, 640), (40, 320), (16, 32), (100, 120), (20, 28), (1000, 10000), (50, 5000)]:
        fig = _drawn(draw_errors, _errors_tree(np.unique(np.geomspace(lo, hi, 7).round().astype(int))))
        axis = fig.axes[0].xaxis
        labels = [t.get_text() for t in axis.get_ticklabels() if t.get_visible() and t.get_text()]
        assert len(labels) >= 2, (lo, hi, labels)
        assert overlapping_labels(fig, axis) == [], (lo, hi)
        assert all("times" not in t for t in labels), labels  # plain numbers at these sizes
        assert clipped_artists(fig) == [], (lo, hi)


def test_errors_legend_is_compact():
    fig = _drawn(draw_errors, _errors_tree([60, 120, 240, 480, 800]))
    legend = fig.legends[0]
    assert len(legend.get_texts()) == 7
    height = legend.get_window_extent(fig.canvas.get_renderer()).height
    assert height < 0.3 * fig.bbox.height  # it took more than a third before


def test_density_reaches_soft_edges_and_legend_colours():
    from equilibrium import Field, IntervalSet, solve
    from workbench.equilibrium_io import measure_group
    from matplotlib.colors import to_rgb

    tree = semicircle_tree(ns=(200,))
    # two soft-edged bands (the symmetric quartic x^4/4 - 3x^2/2: bands [-√5, -1] ∪ [1, √5])
    mu = solve(Field.from_expression("x**4/4 - 3*x**2/2"))
    tree.groups["equilibrium"] = measure_group(mu)
    fig = _drawn(draw_density, tree)
    ax = fig.axes[0]
    lines = [line for line in ax.lines if len(line.get_xdata()) > 10]
    assert len(lines) == 2
    for line, (a, b) in zip(lines, mu.support):
        xs, ys = np.asarray(line.get_xdata()), np.asarray(line.get_ydata())
        assert xs[0] == a and xs[-1] == b  # the curve reaches both soft ends ...
        assert ys[0] == 0.0 and ys[-1] == 0.0  # ... where the density is 0 (no jump)
    # legend: one entry per band, showing its bars and its line in the band's colour
    legend = fig.legends[0]
    assert [t.get_text() for t in legend.get_texts()] == ["band 1", "band 2"]
    for line, bars in zip(lines, ax.patches):
        assert to_rgb(bars.get_facecolor()[:3]) == to_rgb(line.get_color())
    assert len({to_rgb(line.get_color()) for line in lines}) == 2
    assert clipped_artists(fig) == []


def test_density_near_a_hard_edge():
    from equilibrium import Field, IntervalSet, solve
    from workbench.equilibrium_io import measure_group

    tree = semicircle_tree(ns=(80,))
    mu = solve(Field.from_expression("3*x"), IntervalSet.parse("-1:1"))  # hard edge at -1, soft at 1/3
    tree.groups["equilibrium"] = measure_group(mu)
    fig = _drawn(draw_density, tree)
    (line,) = [line for line in fig.axes[0].lines if len(line.get_xdata()) > 10]
    xs = np.asarray(line.get_xdata())
    assert xs[0] - (-1.0) < 1e-3 * 2 and xs[-1] == mu.support[0][1]
    top = fig.axes[0].get_ylim()[1]
    assert top < 10  # the hard-edge singularity does not squash the rest of the curve


def test_signed_density_is_not_clipped_at_zero():
    from equilibrium import Field, IntervalSet, solve, solve_signed
    from workbench.equilibrium_io import measure_group

    tree = semicircle_tree(ns=(80,))
    field, on = Field.from_expression("2*x**2 - x"), IntervalSet.parse("-1:0.3,0.35:1")
    tree.groups["equilibrium"] = measure_group(solve(field, on))
    tree.groups["equilibrium_signed"] = measure_group(solve_signed(field, on))
    fig = _drawn(draw_density, tree)
    assert fig.axes[0].get_ylim()[0] < 0
    assert "signed measure (not the model)" in [t.get_text() for t in fig.legends[0].get_texts()]
    assert clipped_artists(fig) == []


def _gap_tree(genus=2, ns=(40, 57, 80)) -> Group:
    tree = semicircle_tree(ns=(20,))
    tree.groups["equilibrium"].datasets["support"].data = np.array([[-3.0, -2.0], [-1.0, 1.0], [2.0, 3.0]])[:genus + 1]
    comp = tree.groups["comparison"]
    ns = np.asarray(ns)
    comp.datasets["n"].data = ns
    direct = np.array([[-1.5 + 0.1 * i, 1.5 - 0.1 * i] for i in range(ns.size)])[:, :genus]
    direct[1, 0] = np.nan  # no zero in gap 1 at the second n
    comp.add("gap_zeros_direct", direct, "direct")
    comp.add("gap_zeros_model", direct + 1e-3, "model")
    for key in ("a_direct", "a_model", "b_direct", "b_model"):
        comp.add(key, np.linspace(0.5, 1.5, ns.size), key)
    return tree


def test_gap_zeros_legend_colours_match_the_gaps():
    from matplotlib.colors import to_rgb

    fig = _drawn(draw_gap_zeros, _gap_tree())
    ax = fig.axes[0]
    legend = fig.legends[0]
    labels = [t.get_text() for t in legend.get_texts()]
    assert labels == ["gap 1, model", "gap 1, direct", "gap 2, model", "gap 2, direct"]
    colours = [to_rgb(h.get_color()) for h in legend.legend_handles]
    assert colours[0] == colours[1] != colours[2] == colours[3]  # one colour per gap
    # ... and it is the colour of that gap's marks and of its shading
    marks = [to_rgb(line.get_color()) for line in ax.lines]
    assert marks == colours
    shades = [to_rgb(p.get_facecolor()[:3]) for p in ax.patches]
    assert shades == [colours[0], colours[2]]


def test_no_empty_gap_figure_for_a_failed_model():
    tree = _gap_tree()
    comp = tree.groups["comparison"]
    del comp.datasets["gap_zeros_model"]
    comp.datasets["gap_zeros_direct"].data = np.full((3, 2), np.nan)
    assert draw_gap_zeros(tree) is None


def test_coefficients_one_band_plots_the_difference_without_offset():
    tree = semicircle_tree()
    comp = tree.groups["comparison"]
    comp.datasets["a_direct"].data = 0.8394 + np.array([1.8e-5, 1.0e-5, 0.8e-5])
    comp.datasets["a_model"].data = np.full(3, 0.8394)
    fig = _drawn(draw_coefficients, tree)
    fig.canvas.draw()
    for ax in fig.axes:
        assert "+" not in ax.yaxis.get_offset_text().get_text()  # "1e-5+8.394e-1" was unreadable
    # the top panel shows direct - model
    (points,) = [line for line in fig.axes[0].lines if line.get_marker() == "o"]
    np.testing.assert_allclose(points.get_ydata(), [1.8e-5, 1.0e-5, 0.8e-5], rtol=1e-9)
    assert clipped_artists(fig) == []


def test_coefficients_several_bands_are_not_joined():
    tree = _gap_tree()
    model = tree.group("model")
    dense = np.arange(40, 81)
    model.add("n_dense", dense, "n")
    model.add("a_dense", 1 + 0.5 * np.sin(2.4 * dense), "a")
    model.add("b_dense", 0.5 * np.cos(1.7 * dense), "b")
    fig = _drawn(draw_coefficients, tree)
    for ax in fig.axes:
        for line in ax.lines:
            assert line.get_linestyle() == "None"  # model dots and direct circles: no zigzag


def test_phase_diagram_draws_located_transitions_and_keeps_text_inside():
    tree = sweep_tree()
    grid = tree.groups["grid"]
    t, s = grid.get("axis_t"), grid.get("axis_s")
    bands = np.asarray(grid.get("bands"))
    # the transition t* = 2 + s located on every edge along t where the count changes
    located = np.full((t.size - 1, s.size), np.nan)
    for i in range(t.size - 1):
        for j in range(s.size):
            if bands[i, j] >= 1 and bands[i + 1, j] >= 1 and bands[i, j] != bands[i + 1, j]:
                located[i, j] = 2 + s[j]
    grid.add("transition_t", located, "t*")
    grid.add("transition_s", np.full((t.size, s.size - 1), np.nan), "s*")
    fig = _drawn(draw_phase_diagram, tree)
    ax = fig.axes[0]
    curves = [line for line in ax.lines if line.get_color() in ("k", "black", (0, 0, 0, 1))]
    assert curves
    for line in curves:
        xs, ys = np.asarray(line.get_xdata()), np.asarray(line.get_ydata())
        on_grid = np.isin(ys, s)
        # every vertex on an edge along t sits at the located t*, not midway between grid points
        np.testing.assert_allclose(xs[on_grid], 2 + ys[on_grid], atol=1e-12)
    assert clipped_artists(fig) == []


def test_phase_omega_contours_stay_in_their_region():
    tree = sweep_tree(nt=20, ns=12)
    grid = tree.groups["grid"]
    t, s = grid.get("axis_t"), grid.get("axis_s")
    bands = np.where(t[:, None] < 1, 1, np.where(t[:, None] < 2, 2, 3)) + 0 * s[None, :]
    grid.datasets["bands"].data = bands
    # Omega_1 continuous across t = 2 in value, but a different mass on each side
    grid.datasets["omega"].data = np.where(bands > 1, 0.1 + 0.25 * t[:, None] + 0 * s[None, :], np.nan)[..., None]
    fig = _drawn(draw_phase_diagram, tree)
    ax = fig.axes[0]
    paths = [path for collection in ax.collections if isinstance(collection, ContourSet)
             for path in collection.get_paths() if path.vertices.size]
    assert paths
    for path in paths:
        nearest = np.abs(path.vertices[:, 0][:, None] - t[None, :]).argmin(axis=1)
        # a contour of Omega_1 lies in one region of one band count, never across a border
        assert len(set(bands[nearest, 0])) == 1
    assert clipped_artists(fig) == []
