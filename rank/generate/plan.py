"""The runs of the compiled core for one formula, planned without building a structure.

A run is one way of splitting the formula into vertex types: heavy atoms in a valence
state with a fixed hydrogen count (a hydrogen distribution), plus one vertex per group a
hint contracts (``rank/generate/fragment.py``).  Planning is pure: it says which runs
the core searches and why a distribution gives none, and leaves the counting to the
stream.

>>> from rank.formula import parse_formula
>>> planner = RunPlanner(parse_formula("C2H6O"), complete=True)
>>> [[(t.state.id, t.hydrogens, n) for t, n in run] for run in planner.runs()]
[[('O', 0, 1), ('C', 3, 2)], [('C', 2, 1), ('C', 3, 1), ('O', 1, 1)]]
"""

from __future__ import annotations

from collections import Counter
from collections.abc import Iterator, Sequence
from functools import cached_property
from itertools import combinations_with_replacement, product
from typing import NamedTuple

from rdkit import Chem

from ..formula import Formula
from .atoms import AtomState, AtomType, atom_states
from .constraints import Limit
from .core import EnumeratorFactory, TypeCounts
from .fragment import Fragment, FragmentType
from .hints import Hint
from .smarts import atom_truth

__all__ = ["Distribution", "RunPlanner"]


class Distribution(NamedTuple):
    """One hydrogen distribution as planned: the runs it gives, or why it gives none."""

    types: TypeCounts
    """The distribution: atom types and contracted groups with their counts."""
    runs: tuple[TypeCounts, ...]
    """What the core searches: ``types``, or its splits by a double-bond hint, or nothing."""
    pruned: str | None = None
    """The option (``--require '[NH2]'``) that rules out every structure of it."""
    refused: Hint | None = None
    """The hint that no structure of it can satisfy."""
    split: Hint | None = None
    """The double-bond hint that split it into ``runs``."""
    limited: Limit | None = None
    """The limit that no structure of it can satisfy."""
    narrowed: tuple[tuple[str, TypeCounts, TypeCounts | None], ...] = ()
    """Each step by which a limit narrowed a run: (limit name, the run before, after; None: dropped)."""


class RunPlanner:
    """The runs of the compiled core for one formula, and what hints remove from them.

    Nothing is counted here and nothing changes: the same planner gives the same plan
    each time it is asked.

    Parameters
    ----------
    formula : Formula
    complete : bool
        True: standard valences only; False: adds the extra states of ``rules/valences.tsv``.
    hints : sequence of Hint, default ()
        A group hint contracts its copies to single vertices; a hydrogen-distribution hint
        refuses distributions without enough such carbons, and with ``double_bond`` splits
        them by which carbons carry one.
    require, forbid : sequence of (str, Chem.Mol), default ()
        The user's patterns as given and compiled; one-atom ones prune distributions.
    factory : EnumeratorFactory, optional
        Gives the estimates behind what a hint removes.
    limits : sequence of Limit, default ()
        A limit refuses distributions that cannot satisfy it (``Limit.allows``); one on
        carbons with (or without) a double bond also fixes the carbon types' double-bond
        flag where the bound leaves no choice, and drops runs that cannot reach it.
    levels : sequence of (str, EnumeratorFactory), default ()
        The core's own applications of limits, one at a time: each factory adds one (a
        triple-bond ban, a bound on carbons with a double bond checked on partial
        structures) to the one before, starting from ``factory``; what each removes is
        tallied under its limit's name.

    Notes
    -----
    Past 80 lines with its docstrings; its code (one job: planning) is about 60.
    """

    def __init__(self, formula: Formula, complete: bool, hints: Sequence[Hint] = (),
                 require: Sequence[tuple[str, Chem.Mol]] = (), forbid: Sequence[tuple[str, Chem.Mol]] = (),
                 factory: EnumeratorFactory | None = None, limits: Sequence[Limit] = (),
                 levels: Sequence[tuple[str, EnumeratorFactory]] = ()) -> None:
        self.formula = formula
        self.complete = complete
        self.hints = tuple(hints)
        self.require = tuple(require)
        self.forbid = tuple(forbid)
        self.factory = factory or EnumeratorFactory()
        self._groups = [h for h in self.hints if h.fragments]
        self._claims = [h for h in self.hints if h.double_bond and h.hydrogens is not None]
        self.limits = tuple(limits)
        self._flagging = [lim for lim in self.limits if lim.kind.on_double_bonds]
        self.levels = tuple(levels)

    def distributions(self, groups: int | None = None) -> Iterator[Distribution]:
        """The hydrogen distributions in the order the core searches them.

        Parameters
        ----------
        groups : int, optional
            Contract only the first ``groups`` group hints (default: all of them).

        Yields
        ------
        Distribution
            Each one that can be connected (types of a single atom, or enough bonds for a tree).
        """
        grouped = self._groups if groups is None else self._groups[:groups]
        for formula, contracted in _contractions(self.formula, grouped):
            single = formula.heavy_atoms + len(contracted) == 1
            for states in _state_choices(formula, self.complete):
                ordered = sorted(states.items(), key=lambda sc: sc[0].id)
                for share in _hydrogen_shares(ordered, formula["H"], single):
                    types = sorted([*share.items(), *contracted], key=lambda tc: tc[0].key, reverse=True)
                    if _feasible(types, single):
                        yield self._decide(types)

    def runs(self, groups: int | None = None) -> Iterator[TypeCounts]:
        """The runs of the compiled core, as [(AtomType or FragmentType, count), ...].

        Parameters
        ----------
        groups : int, optional
            As :meth:`distributions`.

        Yields
        ------
        TypeCounts
        """
        for d in self.distributions(groups):
            yield from d.runs

    def hint_removal(self, d: Distribution) -> tuple[str, int] | None:
        """The hint that removed structures of one distribution, with their estimated number.

        Parameters
        ----------
        d : Distribution

        Returns
        -------
        (str, int) or None
            The hint's name and the structures it removed; None when no hint removed any.
        """
        if d.refused is not None:
            return d.refused.name, round(self.factory.estimate(d.types))
        if d.split is not None:
            whole = self.factory.estimate(d.types)
            left = sum(self.factory.estimate(x) for x in d.runs)
            return d.split.name, max(0, round(whole - left))
        return None

    def limit_removals(self, d: Distribution) -> Counter:
        """The structures of one distribution each limit removed (estimated), by limit name.

        Parameters
        ----------
        d : Distribution

        Returns
        -------
        Counter
            Limit name -> structures; empty when no limit removed any.
        """
        removed: Counter = Counter()
        if d.limited is not None:
            removed[d.limited.name] += round(self.factory.estimate(d.types))
            return removed
        for name, before, after in d.narrowed:
            left = 0.0 if after is None else self.factory.estimate(after)
            removed[name] += max(0, round(self.factory.estimate(before) - left))
        for run in d.runs if self.levels else ():
            before = self.factory.estimate(run)
            for name, factory in self.levels:
                after = factory.estimate(run)
                removed[name] += max(0, round(before - after))
                before = after
        return +removed

    @cached_property
    def group_removals(self) -> Counter:
        """Estimated structures each group hint removes, taking the group hints one by one.

        Returns
        -------
        Counter
            Hint name -> structures (0 included), in the order of the hints.
        """
        if not self._groups:
            return Counter()
        levels = [sum(self.factory.estimate(types) for types in self.runs(k))
                  for k in range(len(self._groups) + 1)]
        return Counter({h.name: max(0, round(before - after))
                        for h, before, after in zip(self._groups, levels, levels[1:])})

    def _decide(self, types: TypeCounts) -> Distribution:
        pruned = _pruned_by(types, self.require, self.forbid)
        if pruned is not None:
            return Distribution(types, (), pruned=pruned)
        refused = next((h for h in self.hints if not h.allows(types)), None)
        if refused is not None:
            return Distribution(types, (), refused=refused)
        limited = next((lim for lim in self.limits if not lim.allows(types)), None)
        if limited is not None:
            return Distribution(types, (), limited=limited)
        claim, runs = None, None
        if self._claims:
            claim = max(self._claims, key=lambda h: h.min_atoms)
            runs = _split_by_double_bonds(types, claim)
        if runs is None:
            claim, runs = None, (types,)
        if not self._flagging:
            return Distribution(types, runs, split=claim)
        narrowed: list[tuple[str, TypeCounts, TypeCounts | None]] = []
        kept = []
        for run in runs:
            for lim in self._flagging:
                after = _narrow(run, lim)
                if after is not run:
                    narrowed.append((lim.name, run, after))
                if after is None:
                    break
                run = after
            else:
                kept.append(run)
        return Distribution(types, tuple(kept), split=claim, narrowed=tuple(narrowed))


def _narrow(run: TypeCounts, limit: Limit) -> TypeCounts | None:
    """The run with the double-bond flags the limit leaves no choice about; None when it cannot be satisfied.

    Returns ``run`` itself when nothing changes.  The carbon types of the limit's H counts with
    either flag and room for a double bond (degree 2 or more) all take one flag: none when the
    carbons already decided reach the upper bound, one when every such carbon is needed for the
    lower bound.  The structures of the run that satisfy the limit are exactly those of the result.
    """
    kind = limit.kind
    low, high = kind.type_range(run)
    if high < limit.lower or (limit.upper is not None and low > limit.upper):
        return None
    free = [t for t, _ in run if isinstance(t, AtomType) and t.double_bond is None and t.degree >= 2
            and t.state.element == kind.element and (kind.hydrogens is None or t.hydrogens in kind.hydrogens)]
    if not free:
        return run
    counted_if_double = kind.double_bond
    if limit.upper is not None and low == limit.upper:
        flag = not counted_if_double   # the free carbons may not be counted
    elif high == limit.lower:
        flag = counted_if_double       # every free carbon must be counted
    else:
        return run
    merged: Counter = Counter()
    for t, c in run:
        merged[AtomType(t.state, t.hydrogens, flag) if t in free else t] += c
    return sorted(merged.items(), key=lambda tc: tc[0].key, reverse=True)


def _pruned_by(types: TypeCounts, require: Sequence[tuple[str, Chem.Mol]],
               forbid: Sequence[tuple[str, Chem.Mol]]) -> str | None:
    """The option (e.g. ``--require '[NH2]'``) that rules out every structure of these types, if any."""
    for text, p in require:
        if p.GetNumAtoms() == 1 and all(atom_truth(p, 0, t) is False for t, _ in types):
            return f"--require {text!r}"
    for text, p in forbid:
        if p.GetNumAtoms() == 1 and any(atom_truth(p, 0, t) is True for t, _ in types):
            return f"--forbid {text!r}"
    return None


def _split_by_double_bonds(types: TypeCounts, claim: Hint) -> tuple[TypeCounts, ...] | None:
    """Apply a hint that puts hydrogens on doubly bonded carbons; None when it splits nothing.

    Carbons with h H become two types, with and without a double bond; one run per
    split with at least the hinted number on a double bond.  The runs are disjoint
    and cover every structure that satisfies the hint.
    """
    need = claim.min_atoms - sum(t.fragment.carbons(claim.hydrogens, True) * c
                                 for t, c in types if isinstance(t, FragmentType))
    target = next(((t, c) for t, c in types if isinstance(t, AtomType) and t.state.element == "C"
                   and t.hydrogens == claim.hydrogens and t.double_bond is None), None)
    if target is None or need <= 0:
        return None
    t, c = target
    rest = [tc for tc in types if tc != target]
    kept = []
    for k in range(need, c + 1):
        parts = rest + [(AtomType(t.state, t.hydrogens, True), k), (AtomType(t.state, t.hydrogens, False), c - k)]
        kept.append(sorted([(a, n) for a, n in parts if n], key=lambda tc: tc[0].key, reverse=True))
    return tuple(kept)


def _feasible(types: TypeCounts, single: bool) -> bool:
    if single:
        return types[0][0].degree == 0
    total = sum(t.degree * c for t, c in types)
    n = sum(c for _, c in types)
    return all(t.degree >= 1 for t, _ in types) and total % 2 == 0 and total // 2 >= n - 1


def _state_choices(formula: Formula, complete: bool) -> Iterator[dict[AtomState, int]]:
    """Charge-balanced assignments of valence states to the heavy atoms."""
    per_element = []
    for element, n in formula.counts:
        if element == "H":
            continue
        states = [s for s in atom_states() if s.element == element and (not s.extra or not complete)]
        per_element.append([dict(zip(states, c)) for c in _compositions(n, len(states))])
    for parts in product(*per_element):
        merged = {s: c for part in parts for s, c in part.items() if c}
        if sum(s.charge * c for s, c in merged.items()) == 0:
            yield merged


def _compositions(n: int, k: int) -> Iterator[tuple[int, ...]]:
    if k == 1:
        yield (n,)
        return
    for first in range(n, -1, -1):
        for rest in _compositions(n - first, k - 1):
            yield (first, *rest)


def _multisets(count: int, hmax: int, total: int) -> Iterator[tuple[int, ...]]:
    """Non-increasing tuples of ``count`` values in 0..hmax summing to ``total``."""
    if count == 0:
        if total == 0:
            yield ()
        return
    for h in range(min(hmax, total), -1, -1):
        if h * count < total:
            break
        for rest in _multisets(count - 1, h, total - h):
            yield (h, *rest)


def _hydrogen_shares(
    groups: list[tuple[AtomState, int]], hydrogens: int, single: bool
) -> Iterator[Counter]:
    if not groups:
        if hydrogens == 0:
            yield Counter()
        return
    (state, count), rest = groups[0], groups[1:]
    hmax = state.valence if single else state.valence - 1
    for share in range(min(hydrogens, hmax * count), -1, -1):
        for tup in _multisets(count, hmax, share):
            for tail in _hydrogen_shares(rest, hydrogens - share, single):
                yield Counter(AtomType(state, h) for h in tup) + tail


def _contractions(formula: Formula, grouped: list[Hint]) -> Iterator[tuple[Formula, list[tuple[FragmentType, int]]]]:
    """For each choice of variants (``copies`` per group hint): the formula left after taking
    those copies out, and the contracted vertices."""
    if not grouped:
        yield formula, []
        return
    families = [tuple(Fragment(s) for s in h.fragments) for h in grouped]
    picks = [combinations_with_replacement(family, h.copies) for h, family in zip(grouped, families)]
    for choice in product(*picks):
        left = formula.minus(sum((f.formula_counts() for chosen in choice for f in chosen), Counter()))
        if left is None:
            continue
        merged = Counter(FragmentType(f, family) for chosen, family in zip(choice, families) for f in chosen)
        yield left, sorted(merged.items(), key=lambda tc: tc[0].key)
