"""The words of a graph summary: counts, feature lines, the cover settings line.

Shared by :class:`lenswork.graph.GraphSummary`'s text and the figures' titles
that state its counts.
"""

from __future__ import annotations

__all__ = [
    "COUNT_WORDS",
    "KIND_WORDS",
    "count_text",
    "cover_settings",
    "feature_line",
    "settings_text",
]


#: Words of the significant counts (singular; ``count_text`` adds the plural).
COUNT_WORDS = {"components": "component", "loops": "loop", "holes": "hole", "flares": "flare",
          "limbs": "limb", "branch_points": "branch point"}
#: Words of the feature kinds in the small-feature count.
KIND_WORDS = {"loop": "loops", "limb": "limbs", "flare": "flares", "branch": "branch points"}


def count_text(n, word):
    """``"3 loops"``, ``"1 loop"``; ``"loops unknown"`` for None.

    Examples
    --------
    >>> count_text(1, "hole"), count_text(2, "hole"), count_text(None, "hole")
    ('1 hole', '2 holes', 'holes unknown')
    """
    if n is None:
        return f"{word}s unknown"
    return f"{n} {word}{'' if n == 1 else 's'}"


def feature_line(f, needed=None, label=None):
    """One line of the summary's feature list: kind, nodes, rows, lens spans, significance.

    ``needed`` is the significance the feature would need (shown for a small
    one), ``label`` replaces the kind (``"loop:1"``).

    Examples
    --------
    >>> from lenswork.graph import GraphFeature
    >>> f = GraphFeature("loop", (0, 1, 2), 30, {"x": (0.0, 1.0)}, significance=0.5,
    ...                  significant=True)
    >>> feature_line(f).split()[:5]
    ['loop', '3', 'nodes', '30', 'rows']
    """
    spans = ", ".join(f"{k} {a:.4g}..{b:.4g}" for k, (a, b) in f.lens_range.items())
    extra = f" -> node {f.attached_to}" if f.attached_to is not None else ""
    shown = f.nodes if len(f.nodes) <= 8 else (*f.nodes[:8], "...")
    node_text = ",".join(str(x) for x in shown)
    sig = ""
    if f.significance is not None:
        sig = f"  significance {f.significance:.2f}"
        if f.significant is False and needed is not None:
            sig += (f" < {needed:.2f} needed" if f"{f.significance:.2f}" != f"{needed:.2f}"
                    else f" (needs more than {needed:.3f})")
    return (f"  {label or f.kind:<12} {len(f.nodes):>4} nodes {f.rows:>8,} rows  "
            f"{spans}{extra}{sig}  [{node_text}]")


def cover_settings(graph):
    """The cover settings a graph was built with, and which of them were ``"auto"``."""
    params = getattr(graph, "params", None) or {}
    prov = getattr(graph, "provenance", None) or {}
    cover = params.get("cover") or {}
    out = {key: cover[key] for key in ("kind", "intervals", "overlap", "scale", "radius",
                                       "centres") if key in cover and cover[key] is not None}
    if "min_size" in params:
        out["min_size"] = params["min_size"]
    if isinstance(params.get("clusterer"), str):
        out["clusterer"] = params["clusterer"]
    auto = sorted(prov.get("auto_settings") or {})
    if auto:
        out["auto"] = auto
    return out


def settings_text(settings):
    """One line: cover resolution, min_size and clusterer, marking those resolved from the data."""
    auto = set(settings.get("auto", ()))

    def shown(key, value):
        if isinstance(value, (list, tuple)):
            value = " x ".join(f"{v:g}" if isinstance(v, float) else str(v) for v in value)
        elif isinstance(value, float):
            value = f"{value:g}"
        return f"{key} {value}" + (" (auto)" if key in auto else "")

    parts = [shown(k, settings[k]) for k in ("intervals", "overlap", "scale", "radius",
                                             "centres", "min_size", "clusterer")
             if k in settings]
    return "settings: " + ", ".join(parts)
