"""Filters: cheap, model-free scoring and selection that scale to thousands of candidates.

Relevance scorers, redundancy penalties, a budgeted greedy (mRMR-style) selection,
a pre-screen for wide data, a cost-weighted L1 path, a per-feature report and a
redundancy-penalised wrapper objective.

Leakage
-------
A filter that looks at ``y`` and then feeds a wrapper search makes the wrapper's
cross-validated score optimistic if it was computed on all rows (Ambroise &
McLachlan 2002). The wrapper's internal score is already a search heuristic, not a
performance estimate; to report an honest estimate, rerun *screen + search* on each
outer training fold (nested CV), or put the screen inside the model with
:class:`~featuresift.filters.prescreen.ScreenedEstimator`, which screens inside
``fit`` and therefore only ever sees training rows. The redundancy objective uses
``X`` only (never ``y``), so computing its correlation matrix on all rows leaks no
label information.

Importing this package registers the ``redundancy_penalized`` objective, the
``l1_order`` relevance scorer (the ``filter-order`` strategy is registered with the
other strategies).
"""

from featuresift.filters.greedy import FilterSelection, FilterStep, budgeted_greedy, mrmr
from featuresift.filters.l1path import L1Path, cost_weighted_l1_path, l1_order
from featuresift.filters.objective import RedundancyPenalizedObjective
from featuresift.filters.prescreen import (
    ScreenedEstimator,
    ScreenResult,
    benjamini_hochberg,
    prescreen,
    screened_search,
)
from featuresift.filters.redundancy import (
    REDUNDANCY_PENALTIES,
    AbsCorrelationPenalty,
    BasePenalty,
    MutualInfoPenalty,
    RunningRedundancy,
    abs_correlation_matrix,
    make_penalty,
)
from featuresift.filters.relevance import (
    RELEVANCE_SCORERS,
    Relevance,
    anova_f,
    chi_square,
    mutual_info,
    pearson,
    permutation_relevance,
    plugin_mutual_info,
    register_relevance,
    relevance_scores,
    spearman,
)
from featuresift.filters.report import feature_report, write_feature_report
from featuresift.filters.strategy import FilterOrderSearch

__all__ = [
    "L1Path",
    "cost_weighted_l1_path",
    "l1_order",
    "RedundancyPenalizedObjective",
    "ScreenedEstimator",
    "ScreenResult",
    "benjamini_hochberg",
    "prescreen",
    "screened_search",
    "feature_report",
    "write_feature_report",
    "FilterOrderSearch",
    "FilterSelection",
    "FilterStep",
    "budgeted_greedy",
    "mrmr",
    "REDUNDANCY_PENALTIES",
    "AbsCorrelationPenalty",
    "BasePenalty",
    "MutualInfoPenalty",
    "RunningRedundancy",
    "abs_correlation_matrix",
    "make_penalty",
    "RELEVANCE_SCORERS",
    "Relevance",
    "anova_f",
    "chi_square",
    "mutual_info",
    "pearson",
    "permutation_relevance",
    "plugin_mutual_info",
    "register_relevance",
    "relevance_scores",
    "spearman",
]
