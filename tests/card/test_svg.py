"""The card's SVG helpers: tick values, and plots of empty or one-valued data still draw."""

from __future__ import annotations

import xml.etree.ElementTree as ET

import numpy as np
import pytest

from graphmill.card import _svg


@pytest.mark.parametrize(
    ("low", "high", "expected"),
    [(0, 1, [0, 0.2, 0.4, 0.6, 0.8, 1.0]), (0, 1234, [0, 250, 500, 750, 1000, 1250]), (5, 5, None)],
)
def test_nice_ticks_cover_the_range(low: float, high: float, expected: list[float] | None) -> None:
    ticks = _svg.nice_ticks(low, high)
    assert ticks[0] <= low and ticks[-1] >= high
    if expected is not None:
        assert ticks == expected


def test_plots_of_degenerate_data_are_well_formed_svg() -> None:
    empty = np.array([], dtype=np.float64)
    plots = [
        _svg.histogram(empty, title="t", x_label="x", plot_id="a"),
        _svg.histogram(np.array([3.0, 3.0]), title="t", x_label="x", plot_id="b"),
        _svg.loglog({"out": (empty, empty)}, title="t", x_label="x", y_label="y", plot_id="c"),
        _svg.bars([], {"n": []}, title="t", x_label="x", y_label="y", plot_id="d"),
        _svg.bars(["a & <b>"], {"n": [2]}, title="t", x_label="x", y_label="y", plot_id="e"),
    ]
    for svg in plots:
        root = ET.fromstring(svg)  # well-formed, text escaped
        assert root.get("class") == "plot"
