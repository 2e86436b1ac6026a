"""A raw table becomes a PointCloud: features chosen, ids, invalid rows, scaling."""

from __future__ import annotations

import math
import re

import numpy as np

from ._checks import check_distinct_rows, check_magnitude, check_unique_ids
from ._cloud import ExcludedRow, PointCloud
from ._files import DELIMITER_LIKE, DELIMITER_NAMES
from ._messages import (
    as_python,
    describe_bad,
    input_error,
    names_list,
    not_number_error,
    rows_list,
    short,
    warn_user,
)
from ._raw import (
    DECIMAL_COMMA,
    AllBut,
    NotNumber,
    check_duplicate_names,
    column_numbers,
    is_missing_object,
    mostly_numbers,
    resolve_selection,
)

__all__ = ["SCALINGS", "assemble"]


SCALINGS = ("zscore", "robust", "auto")


def _clean_ids(raw, j):
    name = raw.names[j]
    col = raw.columns[j]
    what = f"the id column {name!r}"
    kind = col.dtype.kind
    if kind in "f":
        bad = ~np.isfinite(col)
        if bad.any():
            i = int(np.argmax(bad))
            raise input_error(
                f"{what[0].upper()}{what[1:]} of {raw.label} has no id (a missing or non-finite "
                f"value) at row {raw.row_numbers[i]}. Give every row an id."
            )
        if np.all(col == np.round(col)) and np.all(np.abs(col) < 2**53):
            col = col.astype(np.int64)
    elif kind == "O":
        values = col.tolist()
        for i, v in enumerate(values):
            if is_missing_object(v) or (isinstance(v, str) and not v.strip()) or (
                isinstance(v, float) and math.isnan(v)
            ):
                raise input_error(
                    f"{what[0].upper()}{what[1:]} of {raw.label} has no id at row "
                    f"{raw.row_numbers[i]}. Give every row an id."
                )
        if raw.is_text:
            col = _int_ids(values, col)
    check_unique_ids(col, raw.row_numbers, what, raw.label)
    return col


def _int_ids(values, col):
    """Text ids that are all plain integers ("12", "-3", not "007") become int64."""
    try:
        ints = [int(v) for v in values]
        if all(str(i) == v for i, v in zip(ints, values, strict=True)):
            return np.array(ints, dtype=np.int64)
    except (ValueError, OverflowError):
        pass
    return col


def assemble(raw, features, id_column, scale, invalid, min_rows):
    names, label, n_read = raw.names, raw.label, raw.n
    check_duplicate_names(names, label)
    selection = getattr(raw, "selection", None)
    feats, id_j = selection or resolve_selection(names, features, id_column, label)
    numbers_of = {}
    chosen = feats is not None and not isinstance(feats, AllBut)
    if not chosen:
        dropped = set(feats or ())
        feats, first_text = [], None
        for j in range(len(names)):
            if j == id_j or j in dropped:
                continue
            try:
                values, miss = column_numbers(raw, j)
            except NotNumber as err:
                first_text = first_text or (j, err)
                if j in raw.text and err.mostly_numbers or (
                    j not in raw.text and mostly_numbers(raw.columns[j])
                ):
                    comma = (
                        " (decimal commas are not read: write 1.5, not 1,5)"
                        if isinstance(err.value, str) and DECIMAL_COMMA.match(err.value) else ""
                    )
                    warn_user(
                        f"Column {names[j]!r} in {label} is left out of the features: row "
                        f"{raw.row_numbers[err.index]} holds {short(err.value)}, which is not a "
                        f"number{comma}, though other cells are. Fix the cell, or choose the "
                        f"features (features=[...]; CLI: --features)."
                    )
                continue
            if len(miss) == n_read:
                continue  # every cell missing: passthrough
            feats.append(j)
            numbers_of[j] = (values, miss)
        if not feats:
            raise _no_features(raw, id_j, first_text)
    else:
        for j in feats:
            try:
                numbers_of[j] = column_numbers(raw, j)
            except NotNumber as err:
                raise not_number_error(
                    label, names[j], err.value, raw.row_numbers[err.index]
                ) from None
    feature_names = tuple(names[j] for j in feats)
    d = len(feats)
    X = np.empty((n_read, d), dtype=np.float64)
    missing_masks = {}
    for k, j in enumerate(feats):
        values, miss = numbers_of.pop(j)
        X[:, k] = values
        if len(miss):
            mask = np.zeros(n_read, dtype=bool)
            mask[miss] = True
            missing_masks[k] = mask
    ids_all = np.arange(1, n_read + 1) if id_j is None else _clean_ids(raw, id_j)
    pass_js = [j for j in range(len(names)) if j != id_j and j not in feats]
    finite = np.isfinite(X)
    bad_rows = ~finite.all(axis=1)
    excluded = ()
    if bad_rows.any():
        bad_idx = np.flatnonzero(bad_rows)

        def reason(i):
            parts = []
            for k in np.flatnonzero(~finite[i]):
                missing = k in missing_masks and missing_masks[k][i]
                what = "missing value" if missing else describe_bad(X[i, k], False)
                parts.append(f"{what} in column {feature_names[k]!r}")
            return "; ".join(parts)

        if invalid == "error":
            i = int(bad_idx[0])
            k = int(np.flatnonzero(~finite[i])[0])
            missing = k in missing_masks and missing_masks[k][i]
            more = (
                f" ({len(bad_idx)} rows in all have missing, NaN or infinite feature values.)"
                if len(bad_idx) > 1 else ""
            )
            raise input_error(
                f"Column {feature_names[k]!r} in {label} has {describe_bad(X[i, k], missing)} "
                f"at row {raw.row_numbers[i]}; features must be finite numbers.{more} Fill in or "
                f"remove such rows, or pass invalid='exclude' (CLI: --skip-invalid) to report "
                f"them and keep them out."
            )
        excluded = tuple(
            ExcludedRow(
                row=int(raw.row_numbers[i]),
                id=as_python(ids_all[i]),
                reason=reason(i),
                passthrough={names[j]: as_python(raw.columns[j][i]) for j in pass_js},
            )
            for i in bad_idx
        )
        warn_user(
            f"Kept {len(excluded)} of {n_read} rows of {label} out: they hold missing, NaN or "
            f"infinite feature values (rows {rows_list(raw.row_numbers[bad_idx])}). They are "
            f"listed in PointCloud.excluded and written to outputs with missing lens values."
        )
        keep = ~bad_rows
        X = np.ascontiguousarray(X[keep])
    else:
        keep = np.ones(n_read, dtype=bool)
    n = X.shape[0]
    if n < min_rows:
        kept_out = f", {len(excluded)} more kept out as invalid" if excluded else ""
        raise input_error(
            f"{label} has {n} usable row{'s' if n != 1 else ''} ({n_read} read{kept_out}); at "
            f"least {min_rows} are needed (min_rows={min_rows}). Add rows"
            f"{' or fix the rows kept out' if excluded else ''}."
        )
    rows = raw.row_numbers[keep]
    lo, hi = X.min(axis=0), X.max(axis=0)
    constant = lo == hi
    if constant.all() and n > 1:
        raise input_error(
            f"Every row used of {label} has the same feature values "
            f"({names_list(list(feature_names))}): no lens can tell the rows apart, and a lens "
            f"computed on them would be constant or arbitrary. Choose feature columns that vary "
            f"(--features)."
        )
    if constant.any() and n > 1:
        warn_user(
            f"Feature column{'s' if constant.sum() > 1 else ''} "
            f"{names_list([feature_names[k] for k in np.flatnonzero(constant)])} in {label} "
            f"{'are' if constant.sum() > 1 else 'is'} constant (one value in every row used): "
            f"such columns add nothing to distances. Leave them out of the features."
        )
    if not chosen and id_j is None:
        _warn_id_like(X, feature_names, label)  # on the values as read: ids are integers
    scaling, rule = None, None
    if scale == "auto":
        scale, rule = auto_standardise(lo, hi, feature_names, label)
    if scale is not None:
        X, scaling = _standardise(X, scale, feature_names, label)
        if rule is not None:
            scaling["chosen_by"] = rule
    check_magnitude(X, feature_names, rows, label, scale)
    if scale is None and rule is None:
        _warn_scales(X, lo, hi, feature_names, label)
    distinct = check_distinct_rows(X, label)
    id_name = names[id_j] if id_j is not None else (
        "row" if "row" not in names else "row_number"
    )
    provenance = dict(raw.provenance)
    provenance.setdefault("delimiter", None)
    provenance.update(
        n_rows_read=int(n_read), n_rows_used=int(n), n_rows_excluded=len(excluded),
        features=list(feature_names), id_column=None if id_j is None else names[id_j],
        passthrough=[names[j] for j in pass_js], scaling=scaling, invalid=invalid,
    )
    if rule is not None and scaling is None:
        provenance["scale_rule"] = rule
    if distinct is not None:
        provenance["distinct_rows"] = distinct
    return PointCloud(
        X=X,
        feature_names=feature_names,
        ids=ids_all[keep],
        id_name=id_name,
        passthrough={names[j]: raw.columns[j][keep] for j in pass_js},
        row_numbers=rows,
        excluded=excluded,
        provenance=provenance,
    )


#: Feature columns whose spreads differ by more than this factor get a word about scaling.
SCALE_RATIO = 100.0
#: Fewest rows at which a column of unique integers in monotone order is called id-like.
ID_LIKE_MIN_ROWS = 10


def _warn_id_like(X, names, label):
    """Warn about feature columns that look like row ids: unique integers in monotone order."""
    if X.shape[0] < ID_LIKE_MIN_ROWS:
        return
    looks = []
    for k, name in enumerate(names):
        col = X[:, k]
        if not np.all(col == np.round(col)):
            continue
        steps = np.diff(col)
        if np.all(steps > 0) or np.all(steps < 0):
            looks.append(name)
    if looks:
        warn_user(
            f"Feature column{'s' if len(looks) > 1 else ''} {names_list(looks)} in {label} "
            f"look{'' if len(looks) > 1 else 's'} like a row id (unique integers in increasing or "
            f"decreasing order) and {'are' if len(looks) > 1 else 'is'} used as a feature. Name "
            f"the id column (id_column=...; CLI: --id-column {looks[0]}) or leave it out of the "
            f"features (features='~{looks[0]}'; CLI: -f '~{looks[0]}')."
        )


def auto_standardise(lo, hi, names, label):
    """``scale="auto"``: z-score the features when their ranges differ by more than ``SCALE_RATIO``.

    Columns whose ranges (max - min) differ by more than a factor of 100 are in
    different units (a count of thousands beside a 0/1 flag): left as they are,
    distances, neighbours and every lens follow the widest column, and which
    column is widest is an accident of the units (standardising features in
    different units before Euclidean distances is common practice). Ranges,
    not standard deviations, tell units apart: a pixel that is rarely lit has a
    small standard deviation but the same 0-16 range as the others (scikit-learn's
    digits: range ratio 16, sd ratio 277), so such a table is left in its units.

    Parameters
    ----------
    lo, hi : ndarray of shape (d,)
        Each feature column's smallest and largest value on the rows used.
    names : sequence of str
    label : str
        The table's name, for the message.

    Returns
    -------
    scale : {"zscore", None}
    rule : dict
        ``{"rule": "auto", "range_ratio", "widest", "narrowest", "choice"}``,
        recorded in the provenance.

    Examples
    --------
    >>> import warnings
    >>> lo = np.array([0.0, 0.0])
    >>> with warnings.catch_warnings(record=True):
    ...     auto_standardise(lo, np.array([4000.0, 1.0]), ["lines", "flag"], "t")[0]
    'zscore'
    >>> auto_standardise(lo, np.array([16.0, 2.0]), ["p1", "p2"], "t")[0] is None
    True
    """
    span = np.asarray(hi, dtype=np.float64) - np.asarray(lo, dtype=np.float64)
    # a span below the smallest normal float is not a unit but an underflow: such a column is
    # refused by the magnitude check, not rescued by a scaling nobody asked for
    found = _widest_and_narrowest(span, np.finfo(np.float64).tiny)
    if found is None:
        return None, {"rule": "auto", "range_ratio": 1.0, "choice": "none"}
    ratio, wide, narrow = found
    choice = "zscore" if ratio > SCALE_RATIO else "none"
    rule = {"rule": "auto", "range_ratio": ratio, "widest": names[wide],
            "narrowest": names[narrow], "choice": choice}
    if choice == "zscore":
        times = f"{ratio:,.0f}x" if ratio < 1e6 else f"{ratio:.3g}x"
        warn_user(
            f"Feature columns of {label} differ in range by {times} ({names[wide]!r} spans "
            f"{span[wide]:.3g}, {names[narrow]!r} {span[narrow]:.3g}): they are in different "
            f"units, so lenswork standardised them (z-score; scale='auto', the default). Pass "
            f"scale='none' (CLI: --scale none) to keep the units."
        )
        return "zscore", rule
    return None, rule


def _widest_and_narrowest(spread, smallest):
    """``(ratio, widest, narrowest)`` over the columns whose finite spread is at least
    ``smallest`` (None when fewer than two are): the ratio capped at the largest float."""
    live = np.flatnonzero(np.isfinite(spread) & (spread >= smallest))
    if live.size < 2:
        return None
    wide, narrow = live[np.argmax(spread[live])], live[np.argmin(spread[live])]
    with np.errstate(over="ignore"):
        ratio = min(float(spread[wide] / spread[narrow]), float(np.finfo(np.float64).max))
    return ratio, wide, narrow


def _warn_scales(X, lo, hi, names, label):
    """Warn when the feature columns' spreads (standard deviations) differ by > SCALE_RATIO."""
    top = np.maximum(hi, -lo)  # the columns' largest magnitudes, from the intake's min / max
    top[top == 0] = 1.0
    # scaled first (squares cannot overflow), one column at a time: no copy of the whole table
    sd = np.array([(X[:, k] / top[k]).std() * top[k] for k in range(X.shape[1])])
    found = _widest_and_narrowest(sd, np.nextafter(0.0, 1.0))
    if found is None:
        return
    ratio, wide, narrow = found
    if ratio > SCALE_RATIO:
        warn_user(
            f"Feature columns of {label} differ in scale by {ratio:,.0f}x (standard deviation of "
            f"{names[wide]!r} {sd[wide]:.3g}, of {names[narrow]!r} {sd[narrow]:.3g}): distances, "
            f"neighbours and every lens follow the widest columns. Standardise them "
            f"(scale='zscore'; CLI: --scale zscore) unless the units are meant to compare."
        )


def _no_features(raw, id_j, first_text):
    names, label = raw.names, raw.label
    if len(names) == 1 and id_j == 0:
        return input_error(
            f"{label} has no feature columns: its only column, {names[0]!r}, is the id column. "
            f"Add numeric feature columns, or leave id_column out to use it as a feature."
        )
    example = ""
    if first_text is not None:
        j, err = first_text
        example = (
            f" (e.g. column {names[j]!r} holds {short(err.value)} at row "
            f"{raw.row_numbers[err.index]})"
        )
    if len(names) == 1 and raw.is_text:
        used = raw.provenance.get("delimiter")
        found = [c for c in DELIMITER_LIKE if c in names[0] and c != used]
        if found:
            c = found[0]
            return input_error(
                f"{label} has no feature columns: it was read as a single column named "
                f"{short(names[0])} holding text{example}. The header holds "
                f"{DELIMITER_NAMES[c]}s ({c!r}), so the columns may be separated by them: pass "
                f"delimiter={c!r}, or save the file comma-separated."
            )
    comma = _decimal_comma(raw, id_j)
    if comma is not None:
        j, value, row = comma
        return input_error(
            f"{label} has no feature columns: column {names[j]!r} holds {short(value)} at row "
            f"{row}, a number written with a decimal comma. lenswork reads a decimal point: "
            f"save the file with decimal points (e.g. 0.5, not 0,5)."
        )
    besides = " besides the id column" if id_j is not None else ""
    return input_error(
        f"{label} has no feature columns: no column{besides} holds only numbers{example}. "
        f"Choose the feature columns (features=[...]; CLI: --features), or fix the cells."
    )


#: A number written with a decimal comma (0,5 or -1.234,5): common in continental exports.
_DECIMAL_COMMA = re.compile(r"^[+-]?(\d{1,3}(\.\d{3})+|\d+),\d+([eE][+-]?\d+)?$")


def _decimal_comma(raw, id_j):
    """(column, value, row) of the first text column whose cells are decimal-comma numbers."""
    for j, col in enumerate(raw.columns):
        if j == id_j or col is None or j in raw.parsed:
            continue
        cells = [(i, str(v).strip()) for i, v in enumerate(col[:50]) if str(v).strip()]
        if cells and all(_DECIMAL_COMMA.match(v) for _, v in cells):
            i, v = cells[0]
            return j, v, raw.row_numbers[i]
    return None


def _standardise(X, method, names, label):
    """Per-column z-score or median/IQR scaling, computed without overflow."""
    out = np.empty_like(X)
    record = {}
    notes = []
    for k, name in enumerate(names):
        col = X[:, k]
        m = float(np.max(np.abs(col)))
        if m == 0.0:  # all zeros: nothing to centre or scale
            out[:, k] = 0.0
            record[name] = {"centre": 0.0, "scale": 1.0}
            continue
        u = col / m  # in [-1, 1]: sums and squares cannot overflow
        if method == "zscore":
            c, s = float(u.mean()), float(u.std())
        else:
            q1, c, q3 = (float(v) for v in np.percentile(u, [25, 50, 75]))
            s = q3 - q1
            if s == 0.0 and u.std() > 0:
                s = float(u.std())
                notes.append(name)
        if s == 0.0:  # constant column: centred only
            out[:, k] = 0.0
            record[name] = {"centre": c * m, "scale": 1.0}
            continue
        out[:, k] = (u - c) / s
        with np.errstate(over="ignore"):
            record[name] = {"centre": c * m, "scale": float(np.float64(s) * m)}
    info = {"method": method, "columns": record}
    if method == "robust":
        info["formula"] = "(x - median) / (q75 - q25)"
        if notes:
            info["std_fallback"] = notes
            warn_user(
                f"Robust scaling: column{'s' if len(notes) > 1 else ''} {names_list(notes)} in "
                f"{label} {'have' if len(notes) > 1 else 'has'} an interquartile range of 0 (more "
                f"than half the values are equal) and {'were' if len(notes) > 1 else 'was'} "
                f"scaled by the standard deviation instead."
            )
    else:
        info["formula"] = "(x - mean) / std (ddof=0)"
    return out, info
