"""scikit-learn clusterers as a clustering rule: cloned per element, noise points apart.

Any object with ``fit_predict`` (and ``get_params``) is accepted as
``clusterer``: it is cloned for each element and given the build's seed when
its ``random_state`` is unset; label -1 means noise, and every noise point is
a group of its own (a fragment unless ``min_size=1``).
"""

from __future__ import annotations

import numbers

import numpy as np

from .._errors import ParameterError

__all__ = ["clusterer_name", "estimator_labels"]


def estimator_labels(estimator, Xe, seed, element):
    from sklearn.base import clone

    est = clone(estimator)
    if "random_state" in est.get_params() and est.get_params()["random_state"] is None:
        est.set_params(random_state=seed)
    try:
        labels = np.asarray(est.fit_predict(Xe)).astype(np.int64)
    except (ValueError, TypeError) as err:
        raise ParameterError(
            f"The clusterer {type(estimator).__name__} failed on cover element {element} "
            f"({Xe.shape[0]} points): {err}. Choose parameters that fit small groups, or use "
            f"clusterer='graph'."
        ) from err
    noise = labels < 0
    if noise.any():  # every noise point is its own group (a fragment unless min_size=1)
        labels = labels.copy()
        labels[noise] = labels.max(initial=-1) + 1 + np.arange(noise.sum())
    return np.unique(labels, return_inverse=True)[1].astype(np.int64)


def clusterer_name(clusterer):
    """A JSON-ready description of the clusterer for provenance."""
    if isinstance(clusterer, str):
        return clusterer
    params = {
        key: (v if isinstance(v, (str, bool, numbers.Number, type(None))) else repr(v))
        for key, v in sorted(clusterer.get_params(deep=False).items())
    }
    return {"estimator": type(clusterer).__name__, "params": params}
