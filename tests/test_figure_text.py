"""Figures show free text as text and numbers as numbers.

Titles and names are free text, so figures do not parse mathtext ('$' stays a dollar); log axes must then
still be labelled as numbers (1e-05, not the raw mathtext source '$\\mathdefault{10^{-5}}$').  Common
practice, no source.
"""

from __future__ import annotations

import numpy as np

from fdsolver.plot._common import figure, save


def test_log_axis_ticks_are_numbers_and_a_dollar_stays_a_dollar(tmp_path):
    fig, (ax,) = figure()
    ax.plot(np.logspace(-7, 0, 50), np.logspace(-7, 0, 50))
    ax.set_xscale("log")
    ax.set_yscale("log")
    ax.set_title("cost in $ per wafer $x")  # unbalanced dollars: mathtext would refuse to draw this
    save(fig, tmp_path / "f.png")  # lays out and draws the figure, then closes it
    assert (tmp_path / "f.png").stat().st_size > 1000
    labels = [t.get_text().replace("\u2212", "-")  # matplotlib writes a typographic minus
              for axis in (ax.xaxis, ax.yaxis) for t in axis.get_ticklabels() if t.get_text()]
    assert labels, "no tick labels drawn"
    assert not any("$" in t or "mathdefault" in t for t in labels), labels
    assert "1e-05" in labels or "1e-04" in labels, labels
    assert ax.get_title() == "cost in $ per wafer $x"
