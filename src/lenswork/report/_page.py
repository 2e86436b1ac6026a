"""The report page: one HTML file with its style, script and data inline.

The page's style (``page.css``) and script (``page.js``, plain JavaScript
drawing SVG: no library) are package data files beside this module; the data
is the :func:`~lenswork.report.report_data` document in a
``<script type="application/json" id="report-data">`` element. Nothing is
fetched at view time: no ``src`` or ``href`` leaves the file.
"""

from __future__ import annotations

import html
from importlib import resources
from pathlib import Path

from .. import _progress
from .._io import write_text
from .._json import dumps
from ._data import CONTRAST_ROWS, report_data

__all__ = ["report_html", "write_report"]


def _asset(name):
    return resources.files(__package__).joinpath(name).read_text(encoding="utf-8")


def _script_text(text):
    """Text safe inside a <script> element: no "</" can close it early."""
    return text.replace("</", "<\\/").replace("<!--", "<\\!--")


def report_html(doc):
    """The page for a :func:`report_data` document, as one HTML string.

    Examples
    --------
    >>> import numpy as np
    >>> from lenswork import PointCloud, build_graph
    >>> rng = np.random.default_rng(0)
    >>> X = rng.normal(size=(200, 2))
    >>> cloud = PointCloud.from_array(X, feature_names=["a", "b"])
    >>> page = report_html(report_data(build_graph(X[:, 0], cloud, intervals=4), cloud))
    >>> page.startswith("<!DOCTYPE html>"), 'src="http' in page, page.count("<script")
    (True, False, 2)
    """
    title = html.escape(str(doc.get("title", "lenswork report")))
    data = _script_text(dumps(doc))
    return "\n".join([
        "<!DOCTYPE html>",
        '<html lang="en">',
        "<head>",
        '<meta charset="utf-8">',
        '<meta name="viewport" content="width=device-width, initial-scale=1">',
        f"<title>{title}</title>",
        f"<style>\n{_asset('page.css')}\n</style>",
        "</head>",
        "<body>",
        '<a class="skip" href="#graph-section">Skip to the graph</a>',
        f'<header class="top"><h1 id="title">{title}</h1>'
        '<p id="lede" class="muted"></p></header>',
        '<main id="main" aria-busy="true"><noscript>This page needs JavaScript to draw the graph '
        "and the tables; its data is in the report-data element of the file.</noscript></main>",
        f'<script type="application/json" id="report-data">{data}</script>',
        f"<script>\n{_script_text(_asset('page.js'))}\n</script>",
        "</body>",
        "</html>",
        "",
    ])


def write_report(path, graph, data=None, *, screen=None, title=None, top=6, alpha=0.05,
                 layout="auto", random_state=0, contrast_rows=CONTRAST_ROWS):
    """Write a self-contained HTML report of a graph (and a screen) to ``path``.

    The page shows the screen's ranking (a sortable table with every reason,
    the chosen lenses and the figure sheet), the graph in lenswork's layout
    with pan and zoom, a panel per node (size, lens ranges, the columns that
    set it apart, its members, downloadable as CSV), colouring by any lens or
    data column with a legend in the table's units, the significant features
    with their contrast tables, and the provenance. It opens from disk in a
    current browser with no network access. The file is written atomically.

    Parameters
    ----------
    path : str or Path
        The HTML file to write (its folder is created if missing).
    graph, data, screen, title, top, alpha, layout, random_state, contrast_rows
        As for :func:`report_data`.

    Returns
    -------
    Path

    Examples
    --------
    >>> import pathlib, tempfile
    >>> import numpy as np
    >>> import numpy as np
    >>> from lenswork import PointCloud, build_graph
    >>> rng = np.random.default_rng(0)
    >>> X = rng.normal(size=(200, 2))
    >>> cloud = PointCloud.from_array(X, feature_names=["a", "b"])
    >>> g = build_graph(X[:, 0], cloud, intervals=4)
    >>> out = write_report(pathlib.Path(tempfile.mkdtemp()) / "r.html", g, cloud)
    >>> out.read_text().count('id="report-data"')
    1
    """
    with _progress.step("report: node data and contrasts"):
        doc = report_data(graph, data, screen=screen, title=title, top=top, alpha=alpha,
                          layout=layout, random_state=random_state,
                          contrast_rows=contrast_rows)
    with _progress.step("report: writing the page"):
        path = Path(path)
        write_text(path, report_html(doc))
    return path
