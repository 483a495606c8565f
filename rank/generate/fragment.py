"""Fragments: a group of atoms the isomer generator places as one vertex.

A hint such as "an ethyl group" or "a para-disubstituted benzene ring" names a
group every structure must contain.  Rather than build every structure and test
it, the generator contracts one copy of the group to a single vertex whose
degree is the number of the group's open single bonds (its ports), enumerates
the much smaller graphs, and expands the vertex again.

A structure holding more copies of the group than were contracted is reached
once per non-equivalent choice of copies, so it is kept only when the expanded
copies are the canonical ones: among the choices of disjoint copies, the one
whose atoms carry the smallest canonical ranks (RDKit canonical ranking without
tie-breaking).  This is canonical augmentation in the sense of
B. D. McKay, "Isomorph-free exhaustive generation", J. Algorithms 1998, 26, 306,
doi:10.1006/jagm.1997.0898.  Every choice of disjoint copies can be contracted,
so the structure with the canonical choice contracted is always generated:
nothing is lost.

A fragment is written as SMILES with ``*`` for each port; all ports must be
equivalent under the group's symmetry, so the expansion does not depend on
which port takes which bond.

>>> f = Fragment("*c1ccc(*)cc1")
>>> f.ports, f.formula_counts()["C"], f.formula_counts()["H"]
(2, 6, 4)
"""

from __future__ import annotations

from collections import Counter
from dataclasses import dataclass
from functools import cache
from itertools import combinations
from typing import NamedTuple

from rdkit import Chem

from .atoms import TypeKey

__all__ = ["Fragment", "FragmentType", "is_canonical_placement"]


class _Parsed(NamedTuple):
    kekule: Chem.Mol                 # the group without its ports, Kekule form, H explicit
    port_atoms: tuple[int, ...]      # the atom of ``kekule`` behind each port
    pattern: Chem.Mol                # SMARTS: the group, each port a heavy atom by a single bond
    group_atoms: tuple[int, ...]     # the pattern's atoms that belong to the group


@dataclass(frozen=True)
class Fragment:
    """A group of atoms written as SMILES with ``*`` ports (e.g. ``CC*`` for ethyl).

    Past 80 lines with its docstrings only; the code is under 40.
    """

    smiles: str

    @property
    def ports(self) -> int:
        """Number of open single bonds (``*`` in the SMILES)."""
        return len(_parse(self.smiles).port_atoms)

    def formula_counts(self) -> Counter:
        """Element counts of the group, hydrogen included.

        Returns
        -------
        Counter
            Element symbol -> atoms.
        """
        mol = _parse(self.smiles).kekule
        counts = Counter(a.GetSymbol() for a in mol.GetAtoms())
        counts["H"] = sum(a.GetTotalNumHs() for a in mol.GetAtoms())
        return counts

    def carbons(self, hydrogens: int, double_bond: bool = False) -> int:
        """Carbon atoms of the group with ``hydrogens`` H (and a double bond, if asked).

        Parameters
        ----------
        hydrogens : int
            The hydrogen count of the carbons to count.
        double_bond : bool, default False
            Count only carbons with a double bond in the group's Kekule form.

        Returns
        -------
        int
        """
        return sum(
            1 for a in _parse(self.smiles).kekule.GetAtoms()
            if a.GetSymbol() == "C" and a.GetTotalNumHs() == hydrogens
            and (not double_bond or any(b.GetBondType() == Chem.BondType.DOUBLE for b in a.GetBonds()))
        )

    def carbons_of(self, element: str, hydrogens: tuple[int, ...] | None, double_bond: bool | None) -> int:
        """Atoms of the group of an element, with one of the H counts (None: any) and with or
        without a double bond in its Kekule form (None: either).

        Parameters
        ----------
        element : str
        hydrogens : tuple of int or None
        double_bond : bool or None

        Returns
        -------
        int
        """
        return sum(
            1 for a in _parse(self.smiles).kekule.GetAtoms()
            if a.GetSymbol() == element and (hydrogens is None or a.GetTotalNumHs() in hydrogens)
            and (double_bond is None
                 or double_bond == any(b.GetBondType() == Chem.BondType.DOUBLE for b in a.GetBonds()))
        )

    def add_to(self, rw: Chem.RWMol) -> tuple[frozenset[int], list[int]]:
        """Add the group's atoms and bonds to ``rw``.

        Parameters
        ----------
        rw : Chem.RWMol
            The molecule being built; the group's atoms are appended.

        Returns
        -------
        atoms : frozenset of int
            The group's atom indices in ``rw``.
        ports : list of int
            The atom behind each port, one entry per port.
        """
        parsed = _parse(self.smiles)
        offset = rw.GetNumAtoms()
        for a in parsed.kekule.GetAtoms():
            atom = Chem.Atom(a.GetAtomicNum())
            atom.SetFormalCharge(a.GetFormalCharge())
            atom.SetNumExplicitHs(a.GetTotalNumHs())
            atom.SetNoImplicit(True)
            rw.AddAtom(atom)
        for b in parsed.kekule.GetBonds():
            rw.AddBond(offset + b.GetBeginAtomIdx(), offset + b.GetEndAtomIdx(), b.GetBondType())
        atoms = frozenset(range(offset, offset + parsed.kekule.GetNumAtoms()))
        return atoms, [offset + p for p in parsed.port_atoms]

    def copies(self, mol: Chem.Mol) -> list[frozenset[int]]:
        """The atom sets of every copy of the group in a sanitised molecule.

        Parameters
        ----------
        mol : Chem.Mol

        Returns
        -------
        list of frozenset of int
            The atoms of each copy (ports left out), each set once.
        """
        parsed = _parse(self.smiles)
        return list({frozenset(m[i] for i in parsed.group_atoms)
                     for m in mol.GetSubstructMatches(parsed.pattern, uniquify=False, maxMatches=100_000)})


@dataclass(frozen=True)
class FragmentType:
    """A generator vertex standing for one copy of ``fragment``.

    ``family`` lists every fragment the hint accepts (its variants); the canonical
    copies are chosen among the copies of all of them.
    """

    fragment: Fragment
    family: tuple[Fragment, ...]

    @property
    def degree(self) -> int:
        """Bonds to the rest of the structure: the fragment's ports."""
        return self.fragment.ports

    @property
    def key(self) -> TypeKey:
        """The vertex's place in the order of the core's types (above the atoms of its degree)."""
        return TypeKey(self.degree, True, 0, 0, self.fragment.smiles, 0)


def is_canonical_placement(mol: Chem.Mol, copies: list[tuple[FragmentType, frozenset[int]]]) -> bool:
    """True when the expanded copies are the canonical placement of the groups in ``mol``.

    ``copies`` holds each vertex the generator expanded with its atoms; copies of
    one hint share its family of fragment variants.  A placement takes
    that many pairwise disjoint copies of each group, disjoint across groups too (a
    peak is evidence for one group only).  Each copy's key is the sorted tuple of its
    atoms' canonical ranks (``Chem.CanonicalRankAtoms(mol, breakTies=False)``); the
    canonical placement is the valid one whose keys, group by group, are
    lexicographically smallest.  Placements related by a symmetry of the molecule
    share their keys, so any of them is accepted.

    Parameters
    ----------
    mol : Chem.Mol
        The expanded structure.
    copies : list of (FragmentType, frozenset of int)
        Each expanded vertex with its atoms in ``mol``.

    Returns
    -------
    bool
    """
    ranks = list(Chem.CanonicalRankAtoms(mol, breakTies=False))

    def key(copy: frozenset[int]) -> tuple[int, ...]:
        return tuple(sorted(ranks[a] for a in copy))

    by_family: dict[tuple[Fragment, ...], list[frozenset[int]]] = {}
    for ftype, atoms in copies:
        by_family.setdefault(ftype.family, []).append(atoms)
    placed = sorted(by_family.items(), key=lambda fs: [f.smiles for f in fs[0]])
    options = []
    for family, sets in placed:
        found = {copy for variant in family for copy in variant.copies(mol)}
        if any(atoms not in found for atoms in sets):
            return False
        options.append((sorted(found, key=key), len(sets)))
    target = [sorted(key(atoms) for atoms in sets) for _, sets in placed]
    return _smallest_placement(options, 0, frozenset(), key) == target


def _smallest_placement(options, level: int, used: frozenset[int], key) -> list | None:
    """Depth first over the groups: the first complete disjoint choice in key order."""
    if level == len(options):
        return []
    copies, k = options[level]
    for chosen in combinations(copies, k):
        atoms = [a for copy in chosen for a in copy]
        if len(set(atoms)) != len(atoms) or used.intersection(atoms):
            continue
        rest = _smallest_placement(options, level + 1, used.union(atoms), key)
        if rest is not None:
            return [sorted(key(c) for c in chosen), *rest]
    return None


@cache
def _parse(smiles: str) -> _Parsed:
    mol = Chem.MolFromSmiles(smiles)
    if mol is None:
        raise ValueError(f"fragment {smiles!r} is not valid SMILES")
    dummies = [a.GetIdx() for a in mol.GetAtoms() if a.GetAtomicNum() == 0]
    if not dummies:
        raise ValueError(f"fragment {smiles!r} has no port '*'")
    for d in dummies:
        bonds = mol.GetAtomWithIdx(d).GetBonds()
        if len(bonds) != 1 or bonds[0].GetBondType() != Chem.BondType.SINGLE:
            raise ValueError(f"fragment {smiles!r}: every port must be one single bond")
    ranks = list(Chem.CanonicalRankAtoms(mol, breakTies=False))
    if len({ranks[d] for d in dummies}) != 1:
        raise ValueError(f"fragment {smiles!r}: its ports are not equivalent by symmetry")
    pattern, order = _pattern(mol)
    group = tuple(i for i in range(mol.GetNumAtoms()) if i not in dummies)
    port_neighbours = [mol.GetAtomWithIdx(d).GetNeighbors()[0].GetIdx() for d in dummies]
    rw = Chem.RWMol(mol)
    for a in rw.GetAtoms():
        a.SetNumExplicitHs(a.GetTotalNumHs())
        a.SetNoImplicit(True)
    for d in sorted(dummies, reverse=True):
        rw.RemoveAtom(d)
    kekule = rw.GetMol()
    Chem.SanitizeMol(kekule)
    Chem.Kekulize(kekule, clearAromaticFlags=True)
    new_index = {old: new for new, old in enumerate(group)}
    return _Parsed(kekule, tuple(new_index[p] for p in port_neighbours), pattern,
                   tuple(k for k, old in enumerate(order) if old not in dummies))


def _pattern(mol: Chem.Mol) -> tuple[Chem.Mol, list[int]]:
    """SMARTS for the group: element, aromaticity, H count, heavy degree and charge of each
    atom; a port is any heavy atom joined by a single, non-aromatic bond.  Also returns the
    atom of ``mol`` behind each pattern atom."""
    symbols = []
    for a in mol.GetAtoms():
        if a.GetAtomicNum() == 0:
            symbols.append("[!#1]")
            continue
        charge = a.GetFormalCharge()
        sign = f";{'+' if charge > 0 else '-'}{abs(charge)}" if charge else ";+0"
        symbols.append(f"[#{a.GetAtomicNum()};{'a' if a.GetIsAromatic() else 'A'};H{a.GetTotalNumHs()};"
                       f"D{a.GetDegree()}{sign}]")
    text = Chem.MolFragmentToSmiles(mol, atomsToUse=list(range(mol.GetNumAtoms())), atomSymbols=symbols,
                                    allBondsExplicit=True, canonical=False)
    order = list(mol.GetPropsAsDict(True, True)["_smilesAtomOutputOrder"])
    pattern = Chem.MolFromSmarts(text)
    if pattern is None:
        raise ValueError(f"cannot write a pattern for fragment {Chem.MolToSmiles(mol)!r}")
    return pattern, order
