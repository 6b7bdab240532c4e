"""The parsed run configuration: one dataclass per section and :class:`RunConfig`."""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import pandas as pd
from sklearn.impute import SimpleImputer
from sklearn.pipeline import Pipeline
from sklearn.preprocessing import MinMaxScaler, RobustScaler, StandardScaler

from featuresift.costs import CostModel

__all__ = [
    "RunConfig", "DataSpec", "CostSpec", "ModelSpec", "CVSpec", "LimitsSpec",
    "PREPROCESSORS", "OVERRIDES",
]


PREPROCESSORS: dict[str, Callable[[], Any]] = {
    "impute_mean": lambda: SimpleImputer(strategy="mean"),
    "impute_median": lambda: SimpleImputer(strategy="median"),
    "impute_most_frequent": lambda: SimpleImputer(strategy="most_frequent"),
    "impute_indicator": lambda: SimpleImputer(strategy="median", add_indicator=True),
    "scale": StandardScaler,
    "minmax": MinMaxScaler,
    "robust": RobustScaler,
    "one_hot": None,  # built by ModelSpec.build around the other steps (categorical columns)
}
"""Preprocessing step names accepted in ``model.preprocessing`` and their factories."""

OVERRIDES = ("output", "n_jobs", "budget", "strategy", "seed", "pick", "guard")
"""Keys :func:`load_config` accepts as command-line overrides."""


@dataclass(frozen=True)
class DataSpec:
    """The ``data`` section: file, target, candidate list, excluded columns."""

    path: Path
    target: str
    features: tuple[str, ...] | None
    exclude: tuple[str, ...]
    categorical: tuple[str, ...] = ()
    separator: str | None = None
    decimal: str | None = None
    encoding: str | None = None


@dataclass(frozen=True)
class CostSpec:
    """The ``costs`` section as written (not yet matched against the data)."""

    unit: str
    features: dict[str, float]
    panels: dict[str, tuple[float, tuple[str, ...]]]
    given: bool


@dataclass(frozen=True)
class ModelSpec:
    """The ``model`` section: estimator class, parameters and preprocessing steps."""

    estimator: str
    estimator_class: type
    params: dict[str, Any]
    preprocessing: tuple[str, ...]
    trusted_modules: tuple[str, ...]

    def build(self) -> Any:
        """A fresh, unfitted estimator (a Pipeline when there is preprocessing)."""
        model = self.estimator_class(**self.params)
        if not self.preprocessing:
            return model
        steps = [(name, PREPROCESSORS[name]()) for name in self.preprocessing
                 if name != "one_hot"]
        if "one_hot" not in self.preprocessing:
            return Pipeline([*steps, ("model", model)])
        # one_hot: categorical columns are one-hot encoded, the other steps treat the rest.
        from sklearn.compose import ColumnTransformer, make_column_selector
        from sklearn.preprocessing import OneHotEncoder

        numeric = Pipeline(steps) if steps else "passthrough"
        encode = ColumnTransformer([
            ("numeric", numeric, make_column_selector(dtype_exclude="category")),
            ("one_hot", OneHotEncoder(handle_unknown="ignore", sparse_output=False),
             make_column_selector(dtype_include="category")),
        ])
        return Pipeline([("preprocessing", encode), ("model", model)])


@dataclass(frozen=True)
class CVSpec:
    """The ``cv`` section."""

    folds: int
    repeats: int
    stratified: bool | None
    group_column: str | None
    shuffle: bool
    seed: int | None


@dataclass(frozen=True)
class LimitsSpec:
    """The ``limits`` section."""

    max_features: int | None
    max_evaluations: int | None
    max_time_s: float | None


@dataclass
class RunConfig:
    """A checked run configuration together with its data.

    Attributes
    ----------
    path : pathlib.Path
        The YAML file.
    data, costs, model, cv, limits : parsed sections
        See :class:`DataSpec`, :class:`CostSpec`, :class:`ModelSpec`, :class:`CVSpec`,
        :class:`LimitsSpec`.
    budget : float or None
    scoring : str or None
    objective : dict
    strategy : dict
        ``{"name": ..., "options": {...}}``.
    must_include, never_include : list of str
    pick : str
    seed : int or None
    n_jobs : int or None
    output : pathlib.Path
        Absolute output folder.
    frame : pandas.DataFrame
        The data as read.
    candidates : list of str
        Candidate feature columns, in data order.
    cost_model : CostModel
        Costs of the candidates.
    classification : bool
        Whether the estimator is a classifier.
    ignored_costs : list of str
        Priced columns that are not candidates (their prices are unused).
    overridden : dict
        Keys set from the command line and their values.
    lines : dict
        Line of each YAML key path (``"costs.features.moisture_pct"``).
    extra : dict
        Parsed values of sections added with :func:`register_section`.
    data_format : featuresift.config.csvformat.CsvFormat or None
        Separator, decimal mark and encoding the CSV file was read with (None for
        Parquet).
    notes : list of str
        Old spellings that still work (``strategy.name (line 30): 'greedy_swap' is an old
        spelling; use 'greedy-swap'``); ``validate`` and ``run`` print them on stderr.

    Examples
    --------
    >>> import tempfile
    >>> from featuresift.config import load_config
    >>> from featuresift.demo import write_demo
    >>> with tempfile.TemporaryDirectory() as d:
    ...     cfg = load_config(write_demo(d, n_lots=60)[1], seed=3)
    >>> cfg.path.name, cfg.data.target, cfg.classification, cfg.seed, cfg.overridden
    ('grain_lab.yaml', 'meets_milling_grade', True, 3, {'seed': 3})
    >>> len(cfg.frame), len(cfg.candidates), cfg.lines["budget"]
    (60, 26, 39)
    """

    path: Path
    data: DataSpec
    costs: CostSpec
    budget: float | None
    model: ModelSpec
    cv: CVSpec
    scoring: str | None
    objective: dict
    strategy: dict
    limits: LimitsSpec
    must_include: list[str]
    never_include: list[str]
    pick: str
    seed: int | None
    n_jobs: int | None
    output: Path
    frame: pd.DataFrame = field(repr=False)
    candidates: list[str] = field(default_factory=list)
    cost_model: CostModel | None = None
    classification: bool = True
    ignored_costs: list[str] = field(default_factory=list)
    overridden: dict[str, Any] = field(default_factory=dict)
    extra: dict[str, Any] = field(default_factory=dict)
    lines: dict[str, int] = field(default_factory=dict, repr=False)
    data_format: Any = None
    notes: list[str] = field(default_factory=list)

    @property
    def stratified(self) -> bool:
        """Whether the CV folds are stratified (``cv.stratified``, default: classifiers)."""
        return self.classification if self.cv.stratified is None else self.cv.stratified

    @property
    def base_dir(self) -> Path:
        """Folder of the YAML file (relative paths start here)."""
        return self.path.parent
