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
MARKERS = ("o", "s", "^", "D", "v", "P", "X")
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
def journal_style() -> Iterator[None]:
    """Context in which matplotlib uses the journal style (Agg backend)."""
    # Figures are built as matplotlib.figure.Figure objects without pyplot, so
    # they render through the Agg canvas and no GUI backend or global figure
    # registry is ever involved.
    import matplotlib
    from cycler import cycler

    rc = dict(RC)
    rc["axes.prop_cycle"] = cycler(color=list(SERIES))
    with matplotlib.rc_context(rc):
        yield


def new_figure(height: float = DEFAULT_HEIGHT_IN, ncols: int = 1, nrows: int = 1, **kwargs):
    """A figure one journal column wide (call inside :func:`journal_style`)."""
    from matplotlib.figure import Figure

    fig = Figure(figsize=(COLUMN_WIDTH_IN, height), layout="constrained")
    axes = fig.subplots(nrows, ncols, squeeze=False, **kwargs)
    return fig, axes
