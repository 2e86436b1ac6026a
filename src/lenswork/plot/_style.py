"""The house style of lenswork figures: one palette, one set of rcParams.

Every figure module uses :func:`figure` to start a figure and :func:`save`
to write PNG/SVG atomically, so all sheets look alike and nothing half-written
is left on disk.
"""

from __future__ import annotations

import contextlib
from pathlib import Path

import matplotlib

matplotlib.use("Agg", force=False)
import matplotlib.pyplot as plt
from matplotlib.colors import LinearSegmentedColormap

from .._io import atomic_path

__all__: list[str] = []

#: Ink, paper and accents (a slate / amber scheme of lenswork's own).
INK = "#23313f"
MUTED = "#7d8a96"
PAPER = "#fbfaf7"
GRID = "#e4e1da"
ACCENT = "#d9822b"  # chosen / highlighted items
ACCENT_2 = "#2b7a78"  # second view in comparisons
#: Sequential map for lens values: deep slate -> teal -> sand -> amber.
LENS_CMAP = LinearSegmentedColormap.from_list(
    "lenswork_lens", ["#1f2d4a", "#2b7a78", "#9cc5a1", "#f2d492", "#d9822b"]
)
#: Diverging map for correlations in [-1, 1].
CORR_CMAP = LinearSegmentedColormap.from_list(
    "lenswork_corr", ["#2b5f8a", "#9fc2dd", "#fbfaf7", "#f0b27a", "#b3541e"]
)

RC = {
    "figure.facecolor": PAPER,
    "axes.facecolor": PAPER,
    "savefig.facecolor": PAPER,
    "axes.edgecolor": MUTED,
    "axes.labelcolor": INK,
    "axes.titlecolor": INK,
    "axes.titlesize": 9,
    "axes.titleweight": "bold",
    "axes.labelsize": 8,
    "xtick.color": MUTED,
    "ytick.color": MUTED,
    "xtick.labelsize": 7,
    "ytick.labelsize": 7,
    "axes.spines.top": False,
    "axes.spines.right": False,
    "font.size": 8,
    "legend.fontsize": 7,
    "legend.frameon": False,
    "svg.hashsalt": "lenswork",  # stable SVG ids: same input, same file
    "svg.fonttype": "none",
}


def figure(*args, **kwargs):
    """``plt.subplots`` under the house style."""
    with plt.rc_context(RC):
        return plt.subplots(*args, **kwargs)


@contextlib.contextmanager
def style():
    """Context manager applying the house rcParams."""
    with plt.rc_context(RC):
        yield


def as_paths(paths):
    """One path (str or Path) or several, as a list of paths."""
    return [paths] if isinstance(paths, (str, bytes)) or hasattr(paths, "suffix") else list(paths)


def png_bytes(fig, *, dpi=100):
    """``fig`` as PNG bytes, rendered by the Agg canvas whatever the backend; close it.

    This is what the ``_repr_png_`` methods return: closing the figure keeps a
    notebook's inline backend from showing it a second time.
    """
    import io

    from matplotlib.backends.backend_agg import FigureCanvasAgg

    buf = io.BytesIO()
    try:
        with plt.rc_context(RC):
            FigureCanvasAgg(fig).print_figure(buf, format="png", dpi=dpi,
                                              metadata={"Software": "lenswork"},
                                              bbox_inches="tight")
    finally:
        plt.close(fig)
    return buf.getvalue()


def save(fig, path, *, dpi=150):
    """Write ``fig`` to ``path`` (.png or .svg, from the ending) atomically; close it."""
    path = Path(path)
    fmt = path.suffix.lower().lstrip(".") or "png"
    meta = {"Date": None} if fmt == "svg" else {"Software": "lenswork"}
    with plt.rc_context(RC), atomic_path(path) as tmp:
        fig.savefig(tmp, format=fmt, dpi=dpi, metadata=meta, bbox_inches="tight")
    plt.close(fig)
    return path
