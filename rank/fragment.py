"""Fragments: a group of atoms the isomer generator places as one vertex.

A hint such as "an ethyl group" or "a para-disubstituted benzene ring" names a
group every structure must contain.  Rather than build every structure and test
it, the generator contracts one copy of the group to a single vertex whose
degree is the number of the group's open single bonds (its ports), enumerates
the much smaller graphs, and expands the vertex again.

A structure holding more copies of the group than were contracted is reached
once per non-equivalent choice of copies, so it is kept only when the expanded
copies are the canonical ones: those whose atoms carry the smallest canonical
ranks (RDKit canonical ranking without tie-breaking).  This is canonical augmentation in the sense of
B. D. McKay, "Isomorph-free exhaustive generation", J. Algorithms 1998, 26, 306,
doi:10.1006/jagm.1997.0898.  Every copy that matches the group's pattern can be
contracted, so the structure with the canonical copy contracted is always
generated: nothing is lost.

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
from typing import NamedTuple

from rdkit import Chem


class _Parsed(NamedTuple):
    kekule: Chem.Mol                 # the group without its ports, Kekule form, H explicit
    port_atoms: tuple[int, ...]      # the atom of ``kekule`` behind each port
    pattern: Chem.Mol                # SMARTS: the group, each port a heavy atom by a single bond
    group_atoms: tuple[int, ...]     # the pattern's atoms that belong to the group


@dataclass(frozen=True)
class Fragment:
    """A group of atoms written as SMILES with ``*`` ports (e.g. ``CC*`` for ethyl)."""

    smiles: str

    @property
    def ports(self) -> int:
        return len(_parse(self.smiles).port_atoms)

    def formula_counts(self) -> Counter:
        """Element counts of the group, hydrogen included."""
        mol = _parse(self.smiles).kekule
        counts = Counter(a.GetSymbol() for a in mol.GetAtoms())
        counts["H"] = sum(a.GetTotalNumHs() for a in mol.GetAtoms())
        return counts

    def carbons(self, hydrogens: int, double_bond: bool = False) -> int:
        """Carbon atoms of the group with ``hydrogens`` H (and a double bond, if asked)."""
        return sum(
            1 for a in _parse(self.smiles).kekule.GetAtoms()
            if a.GetSymbol() == "C" and a.GetTotalNumHs() == hydrogens
            and (not double_bond or any(b.GetBondType() == Chem.BondType.DOUBLE for b in a.GetBonds()))
        )

    def add_to(self, rw: Chem.RWMol) -> tuple[frozenset[int], list[int]]:
        """Add the group's atoms and bonds to ``rw``; returns (its atom indices, the port atoms)."""
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
        """The atom sets of every copy of the group in a sanitised molecule."""
        parsed = _parse(self.smiles)
        return list({frozenset(m[i] for i in parsed.group_atoms)
                     for m in mol.GetSubstructMatches(parsed.pattern, uniquify=False, maxMatches=100_000)})

    def smarts(self) -> str:
        """The group's pattern as SMARTS (what a structure must contain)."""
        return Chem.MolToSmarts(_parse(self.smiles).pattern)


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
        return self.fragment.ports

    def sort_key(self) -> tuple:
        return (self.degree, 99, 0, "~" + self.fragment.smiles, 0)


def are_canonical_copies(mol: Chem.Mol, family: tuple[Fragment, ...], placed: list[frozenset[int]],
                         ranks: list[int]) -> bool:
    """True when the ``placed`` copies of a group are those with the smallest canonical ranks.

    Each copy's key is the sorted tuple of its atoms' ranks
    (``Chem.CanonicalRankAtoms(mol, breakTies=False)``); the k placed copies must
    be copies of one of the ``family`` fragments and hold the k smallest keys.
    Copies related by a symmetry of the molecule share their key, so any of them
    is accepted.
    """
    found = {copy for variant in family for copy in variant.copies(mol)}
    if any(atoms not in found for atoms in placed):
        return False
    keys = sorted(tuple(sorted(ranks[a] for a in copy)) for copy in found)
    return sorted(tuple(sorted(ranks[a] for a in atoms)) for atoms in placed) == keys[:len(placed)]


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
