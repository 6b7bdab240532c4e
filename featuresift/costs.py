"""Acquisition-cost model: per-feature prices, panels and values already on hand.

Every budget check in featuresift goes through :class:`CostModel`. A subset's cost is
the sum of

* the price of every **panel** it touches (paid once, however many of the panel's
  features the subset uses), and
* the individual price of every feature it uses that belongs to no panel.

A feature whose value is already on hand simply has price 0.

Costs are held as Python floats; sums are taken with :func:`math.fsum` so that the
total of a subset does not depend on the order in which its features are listed.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass

from featuresift.errors import InputError

__all__ = ["CostModel", "CostLine"]


@dataclass(frozen=True)
class CostLine:
    """One line of a cost breakdown.

    Attributes
    ----------
    item : str
        A panel name or a feature name.
    kind : {"panel", "feature"}
        Whether the line is a panel bought as a whole or a single feature.
    features : tuple of str
        The features of the subset paid for by this line.
    cost : float
        The price paid for this line.

    Examples
    --------
    Buying ``c`` means paying for its whole panel:

    >>> cm = CostModel(["a", "c", "d"], {"a": 1.0}, panels={"lab": (5.0, ["c", "d"])})
    >>> line = cm.breakdown(["a", "c"])[1]
    >>> line.item, line.kind, line.features, line.cost
    ('lab', 'panel', ('c',), 5.0)
    """

    item: str
    kind: str
    features: tuple[str, ...]
    cost: float


def _check_price(value: object, where: str) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise InputError(f"{where}: cost must be a number, got {value!r}")
    price = float(value)
    if math.isnan(price):
        raise InputError(f"{where}: cost is NaN")
    if math.isinf(price):
        raise InputError(f"{where}: cost is infinite")
    if price < 0:
        raise InputError(f"{where}: cost must be >= 0, got {price:g}")
    return price


class CostModel:
    """Exact, panel-aware acquisition costs of feature subsets.

    Parameters
    ----------
    feature_names : sequence of str
        All candidate features, in column order. Subsets are given as column
        indices into this list (or as names).
    feature_costs : mapping of str to float
        Price of each feature that is not part of a panel. Features in a panel
        may be absent here; a feature neither priced nor in a panel is an error.
    panels : mapping of str to (price, list of feature names), optional
        Named groups bought together for one price.
    unit : str, default="cost units"
        Currency or unit label carried into every output.

    Examples
    --------
    >>> cm = CostModel(["a", "b", "c", "d"], {"a": 1.0, "b": 0.0},
    ...                panels={"lab": (5.0, ["c", "d"])}, unit="EUR")
    >>> cm.cost(["a", "c", "d"])
    6.0
    >>> cm.marginal_cost(["c"], "d")
    0.0
    >>> [(line.item, line.cost) for line in cm.breakdown(["a", "c"])]
    [('a', 1.0), ('lab', 5.0)]
    """

    def __init__(
        self,
        feature_names: Sequence[str],
        feature_costs: Mapping[str, float],
        panels: Mapping[str, tuple[float, Sequence[str]]] | None = None,
        unit: str = "cost units",
    ) -> None:
        names = tuple(str(n) for n in feature_names)
        if len(set(names)) != len(names):
            dup = sorted({n for n in names if names.count(n) > 1})
            raise InputError(f"feature names must be unique; repeated: {', '.join(dup)}")
        known = set(names)
        costs: dict[str, float] = {}
        for name, value in dict(feature_costs).items():
            if name not in known:
                raise InputError(f"costs.features.{name}: '{name}' is not a candidate feature")
            costs[name] = _check_price(value, f"costs.features.{name}")
        panel_map: dict[str, tuple[float, tuple[str, ...]]] = {}
        owner: dict[str, str] = {}
        for pname, spec in dict(panels or {}).items():
            price, members = spec
            price = _check_price(price, f"costs.panels.{pname}.cost")
            members = tuple(str(m) for m in members)
            if not members:
                raise InputError(f"costs.panels.{pname}: a panel needs at least one feature")
            for m in members:
                if m not in known:
                    raise InputError(
                        f"costs.panels.{pname}: feature '{m}' is not a candidate feature"
                    )
                if m in owner:
                    raise InputError(
                        f"costs.panels.{pname}: feature '{m}' is already in panel '{owner[m]}'"
                        " (a feature can belong to one panel only)"
                    )
                if m in costs:
                    raise InputError(
                        f"costs.panels.{pname}: feature '{m}' has its own cost in "
                        "costs.features and is also in a panel; give it one or the other"
                    )
                owner[m] = pname
            panel_map[str(pname)] = (price, members)
        missing = [n for n in names if n not in costs and n not in owner]
        if missing:
            raise InputError(
                "no cost given for candidate feature(s): " + ", ".join(missing)
            )
        self.feature_names: tuple[str, ...] = names
        self.feature_costs: dict[str, float] = costs
        self.panels: dict[str, tuple[float, tuple[str, ...]]] = panel_map
        self.unit: str = str(unit)
        self._index = {n: i for i, n in enumerate(names)}
        self._panel_of = owner
        # Per-column tuples used on hot paths.
        panel_ids = {p: k for k, p in enumerate(panel_map)}
        self._col_panel = tuple(panel_ids.get(owner.get(n, ""), -1) for n in names)
        self._col_price = tuple(costs.get(n, 0.0) for n in names)
        self._panel_price = tuple(p for p, _ in panel_map.values())

    def __repr__(self) -> str:
        return (
            f"CostModel(n_features={self.n_features}, n_panels={len(self.panels)}, "
            f"unit={self.unit!r})"
        )

    # ------------------------------------------------------------------ helpers
    @classmethod
    def uniform(cls, feature_names: Sequence[str], cost: float = 1.0, unit: str = "features"):
        """A cost model where every feature costs ``cost`` (the no-cost-table case).

        Examples
        --------
        >>> CostModel.uniform(["x", "y", "z"]).cost([0, 2])
        2.0
        """
        return cls(feature_names, {n: cost for n in feature_names}, unit=unit)

    @property
    def n_features(self) -> int:
        """Number of candidate features."""
        return len(self.feature_names)

    def _indices(self, subset: Iterable[int | str]) -> list[int]:
        out = []
        for item in subset:
            if isinstance(item, str):
                try:
                    out.append(self._index[item])
                except KeyError:
                    raise InputError(f"unknown feature '{item}'") from None
            else:
                i = int(item)
                if not 0 <= i < len(self.feature_names):
                    raise InputError(f"feature index {i} out of range")
                out.append(i)
        return out

    def panel_of(self, feature: str) -> str | None:
        """Name of the panel a feature belongs to, or None."""
        return self._panel_of.get(feature)

    # --------------------------------------------------------------------- costs
    def cost(self, subset: Iterable[int | str]) -> float:
        """Total acquisition cost of a subset (column indices or names)."""
        cols = set(self._indices(subset))
        col_panel = self._col_panel
        col_price = self._col_price
        panel_price = self._panel_price
        parts = []
        touched = set()
        for c in sorted(cols):
            p = col_panel[c]
            if p < 0:
                parts.append(col_price[c])
            elif p not in touched:
                touched.add(p)
                parts.append(panel_price[p])
        return math.fsum(parts)

    def marginal_cost(self, subset: Iterable[int | str], feature: int | str) -> float:
        """Extra cost of adding ``feature`` to ``subset`` (0 if its panel is already paid)."""
        base = self._indices(subset)
        (f,) = self._indices([feature])
        if f in base:
            return 0.0
        return self.cost(base + [f]) - self.cost(base)

    def is_feasible(self, subset: Iterable[int | str], budget: float | None) -> bool:
        """Whether the subset's cost stays within ``budget`` (None: unlimited).

        A tiny relative tolerance (1e-12) absorbs float rounding in sums such as
        0.1 + 0.2 against a budget of 0.3.
        """
        if budget is None:
            return True
        return self.cost(subset) <= budget * (1 + 1e-12) + 1e-12

    def cheapest_feature_cost(self, allowed: Iterable[int] | None = None) -> float:
        """Cost of the cheapest non-empty subset (one feature, or one panel)."""
        cols = range(self.n_features) if allowed is None else allowed
        return min(self.cost([c]) for c in cols)

    def breakdown(self, subset: Iterable[int | str]) -> list[CostLine]:
        """Itemised cost of a subset: one line per panel touched and per lone feature.

        Lines come in column order of their first feature.
        """
        cols = sorted(set(self._indices(subset)))
        lines: list[CostLine] = []
        seen: dict[str, int] = {}
        for c in cols:
            name = self.feature_names[c]
            pname = self._panel_of.get(name)
            if pname is None:
                lines.append(CostLine(name, "feature", (name,), self.feature_costs[name]))
            elif pname in seen:
                k = seen[pname]
                old = lines[k]
                lines[k] = CostLine(pname, "panel", old.features + (name,), old.cost)
            else:
                seen[pname] = len(lines)
                lines.append(CostLine(pname, "panel", (name,), self.panels[pname][0]))
        return lines

    def to_dict(self) -> dict:
        """Plain-data description (JSON-serialisable), used in outputs and fingerprints."""
        return {
            "unit": self.unit,
            "features": {
                n: self.feature_costs[n] for n in self.feature_names if n in self.feature_costs
            },
            "panels": {p: {"cost": c, "features": list(m)} for p, (c, m) in self.panels.items()},
        }
