"""Atom-centred environment codes, and the shift corrections fitted to them on real spectra.

An H-bearing atom's environment is described sphere by sphere, as in the HOSE
codes of W. Bremser (Anal. Chim. Acta 1978, 103, 355,
doi:10.1016/S0003-2670(01)83100-7): the atom itself, then the atoms one, two and
three bonds away, each written as the bond that reaches it, its element,
aromaticity, H count and ring membership, sorted within the sphere.  A code of
radius r holds spheres 0..r.

The correction for a class is the mean residual (observed − additive prediction)
of the largest-radius code seen on enough compounds of the fit part of the open
data (``rules/environment.tsv``, fitted by ``benchmarks/fit_environment.py``),
falling back to smaller radii when a code is rare.

>>> from rdkit import Chem
>>> environment_codes(Chem.MolFromSmiles("CCO"), 1, 2)
('C2', 'C2|-C3,-O1', 'C2|-C3,-O1|')
"""

from __future__ import annotations

from collections.abc import Sequence
from functools import cache
from typing import NamedTuple

from rdkit import Chem

from ..tables import read_table

__all__ = ["MAX_RADIUS", "Correction", "EnvironmentGraph", "environment_codes", "find_correction"]

MAX_RADIUS = 3
_BONDS = {Chem.BondType.SINGLE: "-", Chem.BondType.DOUBLE: "=", Chem.BondType.TRIPLE: "#",
          Chem.BondType.AROMATIC: ":"}


class Correction(NamedTuple):
    """A fitted shift correction: the code it belongs to, its radius, compounds, mean and spread (ppm)."""

    code: str
    radius: int
    compounds: int
    mean: float
    sd: float


def _describe(atom: Chem.Atom) -> str:
    return _code(atom.GetSymbol(), atom.GetIsAromatic(), atom.GetTotalNumHs(), atom.IsInRing(),
                 atom.GetFormalCharge())


def _code(symbol: str, aromatic: bool, nh: int, in_ring: bool, charge: int) -> str:
    symbol = symbol.lower() if aromatic else symbol
    ring = "r" if in_ring else ""
    sign = "+" if charge > 0 else "-" if charge < 0 else ""
    return f"{symbol}{nh}{ring}{sign}"


def environment_codes(mol: Chem.Mol, atom: int, radius: int = MAX_RADIUS) -> tuple[str, ...]:
    """The codes of radius 0..``radius`` of one heavy atom, smallest first.

    Parameters
    ----------
    mol : an RDKit molecule with implicit hydrogens.
    atom : the heavy atom's index.
    radius : the largest sphere described.

    Returns
    -------
    tuple of str, one code per radius; a code extends the one before it.
    """
    return EnvironmentGraph(mol).codes(atom, radius)


class EnvironmentGraph:
    """One molecule's atoms described once, for the environment codes of many of its atoms.

    ``EnvironmentGraph(mol).codes(atom, radius)`` equals ``environment_codes(mol, atom, radius)``;
    the molecule must not change while the graph is in use.
    """

    def __init__(self, mol: Chem.Mol) -> None:
        atoms = list(mol.GetAtoms())
        self._described = [_describe(a) for a in atoms]
        self._bonds = [[(b.GetOtherAtomIdx(a.GetIdx()), _BONDS.get(b.GetBondType(), "~")) for b in a.GetBonds()]
                       for a in atoms]
        self._rings = mol.GetRingInfo().AtomRings()

    @classmethod
    def from_atoms(cls, symbols: Sequence[str], aromatic: Sequence[bool], nh: Sequence[int],
                   charge: Sequence[int], bonded: Sequence[Sequence[tuple[int, Chem.BondType]]],
                   rings: Sequence[tuple[int, ...]]) -> EnvironmentGraph:
        """The graph of a molecule whose atoms were already read: per atom its element symbol,
        aromaticity, hydrogens, formal charge and (neighbour, bond type) in RDKit's bond order; the
        molecule's atom rings (``RingInfo.AtomRings``)."""
        graph = cls.__new__(cls)
        in_ring = {a for ring in rings for a in ring}
        graph._described = [_code(*atom, i in in_ring, c)
                            for i, (atom, c) in enumerate(zip(zip(symbols, aromatic, nh), charge))]
        graph._bonds = [[(other, _BONDS.get(kind, "~")) for other, kind in bonds] for bonds in bonded]
        graph._rings = rings
        return graph

    def codes(self, atom: int, radius: int = MAX_RADIUS) -> tuple[str, ...]:
        """The codes of radius 0..``radius`` of one heavy atom, smallest first."""
        described, bonds = self._described, self._bonds
        ring_size = min((len(r) for r in self._rings if atom in r), default=0)
        codes = [f"{described[atom]}@{ring_size}" if ring_size else described[atom]]
        seen, frontier = {atom}, [atom]
        for _ in range(radius):
            sphere, reached = [], []
            for a in frontier:
                for other, bond in bonds[a]:
                    if other in seen:
                        continue
                    sphere.append(bond + described[other])
                    reached.append(other)
            seen.update(reached)
            frontier = sorted(set(reached))
            codes.append(codes[-1] + "|" + ",".join(sorted(sphere)))
        return tuple(codes)


@cache
def _corrections(name: str) -> dict[str, Correction]:
    table = {}
    for r in read_table(name):
        table[r["code"]] = Correction(r["code"], int(r["radius"]), int(r["compounds"]), float(r["mean"]),
                                      float(r["sd"]))
    return table


def find_correction(codes: tuple[str, ...], table: str = "environment") -> Correction | None:
    """The fitted correction of the largest-radius code found in ``rules/<table>.tsv``, or None.

    ``table``: ``environment`` (1H, the default) or ``carbon_environment`` (13C).
    """
    corrections = _corrections(table)
    for code in reversed(codes):
        found = corrections.get(code)
        if found is not None:
            return found
    return None
