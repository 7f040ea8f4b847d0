"""Journal style of the workbench figures.

One column of a two-column journal page is about 3.4 in (86 mm) wide;
fonts of 8-9 pt match the running text after no scaling (common practice).
Colours follow the palette of

    M. Okabe and K. Ito, "Color Universal Design (CUD): how to make figures
    and presentations that are friendly to colorblind people", J*FLY, 2008,

which stays distinguishable under the common forms of colour-vision
deficiency; lines also differ by marker and dash so a grey-scale print
still reads.

The style is applied with :func:`journal_style` as a context manager
(``matplotlib.rc_context``), so importing this module changes nothing
globally.
"""

from __future__ import annotations

import contextlib
import math
from typing import Iterator

#: Okabe & Ito (2008) palette, in their order (black first)
OKABE_ITO = {
    "black": "#000000",
    "orange": "#E69F00",
    "sky_blue": "#56B4E9",
    "bluish_green": "#009E73",
    "yellow": "#F0E442",
    "blue": "#0072B2",
    "vermillion": "#D55E00",
    "reddish_purple": "#CC79A7",
}

#: cycle used for series: blue, vermillion, bluish green, orange, purple, sky blue, black
SERIES = ("#0072B2", "#D55E00", "#009E73", "#E69F00", "#CC79A7", "#56B4E9", "#000000")
#: one more marker than colours: the eighth series (blue again) is told apart by its star
MARKERS = ("o", "s", "^", "D", "v", "P", "X", "*")
DASHES = ("-", "--", "-.", ":", (0, (5, 1)), (0, (3, 1, 1, 1, 1, 1)), (0, (1, 1)))

COLUMN_WIDTH_IN = 3.4
DEFAULT_HEIGHT_IN = 2.4

RC = {
    "font.size": 8.5,
    "axes.titlesize": 9,
    "axes.labelsize": 8.5,
    "xtick.labelsize": 8,
    "ytick.labelsize": 8,
    "legend.fontsize": 7.5,
    "legend.frameon": False,
    "font.family": "serif",
    "mathtext.fontset": "cm",
    "axes.linewidth": 0.6,
    "lines.linewidth": 1.0,
    "lines.markersize": 3.5,
    "xtick.major.width": 0.6,
    "ytick.major.width": 0.6,
    "xtick.direction": "in",
    "ytick.direction": "in",
    "axes.prop_cycle": None,  # filled in by journal_style (needs matplotlib's cycler)
    "figure.dpi": 150,
    # constrained layout fits everything inside the figure, so files keep the exact
    # column width (no bbox trimming, which would also cost a second draw)
    "savefig.bbox": None,
    "pdf.fonttype": 42,   # embed TrueType: text stays text in the PDF
    "ps.fonttype": 42,
}


@contextlib.contextmanager
def journal_style(dpi: float | None = None) -> Iterator[None]:
    """Context in which matplotlib uses the journal style (Agg backend).

    ``dpi`` (default ``RC["figure.dpi"]``) is the resolution of the figures made inside:
    give the PNG resolution, so that the measurements made while a figure is built
    (legend widths, colliding tick labels) are those of the saved file and share its
    text and mathtext caches.
    """
    # Figures are built as matplotlib.figure.Figure objects without pyplot, so
    # they render through the Agg canvas and no GUI backend or global figure
    # registry is ever involved.
    import matplotlib
    from cycler import cycler

    rc = dict(RC)
    rc["axes.prop_cycle"] = cycler(color=list(SERIES))
    if dpi is not None:
        rc["figure.dpi"] = dpi
    with matplotlib.rc_context(rc):
        yield


def new_figure(height: float = DEFAULT_HEIGHT_IN, ncols: int = 1, nrows: int = 1, **kwargs):
    """A figure one journal column wide (call inside :func:`journal_style`)."""
    from matplotlib.figure import Figure

    fig = Figure(figsize=(COLUMN_WIDTH_IN, height), layout="constrained")
    axes = fig.subplots(nrows, ncols, squeeze=False, **kwargs)
    return fig, axes


# --------------------------------------------------------------------------- axes helpers
def _plain_number(value: float) -> str:
    """A tick label without offset or exponent notation for the sizes we plot (n up to 10⁵)."""
    if value >= 1e5:
        exponent = int(round(math.log10(value)))
        mantissa = value / 10.0 ** exponent
        return f"$10^{{{exponent}}}$" if abs(mantissa - 1) < 1e-9 else f"${mantissa:g}\\times 10^{{{exponent}}}$"
    return f"{value:g}"


def log_ticks(lo: float, hi: float) -> list[float]:
    """Tick positions for a logarithmic axis over [lo, hi]: 1-2-5 per decade, finer when the
    range is short, and at least two (common practice of journal figures)."""
    if not (lo > 0 and hi >= lo):
        return []
    for mantissas in ((1.0,), (1.0, 2.0, 5.0), (1.0, 1.5, 2.0, 3.0, 4.0, 5.0, 6.0, 8.0)):
        ticks = [m * 10.0 ** e for e in range(int(math.floor(math.log10(lo))) - 1, int(math.ceil(math.log10(hi))) + 1)
                 for m in mantissas]
        ticks = [t for t in ticks if lo * (1 - 1e-9) <= t <= hi * (1 + 1e-9)]
        if len(ticks) >= 3 or (len(ticks) >= 2 and mantissas != (1.0,)):
            return ticks
    # a range shorter than the finest mantissas: evenly spaced round numbers
    from matplotlib.ticker import MaxNLocator

    values = MaxNLocator(nbins=3, steps=[1, 2, 2.5, 5, 10]).tick_values(lo, hi)
    return [float(t) for t in values if lo * (1 - 1e-9) <= t <= hi * (1 + 1e-9)]


def set_log_axis(axis, lo: float, hi: float) -> None:
    """A log axis whose major ticks are plain numbers (``50, 100, 200``), minor ones unlabelled."""
    from matplotlib.ticker import FixedLocator, FuncFormatter, NullFormatter

    ticks = log_ticks(lo, hi)
    axis.set_major_locator(FixedLocator(ticks))
    axis.set_major_formatter(FuncFormatter(lambda v, _: _plain_number(v)))
    axis.set_minor_formatter(NullFormatter())


def overlapping_labels(fig, axis) -> list[tuple[str, str]]:
    """Pairs of visible tick labels of ``axis`` whose boxes overlap once ``fig`` is drawn."""
    renderer = _renderer(fig)
    labels = _shown_tick_labels(axis)
    boxes = [t.get_window_extent(renderer) for t in labels]
    return [(labels[i].get_text(), labels[j].get_text())
            for i in range(len(boxes)) for j in range(i + 1, len(boxes)) if boxes[i].overlaps(boxes[j])]


def thin_tick_labels(fig, axis) -> None:
    """Keep every second, third, ... major tick label until no two of them overlap."""
    ticks = list(axis.get_majorticklocs())
    for keep in range(2, max(len(ticks), 2) + 1):
        if not overlapping_labels(fig, axis):
            return
        from matplotlib.ticker import FixedLocator

        axis.set_major_locator(FixedLocator(ticks[::keep]))


def _renderer(fig, draw: bool = True):
    """An Agg renderer of ``fig`` at the figure's dpi.

    ``draw=True`` first lays the figure out and places every artist without painting a
    pixel (``Figure.draw_without_rendering``: the sizes and places of texts are those of a
    full draw); ``draw=False`` skips that too (enough to measure a text or a legend, whose
    size does not depend on the layout).
    """
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    fig = fig.figure  # the root figure of a SubFigure (a Figure is its own)
    canvas = fig.canvas if isinstance(fig.canvas, FigureCanvasAgg) else FigureCanvasAgg(fig)
    if draw:
        fig.draw_without_rendering()
    return canvas.get_renderer()


@contextlib.contextmanager
def laid_out_once(fig, dpi: float) -> Iterator[None]:
    """Lay ``fig`` out once at ``dpi`` and keep that layout while saving in several formats.

    ``savefig`` with a layout engine draws every file twice (a draw without output to
    run the constrained layout, then the draw that writes); inside this context the layout
    is run once, at the PNG resolution, and each file costs one draw.  The PDF takes the
    layout measured at ``dpi`` (text sizes scale with the dpi, so the layout is the same
    up to the hinting of the glyphs at 72 dpi, a few hundredths of a point).
    """
    engine = fig.get_layout_engine()
    saved = fig.dpi
    try:
        if engine is not None:
            fig.set_dpi(dpi)
            _renderer(fig)
            fig.set_layout_engine("none")
        yield
    finally:
        if engine is not None:
            fig.set_layout_engine(engine)
        fig.set_dpi(saved)


def legend_below(fig, handles, labels, ncol: int = 2, **kwargs):
    """A legend under the axes, inside the figure: fewer columns until it is no wider than the figure."""
    ncol = max(1, min(ncol, len(labels)))
    while True:
        legend = fig.legend(handles, labels, loc="outside lower center", ncol=ncol, **kwargs)
        if ncol == 1:
            return legend
        width = legend.get_window_extent(_renderer(fig, draw=False)).width
        if width <= fig.bbox.width * 0.98:
            return legend
        legend.remove()
        ncol -= 1


def _shown_tick_labels(axis) -> list:
    """Tick labels matplotlib draws: visible, with text, at a tick inside the view limits."""
    lo, hi = sorted(axis.get_view_interval())
    span = hi - lo
    out = []
    for tick in axis.get_major_ticks() + axis.get_minor_ticks():
        inside = lo - 1e-9 * span <= tick.get_loc() <= hi + 1e-9 * span
        for label in (tick.label1, tick.label2):
            if inside and label.get_visible() and label.get_text():
                out.append(label)
    return out


def clipped_artists(fig) -> list[str]:
    """Texts and legends of ``fig`` that reach outside the figure once drawn (empty: nothing is cut)."""
    renderer = _renderer(fig)
    box = fig.bbox
    out = []
    candidates = list(fig.legends) + list(fig.texts)
    for ax in fig.axes:
        candidates += [ax.title, ax._left_title, ax._right_title, ax.xaxis.label, ax.yaxis.label]
        candidates += _shown_tick_labels(ax.xaxis) + _shown_tick_labels(ax.yaxis)
        candidates += list(ax.texts) + ([ax.get_legend()] if ax.get_legend() else [])
    for artist in candidates:
        if not artist.get_visible() or (hasattr(artist, "get_text") and not artist.get_text()):
            continue
        extent = artist.get_window_extent(renderer)
        if extent.width == 0 and extent.height == 0:
            continue
        if (extent.x0 < box.x0 - 0.5 or extent.x1 > box.x1 + 0.5 or extent.y0 < box.y0 - 0.5
                or extent.y1 > box.y1 + 0.5):
            out.append(artist.get_text() if hasattr(artist, "get_text") else type(artist).__name__)
    return out
