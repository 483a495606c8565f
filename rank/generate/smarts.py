"""The user's SMARTS: compiled at the boundary, and read against atom types before any
structure is built.

A pattern prunes before structures are built only where the answer is already fixed by
the atom types: one-atom patterns over element number, total H count and charge, and
forbidden triple bonds between atoms given by element number (``[#6]#[#7]``); SMARTS
``C`` or ``c`` depends on aromaticity, which is known only for the finished structure.

>>> from rank.generate.atoms import AtomType, atom_states
>>> oxygen = next(s for s in atom_states() if s.id == "O")
>>> pattern = compile_smarts("[#8;H1]")
>>> atom_truth(pattern, 0, AtomType(oxygen, 1)), atom_truth(pattern, 0, AtomType(oxygen, 0))
(True, False)
"""

from __future__ import annotations

from rdkit import Chem

from ..errors import InputError
from ..standardize import quiet_rdkit
from .atoms import AtomType
from .fragment import FragmentType

__all__ = ["atom_truth", "compile_smarts", "is_triple_bond_pattern"]


def compile_smarts(text: str, what: str = "SMARTS") -> Chem.Mol:
    """Compile a user's SMARTS or raise InputError with a one-line reason.

    Parameters
    ----------
    text : str
        The SMARTS as given.
    what : str, default "SMARTS"
        How the error names the input, e.g. ``"--require"``.

    Returns
    -------
    Chem.Mol
        The query molecule.

    Raises
    ------
    InputError
        Empty, unreadable, or without atoms.
    """
    with quiet_rdkit():
        pattern = Chem.MolFromSmarts(text) if text and text.strip() else None
    if pattern is None or pattern.GetNumAtoms() == 0:
        raise InputError(f"{what} {text!r} is not valid SMARTS (example: 'C(=O)O' or '[OH]')")
    return pattern


def atom_truth(pattern: Chem.Mol, index: int, t: AtomType | FragmentType) -> bool | None:
    """Whether atom ``index`` of ``pattern`` matches every atom of type ``t``.

    Parameters
    ----------
    pattern : Chem.Mol
        A compiled SMARTS.
    index : int
        The pattern atom.
    t : AtomType or FragmentType
        A vertex type of the core.

    Returns
    -------
    bool or None
        True: every atom of the type matches; False: none does; None: it depends on the
        finished structure (always for a contracted group).
    """
    atom = pattern.GetAtomWithIdx(index)
    if isinstance(t, FragmentType) or not atom.HasQuery():
        return None
    lines = [ln for ln in atom.DescribeQuery().splitlines() if ln.strip()]
    return _evaluate(lines, t)


def is_triple_bond_pattern(pattern: Chem.Mol) -> bool:
    """True for a two-atom pattern with one plain triple bond (``[#6]#[#7]``).

    Parameters
    ----------
    pattern : Chem.Mol

    Returns
    -------
    bool
    """
    if pattern.GetNumAtoms() != 2 or pattern.GetNumBonds() != 1:
        return False
    text = pattern.GetBondWithIdx(0).DescribeQuery().split()
    return text[:2] == ["BondOrder", "3"] and "!=" not in text


def _leaf(line: str, t: AtomType) -> bool | None:
    words = line.split()
    if len(words) < 3:
        return None
    kind, value, negated = words[0], words[1], "!=" in words or "not" in words
    try:
        number = int(value)
    except ValueError:
        return None
    if kind == "AtomAtomicNum":
        result: bool | None = Chem.GetPeriodicTable().GetAtomicNumber(t.state.element) == number
    elif kind == "AtomType":
        # aliphatic or aromatic is decided only on the finished structure (RDKit
        # even calls some rings with a triple bond aromatic), so a matching
        # element leaves the answer open
        same = Chem.GetPeriodicTable().GetAtomicNumber(t.state.element) == number % 1000
        result = False if not same else None
    elif kind == "AtomHCount":
        result = t.hydrogens == number
    elif kind == "AtomFormalCharge":
        result = t.state.charge == number
    else:
        return None
    if result is None:
        return None
    return (not result) if negated else result


def _evaluate(lines: list[str], t: AtomType) -> bool | None:
    """Three-valued truth of an RDKit query description for an atom type."""

    def node(i: int, depth: int) -> tuple[bool | None, int]:
        text = lines[i].strip()
        if text in ("AtomAnd", "AtomOr"):
            values, j = [], i + 1
            while j < len(lines) and _indent(lines[j]) > depth:
                value, j = node(j, _indent(lines[j]))
                values.append(value)
            if text == "AtomAnd":
                if False in values:
                    return False, j
                return (None if None in values else True), j
            if True in values:
                return True, j
            return (None if None in values else False), j
        j = i + 1
        while j < len(lines) and _indent(lines[j]) > depth:
            j += 1
        return _leaf(text, t), j

    return node(0, _indent(lines[0]))[0] if lines else None


def _indent(line: str) -> int:
    return len(line) - len(line.lstrip())
