"""The compiled core (``rank/generate/_enum.c``) set up for one run: vertex types, their
counts and degrees, and the bond orders banned between them.

>>> from rank.generate.atoms import AtomType, atom_states
>>> carbon = next(s for s in atom_states() if s.id == "C")
>>> run = [(AtomType(carbon, 2), 1), (AtomType(carbon, 3), 2)]  # C3H8: propane only
>>> EnumeratorFactory().estimate(run)
1.0
>>> EnumeratorFactory().bans(run)  # nothing banned
b'\\x00\\x00\\x00\\x00'
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence
from enum import IntFlag

from rdkit import Chem

from . import _enum
from .atoms import AtomType
from .fragment import FragmentType
from .smarts import atom_truth, is_triple_bond_pattern

__all__ = ["CEILING_PROBES", "PLAN_PROBES", "BondBan", "EnumeratorFactory", "TypeCounts", "VertexType"]

VertexType = AtomType | FragmentType
"""A vertex colour of the core: one atom type, or one contracted group."""

TypeCounts = Sequence[tuple[VertexType, int]]
"""The vertex types of one run with how many of each, sorted on their key, highest first."""

PLAN_PROBES = 16
"""Knuth probes (with seed 1) behind an estimate that plans work: the shares of a run and
the structures a hint removes.  Fixed, so plans are the same on any machine."""

CEILING_PROBES = 64
"""Knuth probes per run of the ceiling check, which a refusal rests on (more than for planning)."""


class BondBan(IntFlag):
    """The bond orders the core may not place between two vertex types: one byte per pair.

    Bit ``1 << order`` bans that order.  The values are the ``BAN_DOUBLE`` and
    ``BAN_TRIPLE`` constants of ``rank/generate/_enum.c`` (``#define BAN``), which reads
    the bytes; the module exports them, so the two sides cannot disagree.
    """

    DOUBLE = _enum.BAN_DOUBLE
    TRIPLE = _enum.BAN_TRIPLE


_SINGLE_ONLY = int(BondBan.DOUBLE | BondBan.TRIPLE)
"""A contracted group's ports are single bonds."""


MAX_DOUBLE_GROUPS = 8
"""Bounds on vertices carrying a double bond the core checks on partial structures (``MAXG`` in ``_enum.c``)."""


class EnumeratorFactory:
    """Builds the compiled core's enumerator for one run.

    Parameters
    ----------
    forbid : iterable of Chem.Mol, default ()
        Compiled ``--forbid`` patterns; a two-atom triple-bond pattern (``[#6]#[#7]``)
        bans that bond wherever the atom types decide it, the others are ignored here.
    double_limits : iterable of Limit, default ()
        Limits on carbons with (or without) a double bond whose kind the atom types and
        flags decide (``Kind.double_bond`` set, no SMARTS, triple bond or environments):
        the core cuts a partial structure that can no longer meet one (the first
        :data:`MAX_DOUBLE_GROUPS`; the stream checks every limit on built structures anyway).

    Notes
    -----
    Past 80 lines with its docstrings only; the code is under 40.
    """

    def __init__(self, forbid: Iterable[Chem.Mol] = (), double_limits: Iterable = ()) -> None:
        self._triple_bans = tuple(p for p in forbid if is_triple_bond_pattern(p))
        self.double_limits = tuple(double_limits)[:MAX_DOUBLE_GROUPS]

    def double_groups(self, types: TypeCounts) -> list[tuple[list[int], int, int]]:
        """The core's double-bond groups for a run: (type indices, at least, at most or -1).

        A group's members are the run's atom types of the limit's element and H counts that
        may carry a double bond; a contracted group's atoms are fixed (its ports are single
        bonds) and move the bounds.  A limit on atoms without a double bond becomes one on
        those with: of N such atoms, at most ``upper`` without means at least N - upper with.
        """
        groups = []
        for limit in self.double_limits:
            kind = limit.kind
            members, fixed, total = [], 0, 0
            for i, (t, c) in enumerate(types):
                if isinstance(t, FragmentType):
                    fixed += c * t.fragment.carbons_of(kind.element, kind.hydrogens, True)
                    total += c * t.fragment.carbons_of(kind.element, kind.hydrogens, None)
                    continue
                if t.state.element != kind.element:
                    continue
                if kind.hydrogens is not None and t.hydrogens not in kind.hydrogens:
                    continue
                total += c
                if t.double_bond is not False and t.degree >= 2:
                    members.append(i)
            if kind.double_bond:
                low, high = limit.lower, limit.upper
            else:
                low = 0 if limit.upper is None else total - limit.upper
                high = total - limit.lower
            low, high = max(0, low - fixed), None if high is None else high - fixed
            if high is not None and high < 0:
                high, low = 0, 1   # no structure: a group no vertex can fill
            elif not members and low == 0:
                continue           # the flags already settle it
            groups.append((members, low, -1 if high is None else high))
        return groups

    def bans(self, types: TypeCounts) -> bytes:
        """The banned bond orders between every pair of the run's types.

        Parameters
        ----------
        types : TypeCounts
            The run.

        Returns
        -------
        bytes
            ``len(types)`` squared :class:`BondBan` values, row by row.
        """
        size = len(types)
        bans = bytearray(size * size)
        for p in self._triple_bans:
            for i, (a, _) in enumerate(types):
                for j, (b, _) in enumerate(types):
                    if (atom_truth(p, 0, a) and atom_truth(p, 1, b)) or (
                        atom_truth(p, 1, a) and atom_truth(p, 0, b)
                    ):
                        bans[i * size + j] |= BondBan.TRIPLE
        for i, (a, _) in enumerate(types):
            if isinstance(a, FragmentType):
                closed = _SINGLE_ONLY
            else:
                closed = BondBan.DOUBLE if a.double_bond is False else 0
            for j in range(size):
                bans[i * size + j] |= closed
                bans[j * size + i] |= closed
        return bytes(bans)

    def build(self, types: TypeCounts, part: int = 0, parts: int = 1, groups: bool = True) -> _enum.Enumerator:
        """A fresh enumerator for the run, or for share ``part`` of ``parts`` of it.

        Parameters
        ----------
        types : TypeCounts
            The run; each type's value in the canonical code falls with its position.
        part, parts : int, default 0 and 1
            Which of the disjoint, together complete shares of the search to take.
        groups : bool, default True
            False leaves out the double-bond groups of ``double_limits``.

        Returns
        -------
        rank.generate._enum.Enumerator
        """
        size = len(types)
        return _enum.Enumerator(
            [size - i for i in range(size)],
            [t.degree for t, _ in types],
            [c for _, c in types],
            self.bans(types),
            part=part,
            parts=parts,
            needs_double=[isinstance(t, AtomType) and bool(t.double_bond) for t, _ in types],
            double_groups=self.double_groups(types) if self.double_limits and groups else None,
        )

    def estimate(self, types: TypeCounts, probes: int = PLAN_PROBES, seed: int = 1) -> float:
        """Knuth's random-probe estimate of the structures the run builds.

        Parameters
        ----------
        types : TypeCounts
            The run.
        probes : int, default :data:`PLAN_PROBES`
            Random walks from the root to a leaf; the estimate is their mean.
        seed : int, default 1

        Returns
        -------
        float
            With double-bond groups, a run whose probes all die is estimated without them.

        References
        ----------
        D. E. Knuth, "Estimating the efficiency of backtrack programs",
        Math. Comp. 1975, 29, 121. doi:10.1090/S0025-5718-1975-0373371-6
        """
        found = self.build(types).estimate(probes, seed)
        if found == 0 and self.double_limits and self.double_groups(types):
            # a bound on double bonds often fails only deep in the tree, where every probe may die: more
            # probes, then the run without the bounds (an estimate from above, so a ceiling stays safe)
            found = self.build(types).estimate(4 * probes, seed)
            if found == 0:
                found = self.build(types, groups=False).estimate(probes, seed)
        return found
