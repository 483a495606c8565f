"""Hints read from an observed spectrum that narrow the isomer space.

A hint is a claim about the structure that a chemist reads off the peaks: a
sharp 3H signal at high field is a methyl group, H between 6.5 and 8.6 ppm sit
on sp2 carbons, a sharp 1H signal near 9.8 ppm is an aldehyde.  Hints are rules
of thumb (common practice), not laws, so every hint the run applies is reported
with what it removed, and ``--no-hints`` turns them off.

A hint acts at one of two levels:

- on the hydrogen distribution (how many CH3, CH, ... the formula is split into),
  which removes whole runs of the generator before any structure is built;
- as a SMARTS pattern checked on each built structure before its spectrum is
  predicted.

>>> from rank.peaks import parse_peak_text
>>> [h.name for h in read_hints(parse_peak_text("2.10 (s, 3H), 1.20 (t, 3H)").peaks, (3, 3))]
['methyl groups']
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

from rdkit import Chem

from .peaks import Peak
from .tables import read_table


@dataclass(frozen=True)
class Hint:
    """One claim about the structure, with the peaks it rests on.

    ``min_atoms`` asks for at least that many carbon atoms with ``hydrogens`` H
    (a hydrogen-distribution hint); ``smarts`` asks every structure to match.
    """

    name: str
    evidence: str
    hydrogens: int | None = None
    min_atoms: int = 0
    smarts: str | None = None

    def allows(self, types) -> bool:
        """True when a hydrogen distribution [(AtomType, count), ...] can satisfy the hint."""
        if self.hydrogens is None:
            return True
        have = sum(c for t, c in types if t.state.element == "C" and t.hydrogens == self.hydrogens)
        return have >= self.min_atoms

    def pattern(self) -> Chem.Mol | None:
        return Chem.MolFromSmarts(self.smarts) if self.smarts else None


@dataclass(frozen=True)
class _Rule:
    id: str
    low: float
    high: float
    multiplicities: tuple[str, ...]
    h_per_group: int
    carbon_h: int | None
    smarts: str | None
    name: str


def _rules() -> list[_Rule]:
    rows = []
    for r in read_table("hints"):
        rows.append(_Rule(
            r["id"], float(r["low"]), float(r["high"]),
            tuple(m.strip() for m in r["multiplicities"].split(",") if m.strip()),
            int(r["h_per_group"]),
            int(r["carbon_h"]) if r["carbon_h"] else None,
            r["smarts"] or None, r["name"],
        ))
    return rows


def read_hints(peaks: Sequence[Peak], counts: Sequence[int]) -> list[Hint]:
    """The hints the peaks support, given their whole-number H counts.

    Parameters
    ----------
    peaks : observed peaks (solvent signals dropped)
    counts : H per peak from the chosen normalisation; all 0 when unknown, and
        then only hints that need no integral apply.
    """
    hints = []
    for rule in _rules():
        used, groups = [], 0
        for peak, n in zip(peaks, counts):
            if peak.broad or not (rule.low <= peak.shift <= rule.high):
                continue
            if rule.multiplicities and peak.multiplicity not in rule.multiplicities:
                continue
            if rule.h_per_group and (n == 0 or n % rule.h_per_group):
                continue
            used.append(peak)
            groups += n // rule.h_per_group if rule.h_per_group else 1
        if not used:
            continue
        evidence = ", ".join(p.label for p in used)
        if rule.carbon_h is not None:
            hints.append(Hint(rule.name, evidence, rule.carbon_h, groups))
        if rule.smarts:
            hints.append(Hint(rule.name, evidence, smarts=rule.smarts))
    return hints
