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
"""

from featuresift.filters.greedy import FilterSelection, FilterStep, budgeted_greedy, mrmr
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

__all__ = [
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
