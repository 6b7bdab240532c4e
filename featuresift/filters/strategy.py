"""Hand a filter's order to a wrapper: the ``filter-order`` strategy.

The strategy lives in :mod:`featuresift.strategies.filter_order` (registered with the
other strategies, so it is known without importing :mod:`featuresift.filters`); this
module keeps its old import path.
"""

from featuresift.strategies.filter_order import FilterOrderSearch

__all__ = ["FilterOrderSearch"]
