"""Per-feature report: relevance, p-value and q-value, cost, relevance per cost, partner.

:func:`feature_report` takes what a parsed configuration holds (a DataFrame ``X``, the
target, the :class:`~featuresift.costs.CostModel` and the task type) and returns one
row per candidate measurement; :func:`write_feature_report` saves it as CSV.

Beside each raw p-value stands its Benjamini-Hochberg q-value (adjusted over every
candidate with a p-value): a p-value of 0.01 among 30 candidates is weak evidence on its
own, while ``q <= 0.05`` keeps the expected share of false discoveries among the
measurements so flagged at 5 % (Benjamini & Hochberg 1995).

The partner of a feature is the other column with the largest absolute Pearson
correlation (computed in column blocks, so thousands of columns need only
O(p * block) memory; missing values handled as in
:mod:`featuresift.filters.redundancy`).
"""

from __future__ import annotations

import os
from pathlib import Path
from typing import Any

import numpy as np

from featuresift._compat import renamed_keywords
from featuresift.errors import InputError
from featuresift.filters._common import check_xy, per_cost, resolve_cost_model, unit_costs
from featuresift.filters.prescreen import benjamini_hochberg
from featuresift.filters.redundancy import standardize_columns
from featuresift.filters.relevance import categorical_columns, relevance_scores
from featuresift.outputs import RunFolder, write_files

__all__ = ["feature_report", "write_feature_report", "REPORT_COLUMNS", "redundancy_partners"]

REPORT_COLUMNS = (
    "feature", "panel", "relevance", "p_value", "q_value", "cost", "cost_unit",
    "relevance_per_cost", "rank", "partner", "partner_abs_corr",
)
"""Columns of the report, in order."""


def redundancy_partners(X: np.ndarray, block: int = 512) -> tuple[np.ndarray, np.ndarray]:
    """For each column, the other column most correlated with it and ``|corr|``.

    Returns ``(partner_index, abs_corr)``; a single column gets partner -1 and 0.

    Examples
    --------
    >>> X = np.array([[1., 2., 0.], [2., 4.2, 1.], [3., 5.9, 0.], [4., 8., 1.]])
    >>> idx, r = redundancy_partners(X)
    >>> idx.tolist()
    [1, 0, 1]
    """
    Z = standardize_columns(X)
    n, p = Z.shape
    partner = np.full(p, -1, dtype=np.intp)
    best = np.zeros(p)
    if p < 2:
        return partner, best
    for lo in range(0, p, block):
        hi = min(lo + block, p)
        C = np.abs(Z.T @ Z[:, lo:hi]) / n  # (p, hi - lo)
        C[np.arange(lo, hi), np.arange(hi - lo)] = -1.0
        partner[lo:hi] = C.argmax(axis=0)
        best[lo:hi] = np.minimum(C.max(axis=0), 1.0)
    return partner, best


@renamed_keywords(cost_model="costs")
def feature_report(
    X: Any,
    y: Any,
    costs: Any = None,
    relevance: Any = "anova_f",
    task: str | None = None,
    *,
    relevance_options: dict | None = None,
    cost_basis: str = "standalone",
    sort: bool = True,
):
    """One row per candidate: how relevant, how costly, and what it duplicates.

    Parameters
    ----------
    X : DataFrame or array-like of shape (n_samples, n_features)
    y : array-like of shape (n_samples,)
    costs : CostModel or mapping, optional
        Default: every feature costs 1.
    relevance : str, dict or callable, default="anova_f"
        Relevance scorer (see :mod:`featuresift.filters.relevance`); use a regression
        scorer ("pearson", "spearman", "mutual_info") for a numeric target.
    task : {"classification", "regression"}, optional
        Inferred from ``y`` when not given.
    relevance_options : dict, optional
    cost_basis : {"standalone", "shared"}, default="standalone"
        A panel member's cost is its panel's price, or its share of it.
    sort : bool, default=True
        Sort rows by relevance (best first); otherwise keep column order.

    Returns
    -------
    pandas.DataFrame
        Columns :data:`REPORT_COLUMNS`. ``q_value`` is the Benjamini-Hochberg adjusted
        p-value over all candidates (empty when the scorer gives no p-values); ``rank``
        is 1 for the most relevant feature;
        ``relevance_per_cost`` is ``inf`` for free features with positive relevance.
        ``frame.attrs`` holds the scorer name, task and cost unit.

    Examples
    --------
    >>> from sklearn.datasets import load_iris
    >>> X, y = load_iris(return_X_y=True, as_frame=True)
    >>> rep = feature_report(X, y)
    >>> rep["feature"].iloc[0], rep["partner"].iloc[0]
    ('petal length (cm)', 'petal width (cm)')
    """
    Xa, ya, names = check_xy(X, y)
    cm = resolve_cost_model(costs, names)
    names = list(cm.feature_names)
    rel = relevance_scores(Xa, ya, relevance, task=task, categorical=categorical_columns(X),
                           **(relevance_options or {}))
    costs = unit_costs(cm, cost_basis)
    partner, r = redundancy_partners(Xa)
    p = Xa.shape[1]
    order = np.lexsort((np.arange(p), -rel.scores))
    rank = np.empty(p, dtype=int)
    rank[order] = np.arange(1, p + 1)
    import pandas as pd

    pvalues = rel.pvalues if rel.pvalues is not None else np.full(p, np.nan)
    frame = pd.DataFrame({
        "feature": names,
        "panel": [cm.panel_of(n) or "" for n in names],
        "relevance": rel.scores,
        "p_value": pvalues,
        "q_value": benjamini_hochberg(pvalues),
        "cost": costs,
        "cost_unit": cm.unit,
        "relevance_per_cost": per_cost(rel.scores, costs),
        "rank": rank,
        "partner": [names[k] if k >= 0 else "" for k in partner],
        "partner_abs_corr": r,
    }, columns=list(REPORT_COLUMNS))
    if sort:
        frame = frame.iloc[order].reset_index(drop=True)
    frame.attrs.update({"relevance": rel.scorer, "task": rel.task, "cost_unit": cm.unit,
                        "cost_basis": cost_basis})
    return frame


def write_feature_report(frame: Any, path: str | os.PathLike | RunFolder) -> Path:
    """Write a report from :func:`feature_report` to CSV (written atomically).

    ``path`` is the CSV file, or a :class:`~featuresift.outputs.RunFolder` (which gets
    ``features.csv``); symbolic links are refused (:func:`featuresift.outputs.write_files`).

    Floats are written with full precision; empty cells mean "none" (no p-value, no
    panel, no partner).

    Examples
    --------
    >>> import tempfile, pandas as pd
    >>> from sklearn.datasets import load_iris
    >>> X, y = load_iris(return_X_y=True, as_frame=True)
    >>> with tempfile.TemporaryDirectory() as d:
    ...     out = write_feature_report(feature_report(X, y), Path(d) / "features.csv")
    ...     pd.read_csv(out).shape
    (4, 11)
    """
    missing = [c for c in REPORT_COLUMNS if c not in getattr(frame, "columns", [])]
    if missing:
        raise InputError(f"not a feature report: missing column(s) {', '.join(missing)}")
    text = frame.to_csv(index=False, float_format="%.17g")
    if isinstance(path, RunFolder):
        return path.write_files({"features.csv": text})[0]
    out = Path(path)
    return write_files(out.parent, {out.name: text})[0]
