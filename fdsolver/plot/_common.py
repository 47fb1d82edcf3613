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


def save(fig, path, rect=None, layout: bool = True) -> None:
    """Lay out ``fig`` (within ``rect`` of the figure, if given; ``layout=False``: as it is), write it to ``path``
    and close it."""
    import matplotlib.pyplot as plt

    _plain_log_ticks(fig)
    if layout:
        fig.tight_layout(rect=rect)
    fig.savefig(path, bbox_inches="tight", pad_inches=0.08)  # nothing outside the axes (legends, labels) is clipped
    plt.close(fig)


def _plain_log_ticks(fig) -> None:
    """Log axes labelled 1e-05 ... 1 instead of with mathtext, which figures do not parse (``text.parse_math`` is
    off so that '$' in a title or a name stays a dollar)."""
    from matplotlib.ticker import LogFormatter, LogFormatterMathtext

    for ax in fig.axes:
        for axis in (ax.xaxis, ax.yaxis):
            for get, put in ((axis.get_major_formatter, axis.set_major_formatter),
                             (axis.get_minor_formatter, axis.set_minor_formatter)):
                fmt = get()
                if isinstance(fmt, LogFormatterMathtext):
                    put(LogFormatter(base=getattr(fmt, "_base", 10.0), labelOnlyBase=fmt.labelOnlyBase,
                                     minor_thresholds=fmt.minor_thresholds))


def legend_outside(ax, handles=None, labels=None, fontsize: float = 7.5, title: str | None = None, max_rows: int = 24):
    """A legend to the right of ``ax``, off the data (entries beyond ``max_rows`` summarised in one line)."""
    if handles is None:
        handles, labels = ax.get_legend_handles_labels()
    if not handles:
        return None
    if len(handles) > max_rows:
        from matplotlib.lines import Line2D

        extra = len(handles) - (max_rows - 1)
        handles = list(handles[: max_rows - 1]) + [Line2D([], [], color="none")]
        labels = list(labels[: max_rows - 1]) + [f"... and {extra} more"]
    return ax.legend(handles, labels, loc="upper left", bbox_to_anchor=(1.01, 1.0), borderaxespad=0.0,
                     fontsize=fontsize, frameon=False, title=title, title_fontsize=fontsize)


def run_subtitle(ds) -> str:
    """A short second title line: carrier, mass and unit system of the run."""
    from fdsolver.report._common import mass_text

    a = ds.attrs
    if a.get("fdsolver_kind") == "interband":
        masses = "; ".join(f"{c} {_range(a.get(k, a.get('layer_masses', [])))} m_e" for c, k in
                           (("e", "layer_masses"), ("hh", "heavy_hole_layer_masses"), ("lh", "light_hole_layer_masses")))
        parts = [f"masses by layer: {masses}", f"units {a.get('units_system', '')}"]
    else:
        parts = [str(a.get("carrier", "electron")).replace("_", " "), f"m = {mass_text(ds)}",
                 f"units {a.get('units_system', '')}"]
    if a.get("materials"):
        parts.insert(0, f"{a['materials']}, {float(a.get('temperature', 300.0)):g} K")
    return "; ".join(parts)


def _range(values) -> str:
    import numpy as np

    v = np.atleast_1d(np.asarray(values, dtype=float))
    if v.size == 0:
        return "?"
    lo, hi = float(v.min()), float(v.max())
    return f"{lo:.4g}" if lo == hi else f"{lo:.4g}-{hi:.4g}"
