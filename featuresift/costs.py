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
from collections.abc import Iterable, Iterator, Mapping, Sequence
from dataclasses import dataclass
from fractions import Fraction
from typing import Any

from featuresift.errors import InputError

__all__ = ["CostModel", "CostLine", "make_cost_model", "parse_panel", "AllowedSubsets"]


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


def parse_panel(name: str, spec: Any) -> tuple[Any, list[str]]:
    """One panel in either form: ``(price, [features])`` or ``{"cost": c, "features": [...]}``.

    Returns ``(price, features)``; the price is checked by the caller.

    Examples
    --------
    >>> parse_panel("kit", {"cost": 5.0, "features": ["b", "c"]})
    (5.0, ['b', 'c'])
    >>> parse_panel("kit", (5.0, ["b", "c"]))
    (5.0, ['b', 'c'])
    """
    where = f"costs.panels.{name}"
    if isinstance(spec, Mapping):
        unknown = set(spec) - {"cost", "features"}
        if unknown or "cost" not in spec or "features" not in spec:
            raise InputError(
                f"{where}: a panel is {{'cost': price, 'features': [names]}} or "
                "(price, [names])"
                + (f"; unknown key(s): {', '.join(sorted(map(str, unknown)))}" if unknown else "")
            )
        price, members = spec["cost"], spec["features"]
    else:
        try:
            price, members = spec
        except (TypeError, ValueError):
            raise InputError(
                f"{where}: a panel is (price, [names]) or {{'cost': price, 'features': "
                f"[names]}}, got {spec!r}"
            ) from None
    if isinstance(members, (str, bytes)) or not isinstance(members, Iterable):
        raise InputError(f"{where}.features: panel features must be a list of names, "
                         f"got {members!r}")
    return price, [str(m) for m in members]


def _is_spec(costs: Mapping) -> bool:
    """A YAML-style ``{"features": ..., "panels": ..., "unit": ...}`` (not a price list)."""
    return any(k in costs and not isinstance(costs[k], (int, float))
               for k in ("features", "panels", "unit"))


def make_cost_model(
    feature_names: Sequence[str],
    costs: Any = None,
    panels: Mapping[str, Any] | None = None,
    unit: str | None = None,
) -> CostModel:
    """A :class:`CostModel` from any of the forms ``costs`` takes in featuresift.

    Parameters
    ----------
    feature_names : sequence of str
        Column names, in order.
    costs : None, CostModel, mapping or array-like
        ``None``: every feature outside a panel costs 1 (unit "features"). A
        :class:`CostModel` is used as is (its features must be the columns). The YAML
        form ``{"features": {name: price}, "panels": {...}, "unit": "EUR"}``. A flat
        mapping ``{name: price}`` of the features outside panels. An array gives one
        price per column; entries of panel members must be 0 or NaN.
    panels : mapping, optional
        Panels in either form (see :class:`CostModel`), when ``costs`` does not hold them.
    unit : str, optional
        Cost unit, when ``costs`` does not give one.

    Returns
    -------
    CostModel

    Examples
    --------
    >>> cm = make_cost_model(["a", "b", "c"], {"unit": "EUR", "features": {"a": 2.0},
    ...                      "panels": {"kit": {"cost": 5.0, "features": ["b", "c"]}}})
    >>> cm.cost(["a", "b", "c"]), cm.unit
    (7.0, 'EUR')
    >>> make_cost_model(["a", "b"], [1.0, 3.0]).cost([1])
    3.0
    """
    names = [str(n) for n in feature_names]
    if isinstance(costs, CostModel):
        if panels or unit:
            raise InputError("give panels and unit inside the CostModel, not beside it",
                             key="costs")
        if list(costs.feature_names) != names:
            raise InputError("the CostModel's features must be the columns of X, in order",
                             key="costs")
        return costs
    if isinstance(costs, Mapping) and _is_spec(costs):
        unknown = sorted(set(map(str, costs)) - {"features", "panels", "unit"})
        if unknown:
            raise InputError(f"unknown key(s) {', '.join(unknown)}; the cost mapping takes "
                             "features, panels and unit", key="costs")
        if panels is not None and costs.get("panels") is not None:
            raise InputError("panels given twice (inside costs and beside it)", key="panels")
        panels = costs.get("panels") if costs.get("panels") is not None else panels
        unit = costs.get("unit") if costs.get("unit") is not None else unit
        costs = {} if costs.get("features") is None else costs["features"]
    panel_map = {str(k): parse_panel(str(k), v) for k, v in dict(panels or {}).items()}
    in_panel = {m for _, members in panel_map.values() for m in members}
    if costs is None:
        prices: dict[str, Any] = {n: 1.0 for n in names if n not in in_panel}
        default_unit = "features"
    elif isinstance(costs, Mapping):
        prices = {str(k): v for k, v in costs.items()}
        default_unit = "cost units"
    else:
        import numpy as np

        values = np.asarray(costs, dtype=object).ravel()
        if values.shape[0] != len(names):
            raise InputError(
                f"{values.shape[0]} costs given for {len(names)} columns of X", key="costs"
            )
        prices = {}
        for i, (n, v) in enumerate(zip(names, values)):
            if n in in_panel:
                blank = isinstance(v, (int, float, np.number)) and (
                    math.isnan(float(v)) or float(v) == 0.0
                )
                if not blank:
                    raise InputError(
                        f"'{n}' is paid through its panel; its entry must be 0 or NaN, got {v!r}",
                        key=f"costs[{i}]",
                    )
                continue
            prices[n] = v.item() if isinstance(v, np.generic) else v
        default_unit = "cost units"
    return CostModel(names, prices, panels=panel_map, unit=unit or default_unit)


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
    panels : mapping, optional
        Named groups bought together for one price: ``{name: (price, [features])}`` or
        ``{name: {"cost": price, "features": [features]}}`` (the YAML form).
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
        panels: Mapping[str, Any] | None = None,
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
            price, members = parse_panel(str(pname), spec)
            price = _check_price(price, f"costs.panels.{pname}.cost")
            members = tuple(members)
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
        from featuresift.display import cost_model_repr

        return cost_model_repr(self)

    def _repr_html_(self) -> str:
        from featuresift.display import cost_model_html

        return cost_model_html(self)

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
        if type(subset) is tuple and subset and {type(i) for i in subset} == {int}:
            # The common case (a search's sorted column tuple), checked in bulk.
            if min(subset) >= 0 and max(subset) < len(self.feature_names):
                return list(subset)
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

    # ------------------------------------------------------- allowed subsets
    def allowed(
        self,
        budget: float | None = None,
        *,
        must_include: Iterable[int | str] = (),
        never_include: Iterable[int | str] = (),
        max_features: int | None = None,
        include_empty: bool = False,
    ) -> AllowedSubsets:
        """The allowed subsets under a budget and the user's limits (exact, panel-aware).

        A subset is allowed when it contains ``must_include``, avoids ``never_include``,
        has at most ``max_features`` features and :meth:`is_feasible` holds for it (the
        very same test, to the last bit: prices are added exactly as integers). Panels
        count as units: a panel's price is paid once for any non-empty choice of its
        members, and nothing more when a ``must_include`` member has paid it already.

        Returns an :class:`AllowedSubsets` that counts them without listing them
        (:meth:`AllowedSubsets.count`) and lists them by size, then column order
        (iteration).

        Examples
        --------
        Two single tests at 1 and 2 EUR and a 3-EUR panel of two values, budget 4 EUR:

        >>> cm = CostModel(["a", "b", "c", "d"], {"a": 1.0, "b": 2.0},
        ...                panels={"lab": (3.0, ["c", "d"])})
        >>> allowed = cm.allowed(4.0)
        >>> allowed.count()     # a, b, c, d, ab, ac, ad, cd, acd (worked by hand)
        9
        >>> [tuple(cm.feature_names[i] for i in s) for s in allowed][:5]
        [('a',), ('b',), ('c',), ('d',), ('a', 'b')]
        >>> cm.allowed(4.0, must_include=["c"]).count()   # the panel is paid: d is free
        4
        """
        return AllowedSubsets(self, budget, must_include, never_include, max_features,
                              include_empty)

    def to_dict(self) -> dict:
        """Plain-data description (JSON-serialisable), used in outputs and fingerprints."""
        return {
            "unit": self.unit,
            "features": {
                n: self.feature_costs[n] for n in self.feature_names if n in self.feature_costs
            },
            "panels": {p: {"cost": c, "features": list(m)} for p, (c, m) in self.panels.items()},
        }


def _exact(value: float) -> Fraction:
    return Fraction(value)


class AllowedSubsets:
    """Exact counting and listing of the subsets allowed by a cost model and limits.

    Built by :meth:`CostModel.allowed`. The budget test is the cost model's own
    (:meth:`CostModel.is_feasible`: the float sum of the prices, correctly rounded,
    against ``budget * (1 + 1e-12) + 1e-12``), evaluated on exact integer sums so that
    no subset is counted or listed differently from what a check of that subset says.

    Attributes
    ----------
    must_include, never_include : tuple of int
        Column indices always in / never in a subset.
    max_features : int
        Largest subset size.
    free : tuple of int
        Columns that may be switched on or off.

    Examples
    --------
    >>> cm = CostModel.uniform(["a", "b", "c"])
    >>> allowed = cm.allowed(budget=2)
    >>> allowed.count(), list(allowed)
    (6, [(0,), (1,), (2,), (0, 1), (0, 2), (1, 2)])
    >>> allowed.count(limit=4)   # stops counting once past the limit
    5
    """

    def __init__(self, cost_model: CostModel, budget, must_include, never_include,
                 max_features, include_empty) -> None:
        cm = cost_model
        self.cost_model = cm
        self.budget = None if budget is None or math.isinf(float(budget)) else float(budget)
        must = tuple(sorted(set(cm._indices(must_include))))
        never = frozenset(cm._indices(never_include))
        self.must_include = must
        self.never_include = tuple(sorted(never))
        n = cm.n_features
        self.max_features = n if max_features is None else int(max_features)
        self.include_empty = bool(include_empty)
        self.free = tuple(i for i in range(n) if i not in never and i not in set(must))
        # Exact integer prices: every float is a dyadic rational, so one power-of-two
        # denominator turns all prices into integers.
        prices = [_exact(p) for p in cm._col_price] + [_exact(p) for p in cm._panel_price]
        den = max((f.denominator for f in prices), default=1)
        self._den = den
        self._col_key = tuple(int(_exact(p) * den) for p in cm._col_price)
        self._panel_key = tuple(int(_exact(p) * den) for p in cm._panel_price)
        self._col_panel = cm._col_panel
        paid = {cm._col_panel[c] for c in must if cm._col_panel[c] >= 0}
        self._paid = frozenset(paid)
        self._base_key = sum(self._col_key[c] for c in must if cm._col_panel[c] < 0) + sum(
            self._panel_key[p] for p in paid)
        self._limit_key = self._max_key()
        self._possible = (not (set(must) & never) and len(must) <= self.max_features
                          and self._fits(self._base_key))

    # ----------------------------------------------------------------- exact test
    def _max_key(self) -> int | None:
        """Largest integer cost key whose correctly rounded float passes the budget test."""
        if self.budget is None:
            return None
        t = self.budget * (1 + 1e-12) + 1e-12
        den = self._den
        lo = math.floor(_exact(t) * den)
        hi = math.floor((_exact(t) + _exact(math.ulp(t))) * den) + 1
        # float(lo / den) <= t holds (rounding is monotone); find the last key that passes.
        while hi - lo > 1:
            mid = (lo + hi) // 2
            if mid / den <= t:  # int / int is correctly rounded, like math.fsum
                lo = mid
            else:
                hi = mid
        return lo

    def _fits(self, key: int) -> bool:
        return self._limit_key is None or key <= self._limit_key

    def _units(self) -> list[tuple[int, int]]:
        """(price key, number of free members) per unit: lone features and unpaid panels.

        A free member of a panel already paid by ``must_include`` is a unit of price 0.
        """
        units: list[tuple[int, int]] = []
        panel_members: dict[int, int] = {}
        for c in self.free:
            p = self._col_panel[c]
            if p < 0:
                units.append((self._col_key[c], 1))
            elif p in self._paid:
                units.append((0, 1))
            else:
                panel_members[p] = panel_members.get(p, 0) + 1
        units += [(self._panel_key[p], m) for p, m in sorted(panel_members.items())]
        return units

    # -------------------------------------------------------------------- count
    def count(self, limit: int | None = None) -> int:
        """Number of allowed subsets, exactly.

        Parameters
        ----------
        limit : int, optional
            When given and the number is larger, counting stops as soon as that is
            known and ``limit + 1`` is returned (so asking "are there at most N?" stays
            cheap however many subsets there are).

        Returns
        -------
        int
        """
        if not self._possible:
            return 0
        cap = self.max_features - len(self.must_include)
        # Expensive units first: the cheap ones left over then fit in any remaining
        # room sooner, and such states merge into one "anything fits" state.
        units = sorted(self._units(), reverse=True)
        room = None if self._limit_key is None else self._limit_key - self._base_key
        suffix = [0] * (len(units) + 1)
        for i in range(len(units) - 1, -1, -1):
            suffix[i] = suffix[i + 1] + units[i][0]
        drop_empty = 0 if (self.include_empty or self.must_include) else 1
        sized = cap < sum(m for _, m in units)  # does max_features bind at all?
        # states: extra cost key (None: every completion fits the budget) -> number of
        # partial subsets, by size when max_features binds.
        states: dict[int | None, Any] = {0: [1] if sized else 1}
        merge = _merge_sized if sized else _merge_plain
        for i, (price, members) in enumerate(units):
            if room is not None:
                loose = [k for k in states if k is not None and k + suffix[i] <= room]
                for key in loose:
                    merge(states, None, states.pop(key))
            ways = [math.comb(members, j) for j in range(members + 1)]
            new: dict[int | None, Any] = {}
            for key, vec in states.items():
                merge(new, key, vec)
                if key is None or room is None:
                    target = None
                else:
                    target = key + price
                    if target > room:
                        continue
                if sized:
                    grown = [0] * min(cap + 1, len(vec) + members)
                    for size, n_ways in enumerate(vec):
                        if n_ways:
                            for j in range(1, min(members, cap - size) + 1):
                                grown[size + j] += n_ways * ways[j]
                    if any(grown):
                        merge(new, target, grown)
                else:
                    merge(new, target, vec * ((1 << members) - 1))
            states = new
            if limit is not None:
                total = _total(states, sized) - drop_empty
                if total > limit:
                    return limit + 1
        total = _total(states, sized) - drop_empty
        return total if limit is None else min(total, limit + 1)

    # ---------------------------------------------------------------------- list
    def __iter__(self) -> Iterator[tuple[int, ...]]:
        """Allowed subsets as sorted column tuples, by size, then column order."""
        if not self._possible:
            return
        must = self.must_include
        cap = min(self.max_features - len(must), len(self.free))
        for k in range(cap + 1):
            if k == 0:
                if must or self.include_empty:
                    yield must
                continue
            for extra in self._combinations(k):
                yield tuple(sorted(must + extra)) if must else extra

    def _combinations(self, k: int) -> Iterator[tuple[int, ...]]:
        """Free-column combinations of size ``k`` within the budget, in column order."""
        free = self.free
        col_key, col_panel = self._col_key, self._col_panel
        panel_key, paid = self._panel_key, self._paid
        room = None if self._limit_key is None else self._limit_key - self._base_key
        touched: dict[int, int] = {}
        chosen: list[int] = []

        def step(start: int, key: int) -> Iterator[tuple[int, ...]]:
            need = k - len(chosen)
            for pos in range(start, len(free) - need + 1):
                c = free[pos]
                p = col_panel[c]
                if p < 0:
                    extra = col_key[c]
                elif p in paid or touched.get(p):
                    extra = 0
                else:
                    extra = panel_key[p]
                new_key = key + extra
                if room is not None and new_key > room:
                    continue
                if need == 1:
                    yield (*chosen, c)
                    continue
                chosen.append(c)
                if p >= 0:
                    touched[p] = touched.get(p, 0) + 1
                yield from step(pos + 1, new_key)
                chosen.pop()
                if p >= 0:
                    touched[p] -= 1

        yield from step(0, 0)


def _merge_plain(states: dict, key: Any, count: int) -> None:
    states[key] = states.get(key, 0) + count


def _merge_sized(states: dict, key: Any, vec: list[int]) -> None:
    old = states.get(key)
    if old is None:
        states[key] = vec
    elif len(old) >= len(vec):
        states[key] = [a + b for a, b in zip(old, vec)] + old[len(vec):]
    else:
        states[key] = [a + b for a, b in zip(vec, old)] + vec[len(old):]


def _total(states: dict, sized: bool) -> int:
    return sum(sum(v) for v in states.values()) if sized else sum(states.values())
