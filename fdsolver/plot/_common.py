"""What the figures share: one figure factory on the non-interactive Agg backend, saving, and axis labels
(the unit labels of :mod:`fdsolver.report._common`)."""

from __future__ import annotations

from fdsolver.report._common import label, title_of, units_of  # noqa: F401  (the unit-label and text helpers, for the figures)

#: resolution of every figure (dots per inch)
DPI = 120


def figure(nrows: int = 1, ncols: int = 1, *, width: float = 7.5, height: float = 5.0, **kw):
    """A new figure of ``nrows`` x ``ncols`` panels, ``width`` x ``height`` inches in all, and its axes as a flat list.

    Further keywords go to :func:`matplotlib.pyplot.subplots` (``sharex``, ``gridspec_kw``, ...).
    """
    import matplotlib

    matplotlib.use("Agg")
    if "text.parse_math" in matplotlib.rcParams:  # titles and names are free text: '$' is a dollar, not mathtext
        matplotlib.rcParams["text.parse_math"] = False
    import matplotlib.pyplot as plt

    fig, axes = plt.subplots(nrows, ncols, figsize=(width, height), dpi=DPI, squeeze=False, **kw)
    return fig, list(axes.ravel())


def save(fig, path, rect=None) -> None:
    """Lay out ``fig`` (within ``rect`` of the figure, if given), write it to ``path`` and close it."""
    import matplotlib.pyplot as plt

    fig.tight_layout(rect=rect)
    fig.savefig(path)
    plt.close(fig)
