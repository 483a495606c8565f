"""Atom types: the vertex colours the generator's core places, and the order it places them in.

An atom type is an element in one valence state (``rules/valences.tsv``) with a fixed
number of hydrogens, hence a fixed number of bonds to heavy atoms (its degree).  A
contracted group (:class:`rank.generate.fragment.FragmentType`) is a vertex type too; both
give a :class:`TypeKey`, and the core's types are sorted on it, highest first.

>>> carbon = next(s for s in atom_states() if s.id == "C")
>>> AtomType(carbon, 3).degree
1
>>> AtomType(carbon, 2).key > AtomType(carbon, 3).key
True
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cache
from typing import NamedTuple

from ..tables import read_table

__all__ = ["AtomState", "AtomType", "TypeKey", "atom_states"]


class TypeKey(NamedTuple):
    """The sort key of a vertex type, shared by atom types and contracted groups.

    The core's types are sorted on it, highest first; the enumeration order and the
    canonical forms depend on that order, so it must not change.  Higher degree first; at
    one degree a contracted group before any atom; atoms then by higher valence, fewer
    hydrogens, state id, and a double bond required / allowed / excluded; groups by SMILES.
    """

    degree: int
    group: bool
    valence: int
    fewer_hydrogens: int
    """Minus the hydrogen count (0 for a group)."""
    name: str
    """The valence state's id, or the group's SMILES."""
    double_bond: int
    """1: the atom carries a double bond; 0: either (and every group); -1: it carries none."""


_DOUBLE_BOND_RANK = {True: 1, None: 0, False: -1}


@dataclass(frozen=True)
class AtomState:
    """An element in one valence state (``rules/valences.tsv``)."""

    id: str
    element: str
    valence: int
    charge: int
    extra: bool


@dataclass(frozen=True)
class AtomType:
    """An atom state with a fixed hydrogen count; ``degree`` bonds go to heavy atoms."""

    state: AtomState
    hydrogens: int
    double_bond: bool | None = None
    """True: the atom carries a double bond; False: it carries none; None: either."""

    @property
    def degree(self) -> int:
        """Sum of the bond orders to heavy atoms."""
        return self.state.valence - self.hydrogens

    @property
    def key(self) -> TypeKey:
        """The type's place in the order of the core's types."""
        return TypeKey(self.degree, False, self.state.valence, -self.hydrogens, self.state.id,
                       _DOUBLE_BOND_RANK[self.double_bond])


@cache
def atom_states() -> tuple[AtomState, ...]:
    """The valence states of ``rules/valences.tsv``.

    Returns
    -------
    tuple of AtomState
        In table order.
    """
    return tuple(
        AtomState(r["id"], r["element"], int(r["valence"]), int(r["charge"]), r["state"] == "extra")
        for r in read_table("valences")
    )
