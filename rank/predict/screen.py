"""Table rows whose SMARTS cannot match a molecule, found without a substructure search.

A pattern matches a molecule only if each of its bonds lands on a bond of the molecule whose two
atoms and the bond itself satisfy the pattern's queries (and each lone pattern atom on a satisfying
atom).  An atom query built only from the primitives in :data:`ATOM_QUERIES` reads nothing but the
atom's element, aromaticity, total degree, hydrogen count, formal charge, smallest ring and number of
rings; a bond query of :data:`BOND_QUERIES` reads the bond's type and whether it lies in a ring.  So
whether a query atom or bond holds is worked out once per such description and kept, a molecule is
described once, and only the patterns whose every requirement is met somewhere in it are searched.
A query atom or bond with other primitives (a recursive ``$(...)``) is taken as met.  A screened-out
pattern has no match: the screen changes how much is searched, never what is found.  A pattern of one
atom, or of two atoms and their bond, all screened, is not searched at all: its matches are the atoms
or bonds of the molecule that meet its requirement (:meth:`Screen.matches`).

This is the screening step of substructure search (J. M. Barnard, "Substructure searching methods:
old and new", J. Chem. Inf. Comput. Sci. 1993, 33, 532, doi:10.1021/ci00014a001), with exact
features in place of hashed fingerprint bits.

>>> from rdkit import Chem
>>> nitrile, ester = Chem.MolFromSmarts("[CX4]-C#N"), Chem.MolFromSmarts("[CX4]-[OX2]-C=O")
>>> screen = Screen([nitrile, ester])
>>> mol = Chem.MolFromSmiles("CCOC(C)=O")
>>> rings = mol.GetRingInfo().AtomRings()
>>> features = screen.features(mol, [6, 6, 8, 6, 6, 8], [False] * 6, [3, 2, 0, 0, 3, 0], [0] * 6,
...                            [(0, 1, Chem.BondType.SINGLE), (1, 2, Chem.BondType.SINGLE),
...                             (2, 3, Chem.BondType.SINGLE), (3, 4, Chem.BondType.SINGLE),
...                             (3, 5, Chem.BondType.DOUBLE)], rings)
>>> screen.passes(nitrile, features.present), screen.passes(ester, features.present)
(False, True)
>>> screen.matches(Chem.MolFromSmarts("[CX4]-[OX2]"), features) is None   # not one of its patterns
True
"""

from __future__ import annotations

import re
from collections.abc import Sequence
from typing import NamedTuple

from rdkit import Chem

__all__ = ["ATOM_QUERIES", "BOND_QUERIES", "Features", "Screen"]

ATOM_QUERIES = frozenset({
    "AtomAnd", "AtomOr", "AtomNull", "AtomType", "AtomAtomicNum", "AtomIsAromatic", "AtomTotalDegree",
    "AtomHCount", "AtomFormalCharge", "AtomMinRingSize", "AtomInNRings",
})
"""RDKit atom query types (``DescribeQuery``) whose outcome the atom description below decides."""

BOND_QUERIES = frozenset({"BondAnd", "BondOr", "BondNull", "BondOrder", "SingleOrAromaticBond", "BondInRing"})
"""RDKit bond query types whose outcome the bond's type and ring membership decide."""


def _known(query: Chem.Atom | Chem.Bond, known: frozenset[str]) -> bool:
    return set(re.findall(r"^\s*(\w+)", query.DescribeQuery(), re.MULTILINE)) <= known


class Features(NamedTuple):
    """The requirements one molecule meets, as bits: in all, per atom (lone atoms), per directed bond."""

    present: int
    atoms: list[int]
    bonds: list[tuple[int, int, int]]   # (atom, atom, requirements met with the first atom first)


class Screen:
    """Necessary conditions for each of a set of SMARTS patterns to match a molecule.

    Parameters
    ----------
    queries : sequence of rdkit.Chem.Mol
        Compiled SMARTS patterns, kept for the life of the screen.

    Notes
    -----
    Each requirement is one bit: a pattern bond (its two atom queries and bond query) or a lone
    pattern atom.  :meth:`features` sets the bits a molecule meets; a pattern passes when all its bits
    are set.
    """

    def __init__(self, queries: Sequence[Chem.Mol]) -> None:
        self._first: list[Chem.Atom | None] = []    # per requirement: the query atoms and bond
        self._second: list[Chem.Atom | None] = []
        self._bond: list[Chem.Bond | None] = []
        self._queries = list(queries)
        self._simple: dict[int, tuple[int, bool]] = {}
        self.needs = {id(query): self._add(query) for query in self._queries}
        """The requirements of each pattern, as bits, by ``id`` of the pattern."""
        self._atoms: dict[tuple, tuple[int, int, int]] = {}
        self._bonds: dict[tuple, int] = {}

    def _add(self, query: Chem.Mol) -> int:
        atoms = [a if _known(a, ATOM_QUERIES) else None for a in query.GetAtoms()]
        need = 0
        for b in query.GetBonds():
            first, second = atoms[b.GetBeginAtomIdx()], atoms[b.GetEndAtomIdx()]
            known = _known(b, BOND_QUERIES)
            if known or first is not None or second is not None:
                need |= self._requirement(first, b if known else None, second)
        for a, atom in zip(query.GetAtoms(), atoms):
            if atom is not None and a.GetDegree() == 0:
                need |= self._requirement(atom, None, None)
        if None not in atoms and query.GetNumAtoms() == 1:
            self._simple[id(query)] = (need.bit_length() - 1, False)
        elif None not in atoms and query.GetNumAtoms() == 2 and query.GetNumBonds() == 1 \
                and _known(query.GetBondWithIdx(0), BOND_QUERIES):
            self._simple[id(query)] = (need.bit_length() - 1, query.GetBondWithIdx(0).GetBeginAtomIdx() == 1)
        return need

    def _requirement(self, first: Chem.Atom | None, bond: Chem.Bond | None, second: Chem.Atom | None) -> int:
        self._first.append(first)
        self._bond.append(bond)
        self._second.append(second)
        return 1 << (len(self._bond) - 1)

    def passes(self, query: Chem.Mol, present: int) -> bool:
        """Whether ``query`` (one of the screen's patterns) may match a molecule with requirements ``present``."""
        need = self.needs[id(query)]
        return present & need == need

    def matches(self, query: Chem.Mol, features: Features) -> list[tuple[int, ...]] | None:
        """The matches of a one-atom or one-bond pattern of the screen, as ``GetSubstructMatches`` with
        ``uniquify=False`` finds them (in another order); None for other patterns."""
        simple = self._simple.get(id(query))
        if simple is None:
            return None
        bit, reverse = simple
        if not features.present >> bit & 1:
            return []
        if query.GetNumAtoms() == 1:
            return [(i,) for i, mask in enumerate(features.atoms) if mask >> bit & 1]
        return [(j, i) if reverse else (i, j) for i, j, mask in features.bonds if mask >> bit & 1]

    def features(self, mol: Chem.Mol, z: Sequence[int], aromatic: Sequence[bool], nh: Sequence[int],
                 charge: Sequence[int], bonds: Sequence[tuple[int, int, Chem.BondType]],
                 rings: Sequence[Sequence[int]]) -> Features:
        """The requirements a molecule meets.

        Parameters
        ----------
        mol : the molecule, without hydrogen atoms (hydrogens implicit).
        z, aromatic, nh, charge : per atom of ``mol``: atomic number, aromaticity, hydrogens, formal charge.
        bonds : (begin atom, end atom, bond type) of each bond of ``mol``.
        rings : ``mol``'s ring information as atom rings (``RingInfo.AtomRings``).
        """
        n = len(z)
        degree, smallest, count = [0] * n, [0] * n, [0] * n
        ring_bonds = set()
        for ring in rings:
            size, previous = len(ring), ring[-1]
            for a in ring:
                count[a] += 1
                if not smallest[a] or size < smallest[a]:
                    smallest[a] = size
                ring_bonds.add((previous, a))
                ring_bonds.add((a, previous))
                previous = a
        for i, j, _ in bonds:
            degree[i] += 1
            degree[j] += 1
        found, atoms, alone, directed = 0, [], [], []
        for i in range(n):
            key = (z[i], aromatic[i], degree[i] + nh[i], nh[i], charge[i], smallest[i], count[i])
            masks = self._atoms.get(key)
            if masks is None:
                masks = self._atoms[key] = self._atom_masks(mol.GetAtomWithIdx(i))
            atoms.append(masks)
            alone.append(masks[2])
            found |= masks[2]
        for i, j, kind in bonds:
            key = (kind, (i, j) in ring_bonds)
            mask = self._bonds.get(key)
            if mask is None:
                mask = self._bonds[key] = self._bond_mask(mol.GetBondBetweenAtoms(i, j))
            forward, backward = mask & atoms[i][0] & atoms[j][1], mask & atoms[j][0] & atoms[i][1]
            directed.append((i, j, forward))
            directed.append((j, i, backward))
            found |= forward | backward
        return Features(found, alone, directed)

    def _atom_masks(self, atom: Chem.Atom) -> tuple[int, int, int]:
        """Requirements whose first, whose second, and whose lone query atom the atom satisfies."""
        first = second = alone = 0
        for k, (a, bond, b) in enumerate(zip(self._first, self._bond, self._second)):
            if a is None or a.Match(atom):
                if bond is None and b is None:
                    alone |= 1 << k
                first |= 1 << k
            if b is None or b.Match(atom):
                second |= 1 << k
        return first, second, alone

    def _bond_mask(self, bond: Chem.Bond) -> int:
        """Requirements whose query bond the bond satisfies."""
        mask = 0
        for k, q in enumerate(self._bond):
            if q is None or q.Match(bond):
                mask |= 1 << k
        return mask
