"""Shared helpers of the filters: input checks, task detection, discretisation, costs.

Nothing here is public; the public functions of :mod:`featuresift.filters` validate
their input with :func:`check_xy` so that every filter reports bad input the same way
(an :class:`~featuresift.errors.InputError` naming the column or argument).
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

import numpy as np

from featuresift.costs import CostModel, make_cost_model
from featuresift.errors import InputError
from featuresift.problem import _as_2d_float

TASKS = ("classification", "regression")

# A column is treated as discrete (used as-is, not binned) when all its values are
# integers and it has at most this many distinct values.
DEFAULT_MAX_LEVELS = 10


def check_xy(X: Any, y: Any, allow_nan: bool = True) -> tuple[np.ndarray, np.ndarray, list[str]]:
    """Float 2-D ``X`` (C order), 1-D ``y`` and column names; raises InputError."""
    arr, names = _as_2d_float(X)
    if names is None:
        names = [f"x{i}" for i in range(arr.shape[1])]
    yy = np.asarray(y.to_numpy() if hasattr(y, "to_numpy") else y)
    if yy.ndim != 1 or yy.shape[0] != arr.shape[0]:
        raise InputError(
            f"y must be 1-dimensional with {arr.shape[0]} values, got shape {yy.shape}"
        )
    if np.isinf(arr).any():
        col = int(np.where(np.isinf(arr).any(axis=0))[0][0])
        raise InputError(f"column '{names[col]}' contains an infinite value")
    if not allow_nan and np.isnan(arr).any():
        col = int(np.where(np.isnan(arr).any(axis=0))[0][0])
        raise InputError(f"column '{names[col]}' contains NaN (missing values are not allowed "
                         "here)")
    return np.ascontiguousarray(arr), yy, names


def infer_task(y: np.ndarray, task: str | None) -> str:
    """``task`` if given; else "classification" for integer, boolean or text labels and
    "regression" for floating-point targets (as scikit-learn's ``type_of_target``
    treats integers as classes)."""
    if task is not None:
        if task not in TASKS:
            raise InputError(f"task must be one of {TASKS}, got {task!r}")
        return task
    return "classification" if y.dtype.kind in "biuOUS" else "regression"


def encode_labels(y: np.ndarray, where: str = "y") -> tuple[np.ndarray, int]:
    """Integer codes 0..k-1 of a label vector, and k."""
    if y.dtype.kind == "f" and np.isnan(y).any():
        raise InputError(f"{where} contains NaN; remove those rows first")
    _, codes = np.unique(y, return_inverse=True)
    return codes.astype(np.intp), int(codes.max()) + 1 if codes.size else 0


def numeric_target(y: np.ndarray) -> np.ndarray:
    """The target as floats (regression scorers); raises InputError when not numeric."""
    try:
        out = np.asarray(y, dtype=float)
    except (TypeError, ValueError):
        raise InputError("this scorer needs a numeric target y") from None
    if np.isnan(out).any():
        raise InputError("y contains NaN; remove those rows first")
    return out


def is_discrete_column(col: np.ndarray, max_levels: int = DEFAULT_MAX_LEVELS) -> bool:
    """Integer-valued with at most ``max_levels`` distinct (non-NaN) values."""
    v = col[~np.isnan(col)]
    if v.size == 0:
        return True
    return bool(np.all(v == np.round(v)) and np.unique(v).size <= max_levels)


def discretize_column(
    col: np.ndarray, n_bins: int = 5, max_levels: int = DEFAULT_MAX_LEVELS
) -> np.ndarray:
    """Integer codes of one column; -1 marks NaN.

    Discrete columns (see :func:`is_discrete_column`) keep their levels. Other columns
    are cut into ``n_bins`` quantile bins: edges are the ``k/n_bins`` sample quantiles
    (linear interpolation, ``numpy.quantile``), repeated edges are merged, and a value
    equal to an edge goes to the upper bin.
    """
    out = np.full(col.shape[0], -1, dtype=np.intp)
    ok = ~np.isnan(col)
    v = col[ok]
    if v.size == 0:
        return out
    if is_discrete_column(v, max_levels):
        _, codes = np.unique(v, return_inverse=True)
    else:
        inner = np.unique(np.quantile(v, np.linspace(0, 1, n_bins + 1)[1:-1]))
        codes = np.searchsorted(inner, v, side="right")
        _, codes = np.unique(codes, return_inverse=True)
    out[ok] = codes
    return out


def discretize_matrix(
    X: np.ndarray, n_bins: int = 5, max_levels: int = DEFAULT_MAX_LEVELS
) -> np.ndarray:
    """:func:`discretize_column` applied to every column, vectorised over columns.

    Gives exactly the codes of :func:`discretize_column` (tested) with array
    operations on the transposed matrix (each column contiguous); only discrete
    columns and columns with NaN are handled one at a time.
    """
    X = np.asarray(X, dtype=float)
    n, p = X.shape
    codes = np.empty((p, n), dtype=np.intp)
    has_nan = np.isnan(X).any(axis=0)
    for j in np.where(has_nan)[0]:
        codes[j] = discretize_column(X[:, j], n_bins, max_levels)
    clean = np.where(~has_nan)[0]
    if clean.size == 0 or n == 0:
        return codes.T
    XT = np.ascontiguousarray(X[:, clean].T)  # (c, n)
    integer = np.where((XT == np.round(XT)).all(axis=1))[0]
    discrete = np.zeros(clean.size, bool)
    if integer.size:
        srt = np.sort(XT[integer], axis=1)
        n_levels = (np.diff(srt, axis=1) != 0).sum(axis=1) + 1
        discrete[integer[n_levels <= max_levels]] = True
    for i in np.where(discrete)[0]:
        codes[clean[i]] = np.unique(XT[i], return_inverse=True)[1]
    cont = np.where(~discrete)[0]
    if cont.size:
        Xk = XT[cont]
        edges = np.quantile(Xk, np.linspace(0, 1, n_bins + 1)[1:-1], axis=1)  # (b, c)
        edges = edges.reshape(-1, cont.size)
        fresh = np.vstack([np.ones((1, cont.size), bool), np.diff(edges, axis=0) != 0])
        raw = np.zeros(Xk.shape, dtype=np.intp)
        for k in range(edges.shape[0]):
            raw += (Xk >= edges[k][:, None]) & fresh[k][:, None]
        # Relabel so that empty bins are skipped (as np.unique's inverse does).
        width = edges.shape[0] + 1
        rows = np.arange(cont.size)[:, None]
        present = np.zeros((cont.size, width), bool)
        present[rows, raw] = True
        remap = np.cumsum(present, axis=1) - 1
        codes[clean[cont]] = remap[rows, raw]
    return codes.T


def joint_tables(codes: np.ndarray, target: np.ndarray, n_target: int) -> np.ndarray:
    """Contingency tables of every column against an integer target, shape (p, L, k).

    Rows whose column code is -1 (missing) are left out of that column's table.
    """
    n, p = codes.shape
    levels = int(codes.max()) + 1 if codes.size else 1
    safe = np.where(codes < 0, levels, codes)  # missing -> a trash level, dropped below
    idx = (np.arange(p)[None, :] * (levels + 1) + safe) * n_target + target[:, None]
    tab = np.bincount(idx.ravel(), minlength=p * (levels + 1) * n_target)
    return tab.reshape(p, levels + 1, n_target)[:, :levels, :].astype(float)


def plugin_mi_tables(tables: np.ndarray) -> np.ndarray:
    """Plug-in mutual information (nats) of each (L, k) table in a (p, L, k) stack."""
    n = tables.sum(axis=(1, 2))
    a = tables.sum(axis=2, keepdims=True)
    b = tables.sum(axis=1, keepdims=True)
    with np.errstate(divide="ignore", invalid="ignore"):
        terms = tables * (np.log(tables) + np.log(n)[:, None, None] - np.log(a) - np.log(b))
    terms[tables == 0] = 0.0
    with np.errstate(invalid="ignore"):
        mi = terms.sum(axis=(1, 2)) / n
    return np.maximum(np.nan_to_num(mi, nan=0.0), 0.0)


def check_positive_int(value: Any, name: str, minimum: int = 1) -> int:
    """``value`` as an int >= ``minimum``; InputError naming ``name`` otherwise."""
    if isinstance(value, bool) or not isinstance(value, (int, np.integer)) or value < minimum:
        raise InputError(f"{name} must be an integer >= {minimum}, got {value!r}")
    return int(value)


def cost_arrays(cost_model: CostModel) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Per-column panel id (-1: none), per-column own price, per-panel price.

    Lets filters compute panel-aware marginal costs for thousands of candidates
    with array operations; totals are cross-checked against
    :meth:`CostModel.cost` by the callers that spend a budget.
    """
    names = cost_model.feature_names
    panel_ids = {p: k for k, p in enumerate(cost_model.panels)}
    panel = np.array([panel_ids.get(cost_model.panel_of(n) or "", -1) for n in names],
                     dtype=np.intp)
    own = np.array([cost_model.feature_costs.get(n, 0.0) for n in names], dtype=float)
    pprice = np.array([c for c, _ in cost_model.panels.values()], dtype=float)
    return panel, own, pprice


def standalone_costs(cost_model: CostModel) -> np.ndarray:
    """Cost of measuring each feature alone (its panel's price for panel members)."""
    panel, own, pprice = cost_arrays(cost_model)
    out = own.copy()
    inpanel = panel >= 0
    out[inpanel] = pprice[panel[inpanel]]
    return out


def shared_costs(cost_model: CostModel) -> np.ndarray:
    """Each feature's share of its panel price (price / panel size); own price otherwise."""
    panel, own, pprice = cost_arrays(cost_model)
    out = own.copy()
    if pprice.size:
        sizes = np.bincount(panel[panel >= 0], minlength=pprice.size)
        inpanel = panel >= 0
        out[inpanel] = pprice[panel[inpanel]] / sizes[panel[inpanel]]
    return out


COST_BASES = ("standalone", "shared")


def unit_costs(cost_model: CostModel, basis: str) -> np.ndarray:
    """Per-feature cost on the chosen basis ("standalone" or "shared")."""
    if basis == "standalone":
        return standalone_costs(cost_model)
    if basis == "shared":
        return shared_costs(cost_model)
    raise InputError(f"cost_basis must be one of {COST_BASES}, got {basis!r}")


def resolve_cost_model(cost_model: Any, names: Sequence[str]) -> CostModel:
    """The given costs as a cost model (checked against the columns); None: uniform cost 1."""
    if cost_model is None:
        return CostModel.uniform(list(names))
    if not isinstance(cost_model, CostModel):
        return make_cost_model(list(names), cost_model)
    if list(cost_model.feature_names) != list(names):
        if len(cost_model.feature_names) != len(names):
            raise InputError(
                f"the cost model has {len(cost_model.feature_names)} features but X has "
                f"{len(names)} columns"
            )
        if all(n.startswith("x") for n in names) and names == [f"x{i}" for i in
                                                                   range(len(names))]:
            # Plain arrays carry no names: trust the cost model's order.
            return cost_model
        raise InputError("the cost model's features must be the columns of X, in order")
    return cost_model


def per_cost(values: np.ndarray, costs: np.ndarray) -> np.ndarray:
    """``values / costs`` with ``+inf`` for free features with positive value (0 for 0/0)."""
    out = np.empty_like(values, dtype=float)
    free = costs <= 0
    with np.errstate(divide="ignore", invalid="ignore"):
        out[~free] = values[~free] / costs[~free]
    out[free] = np.where(values[free] > 0, np.inf, np.where(values[free] < 0, -np.inf, 0.0))
    return out
