"""One record of the compiled core: the structure it stands for, or why it is left out.

A record is bytes: the type index of each vertex, the upper triangle of the bond matrix
row by row, and one byte set when the structure has an alternating cycle (a second
Kekule form).  The :class:`Acceptor` builds the RDKit molecule (expanding contracted
groups), keeps one Kekule form and one placement of the groups per compound, and applies
the user's patterns, the hints' SMARTS and the plausibility filters (``rules/filters.tsv``).
It counts nothing: the stream tallies the reasons it returns.

>>> from rank.generate.atoms import AtomType, atom_states
>>> state = {s.id: s for s in atom_states()}
>>> kinds = [AtomType(state["O"], 1), AtomType(state["C"], 3)]
>>> Acceptor(complete=True)(kinds, bytes([0, 1, 1, 0]))  # vertices O, C; bond O-C; no cycle
Isomer(smiles='CO', mol=<rdkit.Chem.rdchem.Mol object at ...>)
>>> Acceptor(complete=True, forbid=[("[OH]", Chem.MolFromSmarts("[OH]"))])(kinds, bytes([0, 1, 1, 0]))
Rejection(why=<Why.PATTERN: 'pattern'>, key="--forbid '[OH]'")
"""

from __future__ import annotations

from collections.abc import Sequence
from enum import Enum
from functools import cache
from typing import NamedTuple

from rdkit import Chem

from ..standardize import quiet_rdkit
from ..tables import read_table
from .constraints import Limit
from .core import VertexType
from .fragment import FragmentType, is_canonical_placement
from .hints import Hint

__all__ = ["Acceptor", "Filter", "Isomer", "Rejection", "Why", "plausibility_filters"]

_BOND = {1: Chem.BondType.SINGLE, 2: Chem.BondType.DOUBLE, 3: Chem.BondType.TRIPLE}

_STAND_IN_ISOTOPE = 200
"""A contracted group drawn unexpanded is a saturated carbon labelled with this mass plus its type index."""


class Isomer(NamedTuple):
    """One generated structure: canonical SMILES and the sanitised RDKit molecule."""

    smiles: str
    mol: Chem.Mol


class Filter(NamedTuple):
    """A plausibility filter row of ``rules/filters.tsv``."""

    id: str
    pattern: Chem.Mol
    reason: str


@cache
def plausibility_filters() -> tuple[Filter, ...]:
    """The rows of ``rules/filters.tsv``, SMARTS compiled.

    Returns
    -------
    tuple of Filter
        In table order; the first that matches removes a structure.

    Raises
    ------
    ValueError
        A row's SMARTS does not parse.
    """
    rows = []
    for r in read_table("filters"):
        pattern = Chem.MolFromSmarts(r["smarts"])
        if pattern is None:
            raise ValueError(f"rules/filters.tsv row {r['id']}: bad SMARTS {r['smarts']!r}")
        rows.append(Filter(r["id"], pattern, r["reason"]))
    return tuple(rows)


class Why(Enum):
    """Why a record is left out, and so which tally of the stream counts it."""

    REPEAT = "repeat"
    """Another Kekule form, or another placement of the groups, of the same compound is kept."""
    INVALID = "invalid"
    """A valence RDKit does not accept: not counted."""
    PATTERN = "pattern"
    """Misses a ``--require`` or matches a ``--forbid`` (``IsomerStream.rejected``)."""
    HINT = "hint"
    """Misses a hint's SMARTS (``IsomerStream.hinted``)."""
    LIMIT = "limit"
    """Breaks a limit on atom counts (``IsomerStream.hinted``, under the limit's name)."""
    FILTER = "filter"
    """Matches a plausibility filter (``IsomerStream.removed``)."""


class Rejection(NamedTuple):
    """A record left out: why, and the option, hint name or filter id it is counted under."""

    why: Why
    key: str = ""


_REPEAT = Rejection(Why.REPEAT)
_INVALID = Rejection(Why.INVALID)


class Acceptor:
    """Decides on each record of the compiled core: the structure, or why it is left out.

    Parameters
    ----------
    complete : bool
        True: no plausibility filters (``isomers --all``).
    require, forbid : sequence of (str, Chem.Mol), default ()
        The user's patterns as given and compiled: every structure must match / must not match.
    hints : sequence of Hint, default ()
        Those with ``smarts`` must match every structure.
    limits : sequence of Limit, default ()
        Every structure must satisfy them (``Limit.holds``).
    """

    def __init__(self, complete: bool, require: Sequence[tuple[str, Chem.Mol]] = (),
                 forbid: Sequence[tuple[str, Chem.Mol]] = (), hints: Sequence[Hint] = (),
                 limits: Sequence[Limit] = ()) -> None:
        self.complete = complete
        self._require = [(Rejection(Why.PATTERN, f"--require {text!r}"), p) for text, p in require]
        self._forbid = [(Rejection(Why.PATTERN, f"--forbid {text!r}"), p) for text, p in forbid]
        self._hints = [(Rejection(Why.HINT, h.name), h.pattern()) for h in hints if h.smarts]
        self.limits = tuple(limits)

    def __call__(self, kinds: Sequence[VertexType], record: bytes,
                 limits: Sequence[Limit] | None = None) -> Isomer | Rejection:
        """The structure of one record, or why it is left out.

        Parameters
        ----------
        kinds : sequence of AtomType or FragmentType
            The run's types, indexed by the record's type bytes.
        record : bytes
            One record of ``Enumerator.next_batch``.
        limits : sequence of Limit, optional
            The limits to check (default: all of the acceptor's); the stream leaves out
            those the run's types already settle.

        Returns
        -------
        Isomer or Rejection

        Notes
        -----
        RDKit's log is quiet while a record is judged: some records carry a valence
        RDKit refuses, which is a reason (:attr:`Why.INVALID`), not news.
        """
        with quiet_rdkit():
            return self._judge(kinds, record, self.limits if limits is None else limits)

    def _judge(self, kinds: Sequence[VertexType], record: bytes, limits: Sequence[Limit]) -> Isomer | Rejection:
        """The decision of :meth:`__call__`, with RDKit's log already quiet."""
        mol, copies = _assemble(kinds, record, expand=True)
        if mol is None:
            return _INVALID
        smiles = None
        if copies:
            # the Kekule forms to merge are those of the contracted graph: the groups'
            # own rings are always written in one form, and their bonds out are single
            if record[-1] and not _is_kekule_representative(_assemble(kinds, record, expand=False)[0],
                                                            _assemble(kinds, record, False, False)[0]):
                return _REPEAT
            if not is_canonical_placement(mol, copies):
                return _REPEAT
        elif record[-1]:
            smiles = Chem.MolToSmiles(mol)
            if not _is_kekule_representative(mol, _assemble(kinds, record, aromatize=False)[0], smiles):
                return _REPEAT
        # the user's patterns and the hints first: they are the most selective
        for rejection, p in self._require:
            if not mol.HasSubstructMatch(p):
                return rejection
        for rejection, p in self._forbid:
            if mol.HasSubstructMatch(p):
                return rejection
        for rejection, pattern in self._hints:
            if not mol.HasSubstructMatch(pattern):
                return rejection
        for limit in limits:
            if not limit.holds(mol):
                return Rejection(Why.LIMIT, limit.name)
        if not self.complete:
            for f in plausibility_filters():
                if mol.HasSubstructMatch(f.pattern):
                    return Rejection(Why.FILTER, f.id)
        return Isomer(smiles or Chem.MolToSmiles(mol), mol)


def _assemble(kinds: Sequence[VertexType], record: bytes, expand: bool = True,
              aromatize: bool = True) -> tuple[Chem.Mol | None, list[tuple[FragmentType, frozenset[int]]]]:
    """An RDKit molecule from one record of the compiled core, and the atoms of each expanded group.

    ``expand=False`` draws each contracted group as a labelled saturated carbon.
    """
    n = (int((8 * (len(record) - 1) + 1) ** 0.5) - 1) // 2
    rw = Chem.RWMol()
    ports: list = []    # per vertex: its atom, or the list of an expanded group's open atoms
    copies = []
    for i in range(n):
        t = kinds[record[i]]
        if type(t) is FragmentType:
            if expand:
                atoms, open_atoms = t.fragment.add_to(rw)
                copies.append((t, atoms))
                ports.append(open_atoms)
                continue
            atom = Chem.Atom(6)
            atom.SetIsotope(_STAND_IN_ISOTOPE + record[i])
            atom.SetNumExplicitHs(4 - t.degree)
        else:
            atom = Chem.Atom(t.state.element)
            atom.SetFormalCharge(t.state.charge)
            atom.SetNumExplicitHs(t.hydrogens)
        atom.SetNoImplicit(True)
        ports.append(rw.AddAtom(atom))
    p = n
    for i in range(n):
        for j in range(i + 1, n):
            order = record[p]
            p += 1
            if order:
                a, b = ports[i], ports[j]
                rw.AddBond(a if type(a) is int else a.pop(), b if type(b) is int else b.pop(), _BOND[order])
    mol = rw.GetMol()
    ops = Chem.SANITIZE_ALL if aromatize else Chem.SANITIZE_ALL ^ Chem.SANITIZE_SETAROMATICITY
    try:
        Chem.SanitizeMol(mol, ops)
    except Chem.rdchem.MolSanitizeException:  # a valence RDKit does not accept
        return None, []
    return mol, copies


def _is_kekule_representative(mol: Chem.Mol, own: Chem.Mol, smiles: str | None = None) -> bool:
    """True when the Kekule form ``own`` of ``mol`` is the one RDKit reads back from its canonical SMILES."""
    if not any(a.GetIsAromatic() for a in mol.GetAtoms()):
        return True
    reference = Chem.MolFromSmiles(smiles or Chem.MolToSmiles(mol))
    Chem.Kekulize(reference, clearAromaticFlags=True)
    return Chem.MolToSmiles(own) == Chem.MolToSmiles(reference)
