"""Any column type: the user's DataFrame columns, as the model expects them.

The engine works on one numeric array (fast slicing, fingerprints, journals). A
DataFrame with categorical or text columns is kept in it as **codes** (category
number, NaN for missing) together with a :class:`ColumnSpec` per column, and the
model is wrapped in :class:`TypedColumns`, which rebuilds for every fit the
DataFrame of the subset's columns with the user's names and dtypes (``category``
stays ``category``, text stays text). So a pipeline that one-hot encodes a column,
or a model that takes categories natively (``HistGradientBoostingClassifier(
categorical_features="from_dtype")``), sees exactly the columns it would see on the
user's table. A :class:`~sklearn.compose.ColumnTransformer` that names its columns is
narrowed to the columns of each subset (transformers left with none are dropped).

pandas nullable dtypes (``Int64``, ``Float64``, ``boolean``) become float with NaN
for ``pd.NA``.

Examples
--------
>>> import pandas as pd
>>> df = pd.DataFrame({"ph": [6.5, 7.1, 6.8], "farm": pd.Categorical(["a", "b", "a"])})
>>> codes, specs = encode_frame(df)
>>> codes.tolist(), [s.kind for s in specs]
([[6.5, 0.0], [7.1, 1.0], [6.8, 0.0]], ['numeric', 'category'])
>>> decode_columns(codes[:, [1]], specs, ["ph", "farm"], [1])["farm"].tolist()
['a', 'b', 'a']
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np
from sklearn.base import BaseEstimator, MetaEstimatorMixin, clone
from sklearn.compose import ColumnTransformer
from sklearn.pipeline import Pipeline
from sklearn.utils import get_tags
from sklearn.utils.metaestimators import available_if

__all__ = ["ColumnSpec", "TypedColumns", "encode_frame", "non_numeric_columns", "decode_columns",
           "needs_frame", "narrow_column_transformer"]


@dataclass(frozen=True)
class ColumnSpec:
    """How one column of the user's table is stored and rebuilt.

    Attributes
    ----------
    kind : {"numeric", "category", "text"}
        ``numeric``: the values themselves (float). ``category``: a pandas categorical
        (codes; rebuilt as ``category`` dtype). ``text``: strings or other objects
        (codes; rebuilt as an object column).
    categories : tuple
        The categories, in code order (empty for numeric columns).
    ordered : bool
        Whether a categorical column is ordered.
    """

    kind: str
    categories: tuple = ()
    ordered: bool = False


_NUMERIC = ColumnSpec("numeric")


def _is_numeric(dtype: Any) -> bool:
    import pandas as pd

    if isinstance(dtype, pd.CategoricalDtype):
        return False
    return bool(pd.api.types.is_numeric_dtype(dtype) or pd.api.types.is_bool_dtype(dtype))


def non_numeric_columns(X: Any) -> list[int]:
    """Positions of a DataFrame's categorical and text columns (none for arrays).

    They are the columns :func:`encode_frame` stores as codes.

    Examples
    --------
    >>> import pandas as pd
    >>> frame = pd.DataFrame({"ph": [6.5, 7.0], "breed": pd.Categorical(["a", "b"]),
    ...                       "farm": ["x", "y"], "fat": pd.array([1.0, None], "Float64")})
    >>> non_numeric_columns(frame), non_numeric_columns(frame.to_numpy())
    ([1, 2], [])
    """
    if not (hasattr(X, "dtypes") and hasattr(X, "columns")):
        return []
    return [j for j, dtype in enumerate(X.dtypes) if not _is_numeric(dtype)]


def encode_frame(frame: Any) -> tuple[np.ndarray, list[ColumnSpec]]:
    """Numeric array of a DataFrame (codes for non-numeric columns) and each column's spec.

    Numeric columns (nullable ones included: ``pd.NA`` becomes NaN) keep their values;
    categorical columns are stored as their codes and text columns as codes of their
    sorted distinct values; missing values are NaN.
    """
    import pandas as pd

    from featuresift.errors import InputError

    dup = frame.columns[frame.columns.duplicated()].unique().tolist()
    if dup:  # a name must say which measurement it is (costs, answers, outputs)
        raise InputError(f"X has duplicate column names: {', '.join(map(str, dup))}; "
                         "each measurement needs its own name", key="X")
    n = len(frame)
    out = np.empty((n, frame.shape[1]), dtype=float)
    specs: list[ColumnSpec] = []
    for j, name in enumerate(frame.columns):
        col = frame[name]
        if _is_numeric(col.dtype):
            try:
                out[:, j] = col.to_numpy(dtype=float, na_value=np.nan)
            except (TypeError, ValueError) as exc:
                raise InputError(f"column '{name}' is not numeric: {exc}") from None
            specs.append(_NUMERIC)
            continue
        if isinstance(col.dtype, pd.CategoricalDtype):
            cat = col.cat
            codes = cat.codes.to_numpy()
            spec = ColumnSpec("category", tuple(cat.categories.tolist()), bool(cat.ordered))
        else:
            values = col.astype(object)
            missing = values.isna().to_numpy()
            try:
                cats = sorted(set(values[~missing].tolist()))
            except TypeError:  # mixed types: order by text, keep the values
                cats = sorted(set(values[~missing].tolist()), key=str)
            index = {v: k for k, v in enumerate(cats)}
            codes = np.array([-1 if m else index[v] for v, m in zip(values.tolist(), missing)])
            spec = ColumnSpec("text", tuple(cats))
        out[:, j] = np.where(codes < 0, np.nan, codes.astype(float))
        specs.append(spec)
    return out, specs


def decode_columns(X: np.ndarray, specs: Sequence[ColumnSpec], names: Sequence[str],
                   columns: Sequence[int]) -> Any:
    """The DataFrame of ``columns`` (problem column indices) from their stored values.

    ``X`` holds the stored values of exactly those columns, in that order.
    """
    import pandas as pd

    data = {}
    for j, c in enumerate(columns):
        spec = specs[c]
        values = X[:, j]
        if spec.kind == "numeric":
            data[names[c]] = values
            continue
        codes = np.where(np.isnan(values), -1, values).astype(int)
        cat = pd.Categorical.from_codes(codes, categories=list(spec.categories),
                                        ordered=spec.ordered)
        data[names[c]] = cat if spec.kind == "category" else pd.Series(cat).astype(object)
    return pd.DataFrame(data)


def narrow_column_transformer(estimator: Any, present: Sequence[str]) -> Any:
    """``estimator`` with its (leading) ColumnTransformer limited to ``present`` columns.

    Column lists given by name keep the names present; a transformer left with no column
    is dropped. Selectors given as callables (``make_column_selector``) adapt by
    themselves and are left as they are. ``estimator`` is changed in place and returned.
    """
    ct, owner = estimator, None
    if isinstance(estimator, Pipeline) and estimator.steps:
        ct, owner = estimator.steps[0][1], estimator
    if not isinstance(ct, ColumnTransformer):
        return estimator
    keep = set(present)
    new = []
    for name, trans, cols in ct.transformers:
        if isinstance(cols, str):
            if cols in keep:
                new.append((name, trans, cols))
        elif isinstance(cols, (list, tuple)) and cols and all(isinstance(c, str) for c in cols):
            sub = [c for c in cols if c in keep]
            if sub:
                new.append((name, trans, sub))
        else:
            new.append((name, trans, cols))
    ct.set_params(transformers=new)
    if owner is not None:
        owner.steps[0] = (owner.steps[0][0], ct)
    return estimator


def needs_frame(estimator: Any, specs: Sequence[ColumnSpec] | None) -> bool:
    """Whether the model must see a DataFrame: non-numeric columns or a ColumnTransformer."""
    if specs is not None and any(s.kind != "numeric" for s in specs):
        return True
    first = estimator.steps[0][1] if isinstance(estimator, Pipeline) and estimator.steps \
        else estimator
    return isinstance(first, ColumnTransformer)


def _inner_has(attr: str):
    return lambda self: hasattr(self.estimator, attr)


class TypedColumns(MetaEstimatorMixin, BaseEstimator):
    """Fit ``estimator`` on the user's columns rebuilt from the engine's numeric array.

    Parameters
    ----------
    estimator : scikit-learn estimator
        The user's model (or pipeline).
    names : tuple of str
        Names of all the problem's columns.
    specs : tuple of ColumnSpec
        How each of them is stored (see :func:`encode_frame`).
    columns : tuple of int, optional
        The problem columns the input holds (set by the evaluator per subset); None:
        all of them.

    Examples
    --------
    >>> import pandas as pd
    >>> from sklearn.ensemble import HistGradientBoostingClassifier
    >>> df = pd.DataFrame({"ph": [6.5, 7.1, 6.8, 7.4] * 10,
    ...                    "grade": pd.Categorical(["a", "b", "a", "b"] * 10)})
    >>> y = [0, 1, 0, 1] * 10
    >>> codes, specs = encode_frame(df)
    >>> hgb = HistGradientBoostingClassifier(categorical_features="from_dtype", max_iter=5)
    >>> model = TypedColumns(hgb, ("ph", "grade"), tuple(specs), columns=(1,))
    >>> model.fit(codes[:, [1]], y).predict(codes[:3, [1]]).tolist()
    [0, 1, 0]
    """

    takes_columns = True
    """The evaluator sets ``columns`` to each subset's columns before fitting."""

    def __init__(self, estimator: Any, names: tuple = (), specs: tuple = (),
                 columns: tuple | None = None) -> None:
        self.estimator = estimator
        self.names = names
        self.specs = specs
        self.columns = columns

    def _frame(self, X: Any) -> Any:
        cols = range(len(self.names)) if self.columns is None else self.columns
        return decode_columns(np.asarray(X, dtype=float), self.specs, self.names, list(cols))

    def fit(self, X: Any, y: Any, **fit_params: Any) -> TypedColumns:
        frame = self._frame(X)
        self.estimator_ = narrow_column_transformer(clone(self.estimator), list(frame.columns))
        try:
            self.estimator_.fit(frame, y, **fit_params)
        except (ValueError, TypeError) as exc:
            hint = self._encoding_hint(frame, exc)
            if hint is None:
                raise
            raise type(exc)(f"{exc} [{hint}]") from exc
        if hasattr(self.estimator_, "classes_"):
            self.classes_ = self.estimator_.classes_
        return self

    def _encoding_hint(self, frame: Any, exc: Exception) -> str | None:
        """What to do when the model refused text or categories (None: another error)."""
        words = str(exc).lower()
        if not any(w in words for w in ("string to float", "non-numeric", "categor",
                                        "dtype")):
            return None
        cols = range(len(self.names)) if self.columns is None else self.columns
        typed = [self.names[c] for c in cols if self.specs[c].kind != "numeric"]
        if not typed:
            return None
        return (f"column(s) {', '.join(typed)} hold categories or text, which this model "
                "cannot take as they are: encode them in the model, e.g. make_pipeline("
                "ColumnTransformer([('onehot', OneHotEncoder(handle_unknown='ignore'), "
                f"{typed!r})], remainder='passthrough'), model), or use a model with "
                "native categories such as HistGradientBoostingClassifier("
                "categorical_features='from_dtype')")

    def predict(self, X: Any) -> Any:
        return self.estimator_.predict(self._frame(X))

    @available_if(_inner_has("predict_proba"))
    def predict_proba(self, X: Any) -> Any:
        return self.estimator_.predict_proba(self._frame(X))

    @available_if(_inner_has("decision_function"))
    def decision_function(self, X: Any) -> Any:
        return self.estimator_.decision_function(self._frame(X))

    @available_if(_inner_has("score"))
    def score(self, X: Any, y: Any, sample_weight: Any = None) -> float:
        return self.estimator_.score(self._frame(X), y, sample_weight=sample_weight)

    def __sklearn_tags__(self):
        tags = super().__sklearn_tags__()
        inner = get_tags(self.estimator)
        tags.estimator_type = inner.estimator_type
        tags.classifier_tags = inner.classifier_tags
        tags.regressor_tags = inner.regressor_tags
        tags.input_tags.allow_nan = True
        return tags
