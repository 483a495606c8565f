"""Hints read from an observed spectrum that narrow the isomer space.

A hint is a claim a chemist reads off the peaks: a sharp 3H signal at high field
is a methyl group, a 2H quartet with a 3H triplet is an ethyl group, two 2H
doublets in the aromatic region are a para-disubstituted ring.  Hints are rules
of thumb (common practice, ``rules/hints.tsv``), not laws, so every applied
hint is reported with what it removed, and ``--no-hints`` turns them off.

A hint acts at one of three levels:

- on the hydrogen distribution (how many CH3, CH, ... the formula is split into),
  which removes whole runs of the generator before any structure is built;
- as a group the structure must contain (``fragments``: an ethyl group, a
  monosubstituted benzene ring, ...), which the generator places as one vertex
  (``rank/generate/fragment.py``), so structures without it are never built;
- as a SMARTS pattern checked on each built structure before its spectrum is
  predicted.

>>> from rank.spectra import parse_peak_text
>>> peaks = parse_peak_text("4.12 (q, J = 7.1 Hz, 2H), 2.05 (s, 3H), 1.26 (t, J = 7.1 Hz, 3H)").peaks
>>> [h.name for h in read_hints(peaks, (2, 3, 3))]
['methyl groups', 'ethyl group']
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, replace
from functools import cache

from rdkit import Chem

from ..formula import Formula
from ..spectra import Peak, observation_rule
from ..tables import read_table
from .atoms import AtomType
from .fragment import Fragment, FragmentType

__all__ = ["Hint", "hint_rules", "read_hints"]


@dataclass(frozen=True)
class Hint:
    """One claim about the structure, with the peaks it rests on.

    ``min_atoms`` asks for at least that many carbon atoms with ``hydrogens`` H
    (a hydrogen-distribution hint), each carrying a double bond when
    ``double_bond`` is set (in any Kekule form an aromatic carbon does);
    ``fragments`` asks every structure to contain ``copies`` copies of these groups
    (SMILES with ``*`` ports), for formulas of DBE up to ``max_dbe``; ``smarts`` asks
    every structure to match. ``peaks`` are the indices of the peaks it rests on.
    """

    name: str
    evidence: str
    hydrogens: int | None = None
    min_atoms: int = 0
    smarts: str | None = None
    double_bond: bool = False
    fragments: tuple[str, ...] = ()
    copies: int = 1
    max_dbe: int | None = None
    peaks: tuple[int, ...] = ()

    @property
    def claim(self) -> str:
        """The hint as the user reads it, e.g. ``2 × ethyl group``."""
        return f"{self.copies} × {self.name}" if self.copies > 1 else self.name

    def allows(self, types: Sequence[tuple[AtomType | FragmentType, int]]) -> bool:
        """Whether a hydrogen distribution can satisfy the hint (enough carbons with ``hydrogens`` H).

        Parameters
        ----------
        types : sequence of (AtomType or FragmentType, int)
            The distribution's vertex types with their counts.

        Returns
        -------
        bool
            Always True for a hint that does not name a hydrogen count.
        """
        if self.hydrogens is None:
            return True
        have = sum(c * (t.fragment.carbons(self.hydrogens) if isinstance(t, FragmentType)
                        else t.state.element == "C" and t.hydrogens == self.hydrogens) for t, c in types)
        return have >= self.min_atoms

    def fits(self, formula: Formula, any_dbe: bool = False) -> bool:
        """Whether the formula can hold the hint's groups (``copies`` of one variant) within ``max_dbe``.

        Parameters
        ----------
        formula : Formula
        any_dbe : bool, default False
            Leave ``max_dbe`` out (a guess, not a claim: more rings and double bonds only make other
            readings of the peaks possible).

        Returns
        -------
        bool
            False when the formula's DBE passes ``max_dbe`` or no variant fits ``copies`` times.
        """
        if self.max_dbe is not None and formula.dbe > self.max_dbe and not any_dbe:
            return False
        return not self.fragments or any(
            formula.minus({el: self.copies * n for el, n in Fragment(s).formula_counts().items()}) is not None
            for s in self.fragments)

    def pattern(self) -> Chem.Mol | None:
        """The compiled ``smarts``.

        Returns
        -------
        Chem.Mol or None
            None when the hint has no SMARTS.
        """
        return Chem.MolFromSmarts(self.smarts) if self.smarts else None


@dataclass(frozen=True)
class _Window:
    low: float
    high: float
    multiplicities: tuple[str, ...]
    n_h: tuple[int, ...]

    def fits(self, peak: Peak, n: int, relaxed: bool = False) -> bool:
        """Whether a peak of ``n`` H fits the window; ``relaxed`` lets an unreported multiplicity pass."""
        if peak.broad or not self.low <= peak.shift <= self.high:
            return False
        unreported = peak.multiplicity is None
        if self.multiplicities == ("reported",):
            if unreported and not relaxed:
                return False
        elif self.multiplicities and peak.multiplicity not in self.multiplicities and not (unreported and relaxed):
            return False
        return not self.n_h or n in self.n_h


@dataclass(frozen=True)
class _Rule:
    id: str
    name: str
    kind: str
    first: _Window
    second: _Window | None
    h_per_group: int
    carbon_h: int | None
    max_j: float | None
    smarts: str | None
    double_bond: bool
    fragments: tuple[str, ...]
    max_dbe: int | None


def _split(text: str) -> tuple[str, ...]:
    return tuple(x.strip() for x in text.split(",") if x.strip())


@cache
def hint_rules() -> tuple[_Rule, ...]:
    """The rows of ``rules/hints.tsv``.

    Returns
    -------
    tuple of _Rule
        In table order, which is the order hints are read in.
    """
    rules = []
    for r in read_table("hints"):
        first = _Window(float(r["low"]), float(r["high"]), _split(r["multiplicities"]),
                        tuple(int(x) for x in _split(r["n_h"])))
        second = None
        if r["low2"]:
            second = _Window(float(r["low2"]), float(r["high2"]), _split(r["multiplicities2"]),
                             tuple(int(x) for x in _split(r["n_h2"])))
        rules.append(_Rule(
            r["id"], r["name"], r["kind"], first, second,
            int(r["h_per_group"]) if r["h_per_group"] else 0,
            int(r["carbon_h"]) if r["carbon_h"] else None,
            float(r["max_j"]) if r["max_j"] else None,
            r["smarts"] or None,
            r["double_bond"] == "yes",
            tuple(r["fragments"].split()),
            int(r["max_dbe"]) if r["max_dbe"] else None,
        ))
    return tuple(rules)


def _j_gap(a: Peak, b: Peak) -> float:
    """Smallest difference between a J of ``a`` and a J of ``b``; 0 when either gives none."""
    if not a.j or not b.j:
        return 0.0
    return min(abs(x - y) for x in a.j for y in b.j)


def _apply(rule: _Rule, peaks: Sequence[Peak], counts: Sequence[int], claimed: set[int],
           relaxed: bool = False) -> Hint | None:
    """The rule's hint, if the peaks support it; a group rule uses no peak in ``claimed``; ``relaxed`` lets
    peaks without a reported multiplicity pass any multiplicity the rule asks for."""
    pairs = [(k, pc) for k, pc in enumerate(zip(peaks, counts)) if not (rule.fragments and k in claimed)]
    group = {"smarts": rule.smarts, "fragments": rule.fragments, "max_dbe": rule.max_dbe}
    if rule.kind == "count":
        used = [(k, p, n) for k, (p, n) in pairs if rule.first.fits(p, n, relaxed)]
        if not used:
            return None
        groups = sum(n // rule.h_per_group for _, _, n in used)
        return Hint(rule.name, ", ".join(p.caption for _, p, _ in used), rule.carbon_h, groups,
                    double_bond=rule.double_bond, peaks=tuple(k for k, _, _ in used))
    if rule.kind == "peak":
        used = [(k, p) for k, (p, n) in pairs if rule.first.fits(p, n, relaxed)]
        return Hint(rule.name, used[0][1].caption, peaks=(used[0][0],), **group) if used else None
    if rule.kind == "pair":
        for i, (a, n) in pairs:
            if not rule.first.fits(a, n, relaxed):
                continue
            # the partner with the closest J (equal within rules/observe.tsv's tolerance when both give one)
            partners = sorted((_j_gap(a, b), j, b, m) for j, (b, m) in pairs
                              if i != j and rule.second.fits(b, m, relaxed)
                              and _j_gap(a, b) <= observation_rule("equal_j_tolerance"))
            if partners:
                _, j, b, m = partners[0]
                # the H counts may show several equal groups (4H q with 6H t: two ethyls)
                copies = min(n // min(rule.first.n_h), m // min(rule.second.n_h)) if rule.fragments else 1
                return Hint(rule.name, f"{a.caption} with {b.caption}", copies=max(copies, 1), peaks=(i, j), **group)
        return None
    if rule.kind == "total":
        # peaks with a J above max_j (alkene H across a double bond) are set aside
        inside = [(k, p, n) for k, (p, n) in pairs if rule.first.low <= p.shift <= rule.first.high
                  and not p.broad and (rule.max_j is None or all(j <= rule.max_j for j in p.j))]
        if not inside or sum(n for _, _, n in inside) not in rule.first.n_h:
            return None
        if rule.first.multiplicities == ("reported",) and not relaxed \
                and any(p.multiplicity is None for _, p, _ in inside):
            return None  # without multiplicities and J the alkene H cannot be set aside
        return Hint(rule.name, ", ".join(p.caption for _, p, _ in inside), peaks=tuple(k for k, _, _ in inside),
                    **group)
    raise ValueError(f"rules/hints.tsv row {rule.id}: unknown kind {rule.kind!r}")


def read_hints(peaks: Sequence[Peak], counts: Sequence[int], formula: Formula | None = None,
               relaxed: bool = False) -> list[Hint]:
    """The hints the peaks support, given their whole-number H counts.

    Parameters
    ----------
    peaks : observed peaks (solvent signals dropped)
    counts : H per peak from the chosen normalisation; all 0 when the list had
        no integrals, and then no hint applies (every hint rests on H counts).
    formula : when given, a group hint claims no more copies than the formula can hold,
        and one whose group does not fit at all (or whose DBE limit the formula passes)
        is left out.
    relaxed : read peaks without a reported multiplicity as if they had the one a rule asks for, and
        leave the rules' DBE limits out: guesses, not claims, that a budgeted run searches first
        (``rank.shortlist``).

    Returns
    -------
    list of Hint
        In the order of ``rules/hints.tsv``.
    """
    if not any(counts):
        return []
    hints: list[Hint] = []
    claimed: set[int] = set()
    for rule in hint_rules():
        hint = _apply(rule, peaks, counts, claimed, relaxed)
        if hint is None:
            continue
        while formula is not None and hint.copies > 1 and not hint.fits(formula, relaxed):
            hint = replace(hint, copies=hint.copies - 1)
        if formula is not None and not hint.fits(formula, relaxed):
            continue
        if hint.fragments:
            # a peak is evidence for one group only: two group hints on the same peaks would
            # claim two groups where the spectrum shows one (table order decides)
            claimed |= set(hint.peaks)
        hints.append(hint)
    return hints
