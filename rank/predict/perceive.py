"""Proton classes: the hydrogens of a structure grouped into the signals they give.

Hydrogens start in classes of topological symmetry: RDKit canonical ranking
without tie-breaking on the hydrogen-explicit molecule (atoms of equal rank are
related by a symmetry of the graph).  Three corrections follow where topology
is not chemistry:

* the two H of a ``=CH2`` differ when the other alkene atom carries two
  different groups: one H is cis, the other trans to each of them (and so do
  two equal groups on one alkene carbon, as the methyls of 2-methyl-2-butene);
* N-alkyl groups on an amide, thioamide, carbamate or urea nitrogen give
  separate signals (slow rotation about C(O)-N on the NMR time scale);
* CH2 hydrogens near a stereocentre, or in a ring whose two faces differ, are
  diastereotopic; such a class is marked so that a matcher may take it as one
  signal or as two.

Each class records its family (CH3, CH2, CH, alkene, aromatic,
heteroaromatic, aldehyde, formyl, alkyne, imine, OH, NH, SH, COOH or other),
its heavy atoms, and its coupling partners: the vicinal (three-bond) H, the
geminal partner of a split ``=CH2``, and the resolved four-bond couplings of
aromatic meta H, terminal alkynes and aldimines.

>>> from rdkit import Chem
>>> [(c.family, c.n_h, c.atoms) for c in proton_classes(Chem.MolFromSmiles("CCO"))]
[('CH3', 3, (0,)), ('CH2', 2, (1,)), ('OH', 1, (2,))]
>>> [c.n_h for c in proton_classes(Chem.MolFromSmiles("C=Cc1ccccc1")) if c.family == "alkene"]
[1, 1, 1]

References
----------
G. Schneider, D. Sayle, R. A. Sayle, "Get Your Atoms in Order - An Open-Source
Implementation of a Novel and Robust Molecular Canonicalization Algorithm",
J. Chem. Inf. Model. 2015, 55, 2111. doi:10.1021/acs.jcim.5b00543 (the ranking).
K. Mislow, M. Raban, "Stereoisomeric relationships of groups in molecules",
Top. Stereochem. 1967, 1, 1. doi:10.1002/9780470147108.ch1 (homotopic,
enantiotopic and diastereotopic groups).
"""

from __future__ import annotations

from collections import deque
from dataclasses import dataclass
from typing import NamedTuple

from rdkit import Chem

from ..errors import InputError

__all__ = [
    "CIS_RING_MAX", "CIS_TO_H", "DIASTEREOTOPIC_REACH", "EXCHANGEABLE", "FAMILIES", "NOT_ALKENE",
    "SP3_FAMILIES", "ClassDraft", "Graph", "Partner", "Perception", "ProtonClass", "Rotamer", "Site",
    "perceive", "proton_classes",
]

FAMILIES = (
    "CH3", "CH2", "CH", "alkene", "aromatic", "heteroaromatic", "aldehyde", "formyl",
    "alkyne", "imine", "OH", "NH", "SH", "COOH", "other",
)
"""Every family a class may carry."""

EXCHANGEABLE = frozenset({"OH", "NH", "SH", "COOH"})
"""Families of hydrogens on O, N or S, which exchange with labile deuterium of the solvent."""
SP3_FAMILIES = frozenset({"CH3", "CH2", "CH"})
"""Families of hydrogens on sp3 carbon (the additivity of ``rules/shift_alkyl.tsv``)."""

NOT_ALKENE = -2
"""``cis_to`` of a class whose hydrogens are not on a double-bond carbon."""
CIS_TO_H = -1
"""``cis_to`` when the group cis to the hydrogen is an H, a lone pair or nothing."""

DIASTEREOTOPIC_REACH = 2
"""A CH2 at most this many bonds from a stereocentre is marked diastereotopic."""

CIS_RING_MAX = 7
"""Largest ring in which an endocyclic double bond is taken as cis when the molecule gives no E/Z."""

_ORDER = {Chem.BondType.SINGLE: 1.0, Chem.BondType.DOUBLE: 2.0, Chem.BondType.TRIPLE: 3.0,
          Chem.BondType.AROMATIC: 1.5}
"""``Bond.GetBondTypeAsDouble`` of the common bond types, without the call."""
_STEREO_CIS = (Chem.BondStereo.STEREOCIS, Chem.BondStereo.STEREOZ)
_STEREO_SET = (
    Chem.BondStereo.STEREOCIS, Chem.BondStereo.STEREOTRANS,
    Chem.BondStereo.STEREOZ, Chem.BondStereo.STEREOE,
)


class Partner(NamedTuple):
    """A coupling partner of one hydrogen of a class.

    Attributes
    ----------
    cls : index of the partner class in the same list.
    n_h : how many H of that class one H of this class couples to.
    kind : coupling kind, a row of ``rules/coupling.tsv`` (``vic_sp3``, ``alkene_trans``, ``meta``, ...).
    """

    cls: int
    n_h: int
    kind: str


class Rotamer(NamedTuple):
    """Which branch of a slowly rotating amide nitrogen a class lies in."""

    side: int    # +1 or -1: the two branches (which is syn to O is not decided)
    depth: int   # bonds from the branch's first atom (0: the N-CHn itself)


@dataclass(frozen=True)
class ProtonClass:
    """Hydrogens expected to give one signal.

    Attributes
    ----------
    atoms : indices (in the input molecule) of the heavy atoms carrying these H, ascending.
    n_h : number of hydrogens in the class.
    family : one of :data:`FAMILIES`.
    exchangeable : OH, NH, SH or COOH hydrogen.
    partners : coupling partners of one hydrogen of the class.
    diastereotopic : a CH2 class whose two H on each carbon are diastereotopic; they
        may show as one signal or as two of ``n_h // 2`` H.
    cis_to : for H on a double-bond carbon, the heavy atom on the other carbon that is
        cis to the H, :data:`CIS_TO_H` when that is an H (or nothing), :data:`NOT_ALKENE`
        otherwise.  Where the molecule gives no E/Z, an acyclic bond is taken with its
        larger groups trans; in a ring, with the ring atoms cis.
    rotamer : the amide branch, for classes split by slow C(O)-N rotation; else None.
    """

    atoms: tuple[int, ...]
    n_h: int
    family: str
    exchangeable: bool
    partners: tuple[Partner, ...] = ()
    diastereotopic: bool = False
    cis_to: int = NOT_ALKENE
    rotamer: Rotamer | None = None


class Graph(NamedTuple):
    """Plain-Python view of the heavy-atom molecule, built once per structure.

    Lists are indexed by heavy atom (the atoms of ``mol``).

    Attributes
    ----------
    mol : the molecule with hydrogens implicit; the SMARTS tables are matched on it.
    index : heavy atom -> atom of the input molecule; None when they are the same.
    z : atomic numbers.
    nh : hydrogens on each atom.
    aromatic : RDKit's aromaticity flag of each atom.
    bonds : for each atom, neighbour -> bond order (1, 1.5, 2 or 3).
    rings : RDKit's smallest set of smallest rings, as atom tuples.
    ranks : canonical ranks without tie-breaking (equal ranks: atoms related by symmetry).
    elements : the atomic numbers present (a table row needing another is not matched).
    stereo : for each stereo-defined double bond (a, b), in both directions:
        (atom on a, atom on b, whether those two are cis).
    charge : formal charges.
    bond_types : (begin atom, end atom, RDKit bond type) of each bond.
    saturated : per atom, :meth:`sp3`.
    """

    mol: Chem.Mol
    index: tuple[int, ...] | None
    z: list[int]
    nh: list[int]
    aromatic: list[bool]
    bonds: list[dict[int, float]]
    rings: tuple[tuple[int, ...], ...]
    ranks: list[int]
    elements: frozenset[int]
    stereo: dict[tuple[int, int], tuple[int, int, bool]]
    charge: list[int]
    bond_types: list[tuple[int, int, Chem.BondType]]
    saturated: list[bool]

    def sp3(self, i: int) -> bool:
        """Carbon with four single bonds (counting H)."""
        return self.saturated[i]


class Site(NamedTuple):
    """The hydrogens of a proton class on one heavy atom.

    Attributes
    ----------
    atom : the heavy atom, as a :class:`Graph` index.
    n_h : how many of its hydrogens belong to the class.
    side : for one H of a split ``=CH2``, which of the two groups on the other carbon it is
        cis to (0: the larger, 1: the smaller); -1 otherwise.
    """

    atom: int
    n_h: int
    side: int


@dataclass
class ClassDraft:
    """A proton class as perception builds it, on :class:`Graph` indices.

    Perception starts from the symmetry classes and splits or marks them (alkene
    geometry, amide rotamers, diastereotopic CH2); :func:`perceive` then turns each
    draft into a :class:`ProtonClass` on input indices.  The shift predictor reads the
    drafts, since its tables are matched on the graph's heavy-atom molecule.

    Attributes
    ----------
    sites : the heavy atoms carrying the class's H, with their H counts.
    family : one of :data:`FAMILIES`.
    cis_to : as :attr:`ProtonClass.cis_to`, but a :class:`Graph` index.
    rotamer : as :attr:`ProtonClass.rotamer`.
    diastereotopic : as :attr:`ProtonClass.diastereotopic`.
    """

    sites: list[Site]
    family: str
    cis_to: int = NOT_ALKENE
    rotamer: Rotamer | None = None
    diastereotopic: bool = False


class Perception(NamedTuple):
    """Proton classes with the graph they were found on.

    ``classes[k]`` and ``drafts[k]`` are the same class, on input and on graph indices;
    the drafts are not changed once :func:`perceive` has returned them.
    """

    graph: Graph
    classes: tuple[ProtonClass, ...]
    drafts: tuple[ClassDraft, ...]


def proton_classes(mol: Chem.Mol) -> list[ProtonClass]:
    """The proton classes of a molecule.

    Parameters
    ----------
    mol : rdkit.Chem.Mol
        A sanitised molecule, hydrogens implicit or explicit.

    Returns
    -------
    list of ProtonClass
        Ordered by their first atom; ``atoms`` refer to the heavy atoms of ``mol``.

    Raises
    ------
    InputError
        When ``mol`` is None.
    """
    return list(perceive(mol).classes)


def perceive(mol: Chem.Mol) -> Perception:
    """Proton classes plus the graph data the shift prediction reuses.

    Parameters
    ----------
    mol : rdkit.Chem.Mol
        A sanitised molecule, hydrogens implicit or explicit.

    Returns
    -------
    Perception
        The classes of :func:`proton_classes`, their drafts and the heavy-atom graph.

    Raises
    ------
    InputError
        When ``mol`` is None.
    """
    if mol is None:
        raise InputError("no molecule given (an unreadable SMILES gives None); check the structure")
    graph = _graph(mol)
    drafts = _symmetry_classes(graph)
    drafts = _split_alkene_ch2(graph, drafts)
    drafts = _split_alkene_twins(graph, drafts)
    drafts = _split_amide_rotamers(graph, drafts)
    _mark_diastereotopic(graph, drafts)
    drafts.sort(key=lambda d: (min(s.atom for s in d.sites), max(s.side for s in d.sites)))
    partners = _partners(graph, drafts)
    to_input = graph.index
    classes = []
    for d, p in zip(drafts, partners):
        atoms = tuple(sorted({s.atom for s in d.sites}))
        shown = atoms if to_input is None else tuple(to_input[a] for a in atoms)
        cis_to = d.cis_to if (to_input is None or d.cis_to < 0) else to_input[d.cis_to]
        classes.append(ProtonClass(
            atoms=shown,
            n_h=sum(s.n_h for s in d.sites),
            family=d.family,
            exchangeable=d.family in EXCHANGEABLE,
            partners=p,
            diastereotopic=d.diastereotopic,
            cis_to=cis_to,
            rotamer=d.rotamer,
        ))
    return Perception(graph, tuple(classes), tuple(drafts))


# ------------------------------------------------------------------ graph ----


def _graph(mol: Chem.Mol) -> Graph:
    if mol.GetNumAtoms() != mol.GetNumHeavyAtoms():
        index = tuple(a.GetIdx() for a in mol.GetAtoms() if a.GetAtomicNum() != 1)
        heavy = Chem.RemoveAllHs(mol)
    else:
        index, heavy = None, mol
    atoms = list(map(heavy.GetAtomWithIdx, range(heavy.GetNumAtoms())))   # faster than GetAtoms()
    z = [a.GetAtomicNum() for a in atoms]
    nh = [a.GetTotalNumHs() for a in atoms]
    aromatic = [a.GetIsAromatic() for a in atoms]
    charge = [a.GetFormalCharge() for a in atoms]
    bonds: list[dict[int, float]] = [{} for _ in z]
    stereo_bonds, bond_types = [], []
    for k, b in enumerate(map(heavy.GetBondWithIdx, range(heavy.GetNumBonds()))):
        i, j, kind = b.GetBeginAtomIdx(), b.GetEndAtomIdx(), b.GetBondType()
        order = _ORDER.get(kind) or b.GetBondTypeAsDouble()
        bonds[i][j] = order
        bonds[j][i] = order
        bond_types.append((i, j, kind))
        if order == 2.0 and b.GetStereo() in _STEREO_SET:
            stereo_bonds.append(k)
    found = Chem.CanonicalRankAtoms(Chem.AddHs(heavy), breakTies=False, includeChirality=False)
    ranks = [found[i] for i in range(len(z))]   # indexing RDKit's vector is faster than iterating it
    rings = tuple(heavy.GetRingInfo().AtomRings())
    saturated = [zi == 6 and not ar and all(o == 1.0 for o in b.values()) for zi, ar, b in zip(z, aromatic, bonds)]
    return Graph(heavy, index, z, nh, aromatic, bonds, rings, ranks, frozenset(z),
                 _double_bond_stereo(heavy, stereo_bonds), charge, bond_types, saturated)


def _double_bond_stereo(mol: Chem.Mol, bond_ids: list[int]) -> dict[tuple[int, int], tuple[int, int, bool]]:
    """Cis/trans of stereo-defined double bonds as (atom on begin, atom on end, cis)."""
    if not bond_ids:
        return {}
    work = Chem.Mol(mol)
    Chem.SetBondStereoFromDirections(work)
    found = {}
    for idx in bond_ids:
        b = work.GetBondWithIdx(idx)
        if b.GetStereo() not in (Chem.BondStereo.STEREOCIS, Chem.BondStereo.STEREOTRANS):
            continue  # no bond directions to read (e.g. E/Z from coordinates): taken as unspecified
        atoms = list(b.GetStereoAtoms())
        if len(atoms) != 2:
            continue
        i, j = b.GetBeginAtomIdx(), b.GetEndAtomIdx()
        cis = b.GetStereo() in _STEREO_CIS
        found[(i, j)] = (atoms[0], atoms[1], cis)
        found[(j, i)] = (atoms[1], atoms[0], cis)
    return found


def _family(g: Graph, i: int) -> str:
    zi = g.z[i]
    if zi == 6:
        if g.aromatic[i]:
            for ring in g.rings:
                if i in ring and all(g.z[a] == 6 and g.aromatic[a] for a in ring):
                    return "aromatic"
            return "heteroaromatic"
        double = [j for j, o in g.bonds[i].items() if o == 2.0]
        if any(o == 3.0 for o in g.bonds[i].values()):
            return "alkyne"
        if double:
            partner = g.z[double[0]]
            if partner in (8, 16):
                others = [g.z[k] for k in g.bonds[i] if k != double[0]]
                return "formyl" if any(x in (7, 8, 16) for x in others) else "aldehyde"
            if partner == 7:
                return "imine"
            return "alkene"
        return ("CH", "CH2", "CH3", "CH3")[min(g.nh[i], 4) - 1]
    if zi == 8:
        for j in g.bonds[i]:
            if g.z[j] == 6 and any(g.bonds[j][k] == 2.0 and g.z[k] in (8, 16) for k in g.bonds[j]):
                return "COOH"
        return "OH"
    if zi == 7:
        return "NH"
    if zi == 16:
        return "SH"
    return "other"


def _symmetry_classes(g: Graph) -> list[ClassDraft]:
    groups: dict[int, list[int]] = {}
    for i, n in enumerate(g.nh):
        if n:
            groups.setdefault(g.ranks[i], []).append(i)
    return [ClassDraft([Site(a, g.nh[a], -1) for a in atoms], _family(g, atoms[0]))
            for atoms in groups.values()]


# ------------------------------------------------------- alkene geometry ----


def _double_partner(g: Graph, a: int) -> int | None:
    for j, o in g.bonds[a].items():
        if o == 2.0:
            return j
    return None


def _branch_size(g: Graph, start: int, exclude: int) -> int:
    seen, todo = {start, exclude}, [start]
    while todo:
        x = todo.pop()
        for y in g.bonds[x]:
            if y not in seen:
                seen.add(y)
                todo.append(y)
    return len(seen) - 1


def _sides(g: Graph, a: int, b: int) -> list[tuple[int, int]]:
    """The two places on b (seen from a), as (sort key, atom); H or lone pair is (-1, CIS_TO_H).

    Larger groups first: a heavier branch, then a higher canonical rank.
    """
    subs = [j for j in g.bonds[b] if j != a]
    if any(g.bonds[b][j] >= 2.0 for j in subs):
        return []  # cumulated (allene, ketene): no cis/trans on this side
    keyed = sorted(((_branch_size(g, j, b) * 10_000 + g.ranks[j], j) for j in subs), reverse=True)
    while len(keyed) < 2:
        keyed.append((-1, CIS_TO_H))
    return keyed


def _cis_to_single_h(g: Graph, a: int, b: int) -> int:
    """For the one H on alkene atom a: what on b is cis to it."""
    sides = _sides(g, a, b)
    if not sides:
        return CIS_TO_H
    own = [j for j in g.bonds[a] if j != b]
    if not own:
        return sides[0][1]
    ra = own[0]
    known = g.stereo.get((a, b))
    if known is not None:
        sa, sb, cis = known
        ra_cis_sb = cis if sa == ra else not cis
        # the H is cis to whatever on b is trans to ra
        if ra_cis_sb:
            return next((atom for _, atom in sides if atom != sb), CIS_TO_H)
        return sb
    ring = next((r for r in g.rings if a in r and b in r and ra in r and len(r) <= CIS_RING_MAX), None)
    if ring is not None:
        # ring atoms are cis across an endocyclic double bond of a small ring
        ring_side = next((atom for _, atom in sides if atom in ring), None)
        if ring_side is not None:
            return next((atom for _, atom in sides if atom != ring_side), CIS_TO_H)
    # unspecified: larger groups trans, so the H is cis to the larger group on b
    return sides[0][1]


def _split_alkene_ch2(g: Graph, drafts: list[ClassDraft]) -> list[ClassDraft]:
    out = []
    for d in drafts:
        if d.family not in ("alkene", "imine"):
            out.append(d)
            continue
        first = d.sites[0].atom
        b = _double_partner(g, first)
        if g.nh[first] == 1 or b is None:
            d.cis_to = _cis_to_single_h(g, first, b) if b is not None else CIS_TO_H
            out.append(d)
            continue
        sides = _sides(g, first, b)
        if len(sides) == 2 and sides[0][0] != sides[1][0]:
            for k in (0, 1):
                out.append(ClassDraft([Site(s.atom, 1, k) for s in d.sites], d.family, sides[k][1]))
        else:
            d.cis_to = sides[0][1] if sides else CIS_TO_H
            out.append(d)
    return out


# -------------------------------------------------------- amide rotamers ----


def _amide_branches(g: Graph) -> list[tuple[int, int, int]]:
    """(N, first atom of branch +1, first atom of branch -1) for N whose two non-acyl groups are equivalent."""
    found = []
    for n, zn in enumerate(g.z):
        if zn != 7 or g.aromatic[n] or len(g.bonds[n]) != 3 or g.nh[n]:
            continue
        acyl = [c for c in g.bonds[n] if g.z[c] == 6 and not g.aromatic[c]
                and any(o == 2.0 and g.z[k] in (8, 16) for k, o in g.bonds[c].items())]
        if not acyl:
            continue
        rest = [x for x in g.bonds[n] if x not in acyl]
        if len(rest) == 2 and g.ranks[rest[0]] == g.ranks[rest[1]]:
            found.append((n, rest[0], rest[1]))
    return found


def _distances(g: Graph, start: int, blocked: int) -> dict[int, int]:
    dist, todo = {start: 0}, deque([start])
    while todo:
        x = todo.popleft()
        for y in g.bonds[x]:
            if y != blocked and y not in dist:
                dist[y] = dist[x] + 1
                todo.append(y)
    return dist


def _split_branches(g: Graph, drafts: list[ClassDraft], centre: int, first: int, second: int,
                    rotamer: bool) -> list[ClassDraft]:
    """Split classes whose atoms lie in both of two equivalent branches off ``centre``."""
    da, db = _distances(g, first, centre), _distances(g, second, centre)
    out = []
    for d in drafts:
        parts: dict[int, list[Site]] = {}
        for s in d.sites:
            a, b = da.get(s.atom, 10**6), db.get(s.atom, 10**6)
            parts.setdefault((a < b) - (a > b), []).append(s)
        if 1 not in parts or -1 not in parts:
            out.append(d)
            continue
        for side, sites in parts.items():
            tag = d.rotamer
            if side and rotamer:
                tag = Rotamer(side, min(da[s.atom] if side == 1 else db[s.atom] for s in sites))
            out.append(ClassDraft(sites, d.family, d.cis_to, tag))
    return out


def _split_amide_rotamers(g: Graph, drafts: list[ClassDraft]) -> list[ClassDraft]:
    for n, first, second in _amide_branches(g):
        drafts = _split_branches(g, drafts, n, first, second, rotamer=True)
    return drafts


def _alkene_twin_branches(g: Graph) -> list[tuple[int, int, int]]:
    """(b, R1, R2) for a double-bond atom b carrying two equivalent groups while its partner's two sides differ."""
    found = []
    for b, zb in enumerate(g.z):
        if zb != 6 or g.aromatic[b]:
            continue
        double = [a for a, o in g.bonds[b].items() if o == 2.0]
        rest = [x for x, o in g.bonds[b].items() if o == 1.0]
        if len(double) != 1 or len(rest) != 2 or g.ranks[rest[0]] != g.ranks[rest[1]]:
            continue
        sides = _sides(g, b, double[0])
        if len(sides) == 2 and sides[0][0] != sides[1][0]:
            found.append((b, rest[0], rest[1]))
    return found


def _split_alkene_twins(g: Graph, drafts: list[ClassDraft]) -> list[ClassDraft]:
    for b, first, second in _alkene_twin_branches(g):
        drafts = _split_branches(g, drafts, b, first, second, rotamer=False)
    return drafts


# --------------------------------------------------------- diastereotopic ----


def _stereocentres(g: Graph) -> list[int]:
    found = []
    for i, zi in enumerate(g.z):
        nbrs = list(g.bonds[i])
        if zi == 6 and g.saturated[i] and g.nh[i] <= 1:
            if len({g.ranks[j] for j in nbrs}) == len(nbrs) == 4 - g.nh[i]:
                found.append(i)
        elif zi == 16 and len(nbrs) == 3 and g.nh[i] == 0:
            oxo = [j for j in nbrs if g.bonds[i][j] == 2.0 and g.z[j] == 8]
            rest = [j for j in nbrs if j not in oxo]
            if len(oxo) == 1 and len(rest) == 2 and g.ranks[rest[0]] != g.ranks[rest[1]]:
                found.append(i)  # sulfoxide sulfur
    return found


def _faced_rings(g: Graph) -> list[tuple[int, ...]]:
    """Saturated-atom rings whose two faces differ: some sp3 ring atom has two unlike exocyclic groups."""
    found = []
    for ring in g.rings:
        for a in ring:
            if not g.saturated[a]:
                continue
            exo = [j for j in g.bonds[a] if j not in ring]
            if (len(exo) == 1 and g.nh[a] == 1) or (len(exo) == 2 and g.ranks[exo[0]] != g.ranks[exo[1]]):
                found.append(ring)
                break
    return found


def _mark_diastereotopic(g: Graph, drafts: list[ClassDraft]) -> None:
    ch2 = [d for d in drafts if d.family == "CH2"]
    if not ch2:
        return
    near: set[int] = set()
    for c in _stereocentres(g):
        dist = _distances(g, c, -1)
        near.update(a for a, k in dist.items() if 0 < k <= DIASTEREOTOPIC_REACH)
    for ring in _faced_rings(g):
        near.update(ring)
    for d in ch2:
        if any(s.atom in near for s in d.sites):
            d.diastereotopic = True


# -------------------------------------------------------------- couplings ----


def _amide_n(g: Graph, n: int) -> bool:
    return any(g.z[c] == 6 and any(o == 2.0 and g.z[k] in (8, 16) for k, o in g.bonds[c].items())
               for c in g.bonds[n])


def _bond_kind(g: Graph, fam: list[str], a: int, b: int) -> str | None:
    """Kind of the three-bond coupling between H on bonded atoms a and b (None: not counted)."""
    order = g.bonds[a][b]
    fa, fb = fam[a], fam[b]
    if fa in EXCHANGEABLE or fb in EXCHANGEABLE:
        if fa in EXCHANGEABLE and fb in EXCHANGEABLE:
            return None
        x = a if fa in EXCHANGEABLE else b
        if g.z[x] == 7:
            return "vic_nh_amide" if _amide_n(g, x) else "vic_nh"
        if g.z[x] == 8:
            return "vic_oh"
        if g.z[x] == 16:
            return "vic_sh"
        return None
    if order == 1.5:
        ring = next((r for r in g.rings if a in r and b in r), ())
        if len(ring) == 5:
            return "ortho_5ring"
        if any(g.z[x] == 7 and g.aromatic[x] for x in (*g.bonds[a], *g.bonds[b]) if x in ring):
            return "ortho_aza"
        return "ortho"
    if order != 1.0:
        return None
    carbonyl = ("aldehyde", "formyl")
    if fa in carbonyl or fb in carbonyl:
        other = fb if fa in carbonyl else fa
        if other in SP3_FAMILIES:
            return "vic_aldehyde"
        if other in ("alkene", "imine"):
            return "vic_aldehyde_sp2"
        return None
    sp2 = ("alkene", "imine", "aromatic", "heteroaromatic")
    if fa in sp2 and fb in sp2:
        return "vic_sp2_sp2"
    if fa in sp2 or fb in sp2:
        return "vic_sp2_sp3"
    return "vic_sp3"


def _partners(g: Graph, drafts: list[ClassDraft]) -> list[tuple[Partner, ...]]:
    fam = ["" for _ in g.z]
    on_atom: dict[int, list[tuple[int, Site]]] = {}
    for k, d in enumerate(drafts):
        for s in d.sites:
            fam[s.atom] = d.family
            on_atom.setdefault(s.atom, []).append((k, s))
    result = []
    for i, d in enumerate(drafts):
        a = d.sites[0].atom
        links: list[tuple[int, int, str | None]] = [
            (j, s.n_h, "gem_sp2") for j, s in on_atom[a] if j != i   # the other H of a split =CH2
        ]
        for b in g.bonds[a]:
            for j, s in on_atom.get(b, ()):
                kind = _alkene_kind(g, drafts, i, j, a) if g.bonds[a][b] == 2.0 else _bond_kind(g, fam, a, b)
                links.append((j, s.n_h, kind))
        links.extend(_long_range(g, fam, on_atom, a))
        found: dict[tuple[int, str], int] = {}
        for j, n, kind in links:
            if kind is not None and j != i and n:
                found[(j, kind)] = found.get((j, kind), 0) + n
        result.append(tuple(Partner(j, n, kind) for (j, kind), n in sorted(found.items())))
    return result


def _alkene_kind(g: Graph, drafts: list[ClassDraft], i: int, j: int, a: int) -> str | None:
    """alkene_cis or alkene_trans for H of class i on a and H of class j on b across a=b."""
    if drafts[i].family not in ("alkene", "imine") or drafts[j].family not in ("alkene", "imine"):
        return None
    if g.nh[a] == 1:
        cis = drafts[j].cis_to == CIS_TO_H   # the H on b is cis to an H on a: the only one is ours
    else:
        cis = drafts[i].cis_to == CIS_TO_H
    return "alkene_cis" if cis else "alkene_trans"


def _long_range(g: Graph, fam: list[str], on_atom: dict, a: int):
    """Resolved four-bond couplings: aromatic meta, H-C≡C-C-H, H-C=N-C-H, allylic H-C=C-C-H."""
    if g.aromatic[a] and fam[a] in ("aromatic", "heteroaromatic"):
        for ring in g.rings:
            if len(ring) == 6 and a in ring and all(g.aromatic[x] for x in ring):
                p = ring.index(a)
                for q in (p - 2, p + 2):
                    c = ring[q % 6]
                    for j, s in on_atom.get(c, ()):
                        yield j, s.n_h, "meta"
        return
    for b, order in g.bonds[a].items():
        kind = _four_bond_kind(g, fam, a, b, order)
        if kind is not None:
            for c, o2 in g.bonds[b].items():
                if c != a and o2 == 1.0 and fam[c] in SP3_FAMILIES:
                    for j, s in on_atom.get(c, ()):
                        yield j, s.n_h, kind
        elif order == 1.0 and fam[a] in SP3_FAMILIES:
            for c, o2 in g.bonds[b].items():
                kind = None if c == a else _four_bond_kind(g, fam, c, b, o2)
                if kind is not None:
                    for j, s in on_atom.get(c, ()):
                        yield j, s.n_h, kind


def _four_bond_kind(g: Graph, fam: list[str], a: int, b: int, order: float) -> str | None:
    """The four-bond coupling kind from H on the multiply bonded atom a across a=b (or a≡b) to H on an
    sp3 atom bonded to b, or None."""
    if order == 3.0 and fam[a] == "alkyne":
        return "alkyne_4j"
    if order == 2.0 and fam[a] == "imine" and g.z[b] == 7:
        return "imine_4j"
    if order == 2.0 and fam[a] == "alkene" and g.z[b] == 6:
        return "allylic"
    return None
