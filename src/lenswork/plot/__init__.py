"""Figures (matplotlib only; no plotting code lives elsewhere in lenswork).

The drawing functions are imported on first use, so ``import lenswork`` (and
``import lenswork.plot``) does not import matplotlib.

Graphs
    draw_graph            a LensGraph in the house style (PNG or SVG by the file ending)
Screening
    screen_figure         a ScreenResult as one figure: a card per lens, the correlation map
    screen_sheet          the same, written to one or more files
    column_multiples      small multiples: the graph coloured by each of several data columns
    contrast_sheet        small multiples of a feature's top columns from a ContrastResult
Stability and bootstrap
    stability_figure      a StabilityMap as one heat map per feature type
    stability_sheet       the same, written to one or more files
    bootstrap_figure      how often each feature count recurred over the resampled graphs
    bootstrap_sheet       the same, written to one or more files
Comparison of views
    comparison_figure     the views of a ViewComparison side by side, with their correspondence
    comparison_sheet      the same, written to one or more files

Examples
--------
>>> import lenswork.plot
>>> lenswork.plot.__all__[:2]
['bootstrap_figure', 'bootstrap_sheet']
>>> lenswork.plot.draw_graph.__module__
'lenswork.plot._graph'
"""

from __future__ import annotations

import importlib

#: public name -> private module that defines it
_HOMES = {
    "draw_graph": "_graph",
    "screen_figure": "_sheet",
    "screen_sheet": "_sheet",
    "column_multiples": "_columns",
    "contrast_sheet": "_columns",
    "stability_figure": "_stability",
    "stability_sheet": "_stability",
    "bootstrap_figure": "_stability",
    "bootstrap_sheet": "_stability",
    "comparison_figure": "_compare",
    "comparison_sheet": "_compare",
}

__all__ = sorted(_HOMES)


def __getattr__(name):
    home = _HOMES.get(name)
    if home is None:
        raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
    value = getattr(importlib.import_module(f".{home}", __name__), name)
    globals()[name] = value  # later look-ups skip this function
    return value


def __dir__():
    return sorted({*globals(), *__all__})
