"""Predicted 13C shifts: each a sum of named terms read from the ``rules/carbon_*.tsv`` tables.

One signal per symmetry class of carbon (topological symmetry), with its DEPT type:

* sp3 carbon: Grant-Paul increments of the sp3 carbons one to four bonds away (reached through
  sp3 carbons), steric corrections for branching, increments of the other substituents
  (heteroatoms, C=O, CN, aryl, vinyl, ...) at alpha, beta and gamma, a ring correction and
  corrections for crowded carbons (``carbon_sp3.tsv``, ``carbon_sp3_substituent.tsv``);
* alkene carbon: 123.3 + alkyl position increments (alpha, beta, gamma on the carbon's side,
  alpha', beta', gamma' on its partner's) + substituent increments (``carbon_alkene.tsv``);
  alkyne carbon likewise from 71.9 (``carbon_alkyne.tsv``);
* aromatic carbon of a six-membered ring: 128.5 + ipso, ortho, meta and para increments of the
  substituents, aza increments of pyridine-type ring N and fused-ring increments
  (``carbon_benzene.tsv``); of a five-membered ring: the parent heterocycle's value at the position
  (``carbon_heteroaromatic.tsv``) + the same substituent increments;
* carbonyl, carboxyl (acids, esters, amides, carbamates, ...), nitrile, imine and other carbons:
  a typical value by class (``carbon_functional.tsv``).

Each table value in use is the handbook value of the table plus a delta refitted on the fit part of
the open data (``carbon_refit.tsv``, ridge regression towards the handbook values by
``benchmarks/fit_carbon.py``); a term shows the value in use, and its ``rows`` name the refit row.
Then, by default, an environment correction fitted on the same data (``carbon_environment.tsv``,
``rank.predict.environment``) is added as one more named term.  σ is the family's residual spread on
the fit part (``carbon_sigma.tsv``), with or without the environment correction.

The solvent is checked but no solvent correction is applied (13C shifts move little between the
common solvents; the fitted corrections absorb the average).

>>> [(s.dept, s.family) for s in predict_carbon_smiles("CCOC(C)=O")]
[('C', 'carboxyl'), ('CH2', 'sp3'), ('CH3', 'sp3'), ('CH3', 'sp3')]
>>> [t.name for t in predict_carbon_smiles("CCOC(C)=O")[1].terms]  # doctest: +ELLIPSIS
['base', 'α C', 'α OC(=O)R', 'CH2 carbon', 'environment correction (...)']

References are given in the header of each table.
"""

from __future__ import annotations

from collections import defaultdict
from dataclasses import dataclass
from functools import cache, cached_property
from typing import NamedTuple

from rdkit import Chem

from ..errors import InputError
from ..spectra import DEFAULT_SOLVENT, find_solvent
from ..tables import read_table
from .environment import EnvironmentGraph, find_correction
from .screen import Features, Screen
from .shifts import Term

__all__ = ["CARBON_FAMILIES", "CARBON_RADIUS", "AdditiveFeatures", "CarbonPredictor", "CarbonSignal",
           "additive_features", "carbon_table", "predict_carbon_smiles"]

CARBON_FAMILIES = ("carbonyl", "carboxyl", "nitrile", "aromatic", "heteroaromatic", "alkene", "alkyne", "sp3")
CARBON_RADIUS = 4
"""Spheres of the environment codes used for the 13C correction."""
ENVIRONMENT_TABLE = "carbon_environment"
_DEPT = ("C", "CH", "CH2", "CH3")
_HETERO = frozenset({7, 8, 9, 16, 17, 35, 53})
_MAX_MATCHES = 100_000


@dataclass(frozen=True)
class CarbonSignal:
    """One predicted 13C signal.

    Attributes
    ----------
    shift : ppm against TMS; the sum of ``terms``.
    n_h : H on each carbon: 0 C, 1 CH, 2 CH2, 3 CH3 (the DEPT type).
    atoms : the symmetry-equivalent carbons of this signal (input atom indices).
    sigma : uncertainty of ``shift`` (ppm, one standard deviation).
    terms : the arithmetic: base value first, then each named increment.
    family : carbonyl, carboxyl (acids and their derivatives), nitrile, aromatic, heteroaromatic,
        alkene, alkyne or sp3.
    rows : the table rows the shift was computed from, as ``table:row id``.
    """

    shift: float
    n_h: int
    atoms: tuple[int, ...]
    sigma: float
    terms: tuple[Term, ...]
    family: str
    rows: tuple[str, ...] = ()

    @property
    def dept(self) -> str:
        """The DEPT type: C, CH, CH2 or CH3."""
        return _DEPT[min(self.n_h, 3)]

    @property
    def explanation(self) -> str:
        """The arithmetic as text, e.g. ``base −2.30 + α C 9.10 + α OC(=O)R 51.00 = 57.80``."""
        first, *rest = self.terms
        parts = [f"{first.name} {'−' if first.value < 0 else ''}{abs(first.value):.2f}"]
        for t in rest:
            parts.append(f"{'+' if t.value >= 0 else '−'} {t.name} {abs(t.value):.2f}")
        return " ".join(parts) + f" = {self.shift:.2f}"

    def to_json(self) -> dict:
        """The signal as a JSON-ready dictionary."""
        return {
            "shift": self.shift,
            "n_h": self.n_h,
            "dept": self.dept,
            "atoms": list(self.atoms),
            "sigma": self.sigma,
            "family": self.family,
            "explanation": self.explanation,
            "terms": [[t.name, t.value] for t in self.terms],
            "rows": list(self.rows),
        }


# ---------------------------------------------------------------- tables ----


class _Row(NamedTuple):
    """A table row: its fields as text, its compiled SMARTS (None without one) and key ``table:id``;
    ``elements`` the atomic numbers the SMARTS needs (a molecule without one of them cannot match it)."""

    fields: dict[str, str]
    query: Chem.Mol | None
    key: str
    elements: frozenset[int] = frozenset()

    def num(self, column: str) -> float | None:
        found = _NUMBERS.get((id(self), column))
        if found is None or found[0] is not self:
            text = self.fields.get(column, "")
            found = _NUMBERS[(id(self), column)] = (self, float(text) if text.strip() else None)
        return found[1]

    @property
    def label(self) -> str:
        return self.fields["label"]


_NUMBERS: dict[tuple[int, str], tuple[_Row, float | None]] = {}
"""Table cells as numbers by (row id, column), parsed once; with the row itself, so that its id is not reused."""


def _rows(table: str, id_column: str = "id") -> list[_Row]:
    rows = []
    for fields in read_table(table):
        smarts = fields.get("smarts", "")
        query = Chem.MolFromSmarts(smarts) if smarts else None
        if smarts and query is None:
            raise ValueError(f"rules/{table}.tsv: row {fields[id_column]!r}: SMARTS {smarts!r} does not parse")
        elements = frozenset() if query is None else frozenset(
            a.GetAtomicNum() for a in query.GetAtoms() if a.GetAtomicNum() > 1)
        rows.append(_Row(fields, query, f"{table}:{fields[id_column]}", elements))
    return rows


class _Tables(NamedTuple):
    sp3: dict[str, list[_Row]]             # by kind: base, position, steric, ring, site
    sp3_substituent: list[_Row]
    benzene: dict[str, list[_Row]]         # by kind: base, aza, fused, site, increment
    heteroaromatic: list[_Row]
    alkene: dict[str, list[_Row]]          # by kind: base, position, pair, ring, substituent
    alkyne: dict[str, list[_Row]]
    functional: list[_Row]
    functional_substituent: list[_Row]
    sigma: dict[str, tuple[float, float]]
    screen: Screen                         # over every row's SMARTS


def _by_kind(rows: list[_Row], column: str = "kind") -> dict[str, list[_Row]]:
    kinds: dict[str, list[_Row]] = defaultdict(list)
    for r in rows:
        kinds[r.fields[column]].append(r)
    return dict(kinds)


@cache
def _tables() -> _Tables:
    sigma = {r["family"]: (float(r["sigma"]), float(r["sigma_environment"])) for r in read_table("carbon_sigma")}
    tables = {
        "sp3": _by_kind(_rows("carbon_sp3", "key")),
        "sp3_substituent": _rows("carbon_sp3_substituent"),
        "benzene": _by_kind(_rows("carbon_benzene")),
        "heteroaromatic": _rows("carbon_heteroaromatic"),
        "alkene": _by_kind(_rows("carbon_alkene")),
        "alkyne": _by_kind(_rows("carbon_alkyne")),
        "functional": _rows("carbon_functional"),
        "functional_substituent": _rows("carbon_functional_substituent"),
    }
    rows = [row for table in tables.values()
            for row in (table if isinstance(table, list) else [r for kind in table.values() for r in kind])]
    return _Tables(**tables, sigma=sigma, screen=Screen([row.query for row in rows if row.query is not None]))


# ---------------------------------------------------------- one molecule ----


class _Arithmetic:
    """Collects the terms of one shift, merging repeats of a name (``α C ×2``).

    Each value is a table value plus its refit delta (``carbon_refit.tsv``); ``features`` counts each
    (row, column) used and ``handbook`` sums the table values alone, for the fit.
    """

    def __init__(self, name: str, row: _Row, column: str) -> None:
        self.values: dict[str, float] = {}
        self.counts: dict[str, int] = defaultdict(int)
        self.features: dict[str, float] = defaultdict(float)
        self.rows: list[str] = []
        self.handbook = 0.0
        self.add(name, row, column)

    def add(self, name: str, row: _Row, column: str, times: float = 1.0, variant: str = "",
            repeat: int = 1) -> None:
        """Add ``times`` the value of ``row`` in ``column``, ``repeat`` times over (as that many calls);
        ``variant`` (e.g. ``@5``, on a five-membered ring) gives the value its own refit delta."""
        if repeat < 1:
            return
        entry = _ADDED.get((id(row), column, variant))
        if entry is None or entry[0] is not row:
            entry = _added(row, column, variant)
            _ADDED[(id(row), column, variant)] = entry
        _, value, feature, refitted, keys = entry
        if value is None:
            return
        values, features, handbook, total = self.values, self.features, self.handbook, self.values.get(name, 0.0)
        for _ in range(repeat):
            handbook += value * times
            features[feature] += times
            total += refitted * times
        self.handbook, values[name] = handbook, total
        self.counts[name] += repeat
        rows = self.rows
        for key in keys:
            if key not in rows:
                rows.append(key)

    def terms(self) -> tuple[Term, ...]:
        out = []
        for k, (name, value) in enumerate(self.values.items()):
            n = self.counts[name]
            if value or k == 0:
                out.append(Term(name if n == 1 else f"{name} ×{n}", round(value, 2)))
        return tuple(out)


_ADDED: dict[tuple[int, str, str], tuple] = {}
"""What :meth:`_Arithmetic.add` takes from a (row, column, variant), worked out once: the row itself (so
that its id is never reused while cached), the table value, the feature, value plus refit delta, the row keys."""


def _added(row: _Row, column: str, variant: str) -> tuple:
    value = row.num(column)
    if value is None:
        return row, None, "", 0.0, ()
    feature = f"{row.key}:{column}{variant}"
    delta = _refit().get(feature, 0.0)
    keys = (row.key, f"carbon_refit:{feature}") if delta else (row.key,)
    return row, value, feature, value + delta, keys


@cache
def _refit() -> dict[str, float]:
    """Refit deltas by feature ``table:row:column`` (``rules/carbon_refit.tsv``)."""
    return {r["feature"]: float(r["delta"]) for r in read_table("carbon_refit")}


class _Molecule:
    """The heavy-atom graph of a molecule with the lookups the shift rules need.

    Atoms and bonds are read from RDKit once, by index (faster than its ``GetAtoms``/``GetBonds``
    sequences); each atom's bonds keep RDKit's order.  Table rows are screened
    (``rank.predict.screen``) before any substructure search.
    """

    def __init__(self, mol: Chem.Mol) -> None:
        self.mol = mol
        atoms = list(map(mol.GetAtomWithIdx, range(mol.GetNumAtoms())))
        self.z = [a.GetAtomicNum() for a in atoms]
        self.aromatic = [a.GetIsAromatic() for a in atoms]
        self.nh = [a.GetTotalNumHs() for a in atoms]
        self.charge = [a.GetFormalCharge() for a in atoms]
        self.bond_types = []
        self.bonded: list[list[tuple[int, Chem.BondType]]] = [[] for _ in atoms]   # (neighbour, bond type)
        for b in map(mol.GetBondWithIdx, range(mol.GetNumBonds())):
            i, j, kind = b.GetBeginAtomIdx(), b.GetEndAtomIdx(), b.GetBondType()
            self.bond_types.append((i, j, kind))
            self.bonded[i].append((j, kind))
            self.bonded[j].append((i, kind))
        self.heavy = [[n for n, _ in bonds if self.z[n] > 1] for bonds in self.bonded]
        self.sp3c = [z == 6 and not aromatic and all(kind == Chem.BondType.SINGLE for _, kind in bonds)
                     for z, aromatic, bonds in zip(self.z, self.aromatic, self.bonded)]
        self.rings = [tuple(r) for r in mol.GetRingInfo().AtomRings()]
        self.elements = frozenset(self.z)
        self._classified: dict[str, dict[tuple[int, int], _Row]] = {}
        self._starts: dict[str, set[int]] = {}

    @cached_property
    def features(self) -> Features:
        """The table screen's requirements the molecule meets."""
        return _tables().screen.features(self.mol, self.z, self.aromatic, self.nh, self.charge, self.bond_types,
                                         self.rings)

    def _may_match(self, row: _Row) -> bool:
        if row.query is None or not row.elements <= self.elements:
            return False
        return _tables().screen.passes(row.query, self.features.present)

    @cached_property
    def sp3_degree(self) -> list[int]:
        """Per atom, its sp3 carbon neighbours, counted from 1 to 4."""
        return [min(4, max(1, sum(1 for n in heavy if self.sp3c[n]))) for heavy in self.heavy]

    @cached_property
    def aromatic_rings(self) -> list[tuple[int, ...]]:
        return [r for r in self.rings if all(self.aromatic[a] for a in r)]

    def smallest_ring(self, atoms: tuple[int, ...]) -> int:
        return min((len(r) for r in self.rings if all(a in r for a in atoms)), default=0)

    def classify(self, name: str, rows: list[_Row], pairs: bool = True) -> dict[tuple[int, int], _Row]:
        """(atom 1, atom 2) of the first row matching each bond; with ``pairs`` False, (atom 1, -1) of the
        first row matching each atom."""
        found = self._classified.get(name)
        if found is None:
            found = {}
            screen, features, elements = _tables().screen, self.features, self.elements
            needs, present = screen.needs, features.present
            for r in rows:
                if r.query is None or not r.elements <= elements:
                    continue
                need = needs[id(r.query)]
                if present & need != need:
                    continue
                matches = screen.matches(r.query, features)
                if matches is None:
                    matches = self.mol.GetSubstructMatches(r.query, uniquify=False, maxMatches=_MAX_MATCHES)
                for match in matches:
                    found.setdefault((match[0], match[1] if pairs else -1), r)
            self._classified[name] = found
        return found

    def first_match(self, name: str, rows: list[_Row], atom: int) -> _Row | None:
        """The first row whose SMARTS matches with ``atom`` as its atom 1."""
        return self.classify(name, rows, pairs=False).get((atom, -1))

    def starts(self, row: _Row) -> set[int]:
        """The first atoms of the row's matches (``GetSubstructMatches`` with its default uniquify)."""
        found = self._starts.get(row.key)
        if found is None:
            found = {match[0] for match in self.mol.GetSubstructMatches(row.query)} if self._may_match(row) else set()
            self._starts[row.key] = found
        return found

    def multiple_partner(self, atom: int) -> tuple[str, int | None]:
        """How the carbon is bonded: ("aromatic"|"functional"|"alkyne"|"alkene"|"sp3", partner)."""
        z, bonds = self.z, self.bonded[atom]
        if self.aromatic[atom]:
            exocyclic = any(kind == Chem.BondType.DOUBLE and z[other] in (8, 16) for other, kind in bonds)
            return ("functional" if exocyclic else "aromatic"), None
        doubles = [other for other, kind in bonds if kind == Chem.BondType.DOUBLE]
        triples = [other for other, kind in bonds if kind == Chem.BondType.TRIPLE]
        if any(z[o] != 6 for o in doubles + triples) or len(doubles) > 1:
            return "functional", None
        if triples:
            return "alkyne", triples[0]
        if doubles:
            partner = doubles[0]
            cumulated = sum(1 for _, kind in self.bonded[partner] if kind == Chem.BondType.DOUBLE) > 1
            return ("functional" if cumulated else "alkene"), partner
        if z[atom] == 6 and all(kind == Chem.BondType.SINGLE for _, kind in bonds):
            return "sp3", None
        return "functional", None


# ------------------------------------------------------------ the rules ----


@cache
def _sp3_rows() -> tuple[dict[int, _Row], dict[str, _Row], dict[str, _Row], dict[int, _Row]]:
    """The rows of ``carbon_sp3`` by key: position (by bonds), steric, hydrogens, ring (by size)."""
    t = _tables().sp3
    return ({int(r.fields["key"]): r for r in t["position"]}, {r.fields["key"]: r for r in t["steric"]},
            {r.fields["key"]: r for r in t.get("hydrogens", [])},
            {int(r.fields["key"].removeprefix("r")): r for r in t["ring"]})


def _sp3(m: _Molecule, atom: int) -> tuple[_Arithmetic, str]:
    t = _tables().sp3
    base = t["base"][0]
    arith = _Arithmetic("base", base, "value")
    position, steric, hydrogens, rings = _sp3_rows()
    dist = {atom: 0}
    frontier = [atom]
    for d in range(1, max(position) + 1):
        reached = []
        for a in frontier:
            for n in m.heavy[a]:
                if n not in dist and m.sp3c[n]:
                    dist[n] = d
                    reached.append(n)
        arith.add(position[d].label, position[d], "value", repeat=len(reached))
        frontier = reached
    # steric corrections: sp3 carbon neighbours of the carbon and of each attached sp3 carbon
    degree = m.sp3_degree
    for n in m.heavy[atom]:
        if m.sp3c[n]:
            row = steric.get(f"{degree[atom]}-{degree[n]}")
            if row is not None:
                arith.add(row.label, row, "value")
    # substituents other than sp3 carbon: alpha, beta, gamma by the sp3 carbon carrying them
    classes = m.classify("sp3_substituent", _tables().sp3_substituent)
    placed: dict[int, tuple[int, int]] = {}
    for a, d in dist.items():
        if d > 2:
            continue
        for x in m.heavy[a]:
            if not m.sp3c[x] and (x not in placed or placed[x][0] > d):
                placed[x] = (d, a)
    n_h = m.nh[atom]
    for x, (d, a) in placed.items():
        row = classes.get((a, x))
        if row is None:
            continue
        iso = len(m.heavy[a]) - 1 >= 2
        column = ("alpha", "beta", "gamma")[d]
        if d < 2:
            column = f"{column}_iso" if iso and row.num(f"{column}_iso") is not None else f"{column}_n"
        variant = f"@{_DEPT[min(3, n_h)]}" if d == 0 else ""
        arith.add(f"{'αβγ'[d]} {row.label}", row, column, variant=variant)
    row = hydrogens.get(f"h{n_h}")
    if row is not None:
        arith.add(row.label, row, "value")
    ring = m.smallest_ring((atom,))
    if ring >= 3:
        row = rings[min(ring, max(rings))]
        arith.add(row.label, row, "value")
    hetero = sum(1 for n in m.heavy[atom] if m.z[n] in _HETERO)
    if hetero >= 2:
        for row in t["site"]:
            if atom in m.starts(row):
                count = hetero - 1 if row.fields["key"] == "gem_hetero" else 1
                arith.add(row.label, row, "value", count)
                break
    return arith, "sp3"


def _chain(m: _Molecule, start: int, exclude: set[int], depth: int) -> list[int]:
    """Counts of heavy atoms 1..depth bonds beyond ``start`` (not passing through ``exclude``)."""
    seen = set(exclude) | {start}
    frontier, counts = [start], []
    for _ in range(depth):
        reached = []
        for a in frontier:
            for n in m.heavy[a]:
                if n not in seen:
                    seen.add(n)
                    reached.append(n)
        counts.append(len(reached))
        frontier = reached
    return counts


def _unsaturated(m: _Molecule, atom: int, partner: int, kind: str) -> tuple[_Arithmetic, str]:
    """Alkene or alkyne carbon: base + position and substituent increments from both ends."""
    t = _tables().alkene if kind == "alkene" else _tables().alkyne
    base = t["base"][0]
    arith = _Arithmetic("base", base, "z1")
    position = {r.fields["id"]: r for r in t["position"]}
    alpha, beta, gamma, beta_hetero = (position.get(k) for k in ("alpha", "beta", "gamma", "beta_hetero"))
    classes = m.classify(f"{kind}_substituent", t["substituent"])
    substituents = {}
    for side, (here, other) in enumerate(((atom, partner), (partner, atom))):
        column, prime = ("z1", "") if side == 0 else ("z2", "′")
        subs = [x for x in m.heavy[here] if x != other]
        substituents[side] = subs
        for x in subs:
            if m.sp3c[x]:
                arith.add(f"α{prime} C", alpha, column)
                n_beta, n_gamma = _chain(m, x, {atom, partner}, 2)
                n_hetero = sum(1 for y in m.heavy[x] if y not in (atom, partner)
                               and m.z[y] in _HETERO)
                if beta_hetero is not None:
                    arith.add(f"β{prime} heteroatom", beta_hetero, column, repeat=n_hetero)
                    n_beta -= n_hetero
                arith.add(f"β{prime}", beta, column, repeat=n_beta)
                arith.add(f"γ{prime}", gamma, column, repeat=n_gamma)
            else:
                row = classes.get((here, x))
                if row is not None:
                    arith.add(f"{row.label}{' (on partner)' if side else ''}", row, column)
    if kind == "alkene":
        pairs = {r.fields["id"]: r for r in t["pair"]}
        if len(substituents[0]) == 2:
            arith.add(pairs["gem"].label, pairs["gem"], "z1")
        if len(substituents[1]) == 2:
            arith.add(pairs["gem_partner"].label, pairs["gem_partner"], "z1")
        ring = m.smallest_ring((atom, partner))
        if ring >= 4:
            rows = {int(r.fields["id"].removeprefix("ring")): r for r in t["ring"]}
            row = rows[min(ring, max(rows))]
            arith.add(row.label, row, "z1")
    return arith, kind


def _aromatic(m: _Molecule, atom: int) -> tuple[_Arithmetic, str]:
    t = _tables().benzene
    rings = [r for r in m.aromatic_rings if atom in r]
    six = [r for r in rings if len(r) == 6]

    def heteroatoms(ring: tuple[int, ...]) -> int:
        return sum(1 for a in ring if m.z[a] != 6)

    if six:
        home = max(six, key=heteroatoms)
        base = t["base"][0]
        arith = _Arithmetic("base", base, "ipso")
    elif rings:
        home = min(rings, key=len)
        row = m.first_match("heteroaromatic", _tables().heteroaromatic, atom)
        if row is None:
            base = t["base"][0]
            arith = _Arithmetic("base", base, "ipso")
        else:
            arith = _Arithmetic(f"base {row.label}", row, "shift")
    else:   # aromatic atom outside the ring perception (should not happen): benzene value
        base = t["base"][0]
        return _Arithmetic("base", base, "ipso"), "aromatic"
    family = "heteroaromatic" if heteroatoms(home) else "aromatic"
    n = len(home)
    index = home.index(atom)
    columns = ("ipso", "ortho", "meta", "para")
    classes = m.classify("benzene_increment", t.get("increment", []))
    fused = {r.fields["id"]: r for r in t.get("fused", [])}
    aza = t["aza"][0]
    ring_hetero = {r.fields["id"]: r for r in t.get("ring_hetero", [])}
    for j, a in enumerate(home):
        d = min(abs(j - index), n - abs(j - index))
        if d >= len(columns):   # rings of eight or more atoms: no increment beyond para
            continue
        column = columns[d]
        if d and len(home) == 6 and m.z[a] != 6:
            hetero = _ring_heteroatom(m, a)
            row = aza if hetero == "aza" else ring_hetero.get(hetero)
            if row is not None:
                arith.add(f"{row.label} {column}", row, column)
        for x in m.heavy[a]:
            if x in home:
                continue
            bond = m.mol.GetBondBetweenAtoms(a, x)
            if bond.GetIsAromatic():
                if len(home) != 6:
                    if d and "fused_on5" in fused:
                        arith.add(f"{fused['fused_on5'].label} {column}", fused["fused_on5"], column)
                    continue
                other = [r for r in m.aromatic_rings if a in r and x in r and r != home]
                size = len(other[0]) if other else 6
                if size == 6:
                    row = fused["fused6"]
                elif m.z[x] != 6:
                    row = fused["fused5_hetero"]
                else:
                    row = fused["fused5_carbon"]
                arith.add(f"{row.label} {column}", row, column)
                continue
            row = classes.get((a, x))
            if row is not None:
                arith.add(f"{row.label} {column}", row, column, variant="" if len(home) == 6 else "@5")
    crowd = t.get("crowd", [])
    if crowd and len(home) == 6 and _substituted(m, atom, home):
        pairs = sum(1 for n in m.heavy[atom] if n in home and _substituted(m, n, home))
        if pairs:
            arith.add(crowd[0].label, crowd[0], "ipso", pairs)
    if len(home) == 6:
        for row in t.get("site", []):
            if atom in m.starts(row):
                arith.add(row.label, row, "ipso")
                break
    return arith, family


def _substituted(m: _Molecule, atom: int, ring: tuple[int, ...]) -> bool:
    """A ring atom carrying a substituent (a heavy neighbour outside the ring, not by an aromatic bond)."""
    return any(n not in ring and not m.mol.GetBondBetweenAtoms(atom, n).GetIsAromatic() for n in m.heavy[atom])


def _ring_heteroatom(m: _Molecule, atom: int) -> str:
    """The kind of a ring heteroatom of a six-membered aromatic ring: aza (pyridine type), aza_h (N-H or
    N-R), aza_plus (N+), oxa, thia or "" (other)."""
    a = m.mol.GetAtomWithIdx(atom)
    number = a.GetAtomicNum()
    if number == 7:
        if a.GetFormalCharge() > 0:
            return "aza_plus"
        return "aza" if a.GetDegree() == 2 and a.GetTotalNumHs() == 0 else "aza_h"
    return {8: "oxa", 16: "thia"}.get(number, "")


def _functional(m: _Molecule, atom: int) -> tuple[_Arithmetic, str]:
    row = m.first_match("functional", _tables().functional, atom)
    if row is None:
        row = _tables().functional[-1]
    arith = _Arithmetic(f"base {row.label}", row, "shift")
    if row.fields["family"] in ("carbonyl", "carboxyl"):
        classes = m.classify("functional_substituent", _tables().functional_substituent)
        for x in m.heavy[atom]:
            found = classes.get((atom, x))
            if found is not None:
                arith.add(found.label, found, "value")
    return arith, row.fields["family"]


def _arithmetic(m: _Molecule, atom: int) -> tuple[_Arithmetic, str]:
    how, partner = m.multiple_partner(atom)
    if how == "sp3":
        return _sp3(m, atom)
    if how == "aromatic":
        return _aromatic(m, atom)
    if how in ("alkene", "alkyne"):
        return _unsaturated(m, atom, partner, how)
    return _functional(m, atom)


# -------------------------------------------------------------- predictor ----


class CarbonPredictor:
    """Predict the 13C signals of structures.

    Parameters
    ----------
    solvent : str
        A solvent of ``rules/solvents.tsv`` by id or alias; checked, not used for a correction.
    environment : bool
        Add the environment correction fitted on real spectra (``rules/carbon_environment.tsv``)
        as one more named term; default True.

    Raises
    ------
    InputError
        Unknown solvent.

    Examples
    --------
    >>> [(s.dept, s.family) for s in CarbonPredictor().predict(Chem.MolFromSmiles("CC#N"))]
    [('C', 'nitrile'), ('CH3', 'sp3')]
    """

    def __init__(self, solvent: str = DEFAULT_SOLVENT, environment: bool = True) -> None:
        self.solvent = solvent
        self.environment = environment
        self._solvent = find_solvent(solvent)

    @property
    def solvent_id(self) -> str:
        """The solvent's id in ``rules/solvents.tsv``."""
        return self._solvent.id

    def predict(self, mol: Chem.Mol) -> list[CarbonSignal]:
        """One signal per symmetry class of carbon, highest shift first (ties by first atom).

        Parameters
        ----------
        mol : rdkit.Chem.Mol
            A sanitised molecule; explicit hydrogens are allowed (atom indices refer to ``mol``).
        """
        heavy, index = _heavy(mol)
        sigma = _tables().sigma
        signals = []
        m = _Molecule(heavy)
        graph = None
        if self.environment:
            symbols = [_symbol(z) if z else heavy.GetAtomWithIdx(i).GetSymbol() for i, z in enumerate(m.z)]
            graph = EnvironmentGraph.from_atoms(symbols, m.aromatic, m.nh, m.charge, m.bonded, m.rings)
        for atoms, arith, family in _carbon_classes(m):
            first = atoms[0]
            terms = arith.terms()
            rows = list(arith.rows)
            corrected = False
            if graph is not None:
                found = find_correction(graph.codes(first, CARBON_RADIUS), ENVIRONMENT_TABLE)
                if found is not None:
                    corrected = True
                    value = round(found.mean, 2)
                    if value:
                        plural = "" if found.compounds == 1 else "s"
                        terms = (*terms, Term(f"environment correction ({found.compounds} compound{plural}, "
                                              f"sd {found.sd:.1f})", value))
                        rows.append(f"{ENVIRONMENT_TABLE}:{found.code}")
            shift = round(sum(t.value for t in terms), 2)
            spread = sigma.get(family, (5.0, 5.0))[1 if corrected else 0]
            n_h = m.nh[first]
            signals.append(CarbonSignal(shift=shift, n_h=n_h, atoms=tuple(index[a] for a in atoms), sigma=spread,
                                        terms=terms, family=family, rows=tuple(rows)))
        signals.sort(key=lambda s: (-s.shift, s.atoms[0]))
        return signals


def carbon_table(signals: list[CarbonSignal]) -> str:
    """The 13C signals as a text table: shift, type, carbons, family, σ and the arithmetic."""
    lines = [f"{'δC/ppm':>7}  {'type':<4}  {'nC':>3}  {'family':<14}  {'σ':>4}  arithmetic"]
    for s in signals:
        lines.append(f"{s.shift:7.1f}  {s.dept:<4}  {len(s.atoms):>3}  {s.family:<14}  {s.sigma:4.1f}  {s.explanation}")
    return "\n".join(lines) + "\n"


def _carbon_classes(m: _Molecule) -> list[tuple[list[int], _Arithmetic, str]]:
    """(atoms, arithmetic, family) per symmetry class of carbon of a molecule without explicit H.

    Topologically equivalent carbons on the two sides of an amide, thioamide, carbamate or urea
    nitrogen are two classes: the C(=O)-N bond rotates slowly on the NMR time scale at room
    temperature, so the groups cis and trans to O give separate lines (N,N-dimethylformamide 36.5
    and 31.4 ppm, from memory; as ``rank.predict.perceive`` splits their H).
    """
    ranks = _class_ranks(m)
    classes: dict[int, list[int]] = defaultdict(list)
    for a, z in enumerate(m.z):
        if z == 6:
            classes[ranks[a]].append(a)
    return [(atoms, *_arithmetic(m, atoms[0])) for atoms in classes.values()]


def _class_ranks(m: _Molecule) -> list[int]:
    """Canonical ranks without tie-breaking, with one of the two equivalent groups on each amide-type N
    carrying an isotope mark, so that the ranks tell the sides apart (the same classes whichever group
    is marked)."""
    heavy = m.mol
    found = Chem.CanonicalRankAtoms(heavy, breakTies=False)
    ranks = [found[i] for i in range(len(m.z))]   # indexing RDKit's vector is faster than iterating it
    marked = None
    for n, z in enumerate(m.z):
        if z != 7 or m.aromatic[n] or len(m.bonded[n]) != 3 or m.nh[n]:
            continue
        neighbours = [x for x, _ in m.bonded[n]]
        acyl = [x for x in neighbours if m.z[x] == 6 and not m.aromatic[x]
                and any(kind == Chem.BondType.DOUBLE and m.z[o] in (8, 16) for o, kind in m.bonded[x])]
        rest = [x for x in neighbours if x not in acyl]
        if acyl and len(rest) == 2 and ranks[rest[0]] == ranks[rest[1]]:
            marked = marked or Chem.RWMol(heavy)
            marked.GetAtomWithIdx(rest[0]).SetIsotope(1)
    if marked is None:
        return ranks
    found = Chem.CanonicalRankAtoms(marked, breakTies=False)
    return [found[i] for i in range(len(m.z))]


class AdditiveFeatures(NamedTuple):
    """The additive arithmetic of one carbon class, for fitting: ``handbook`` is the shift from the table
    values alone, ``features`` how often each ``table:row:column`` value was used."""

    atoms: tuple[int, ...]
    family: str
    n_h: int
    handbook: float
    features: dict[str, float]


def additive_features(mol: Chem.Mol) -> list[AdditiveFeatures]:
    """The table values behind each carbon class's additive shift (no explicit H; used by the fit)."""
    return [AdditiveFeatures(tuple(atoms), family, mol.GetAtomWithIdx(atoms[0]).GetTotalNumHs(), arith.handbook,
                             dict(arith.features))
            for atoms, arith, family in _carbon_classes(_Molecule(mol))]


@cache
def _symbol(z: int) -> str:
    """The element symbol of an atomic number (``Atom.GetSymbol`` of a plain atom)."""
    return Chem.GetPeriodicTable().GetElementSymbol(z)


def _heavy(mol: Chem.Mol) -> tuple[Chem.Mol, list[int]]:
    """The molecule without explicit H atoms, and each remaining atom's index in ``mol``."""
    if mol.GetNumAtoms() == mol.GetNumHeavyAtoms():   # no H atoms (nor dummies): nothing to set aside
        return mol, list(range(mol.GetNumAtoms()))
    kept = [a.GetIdx() for a in mol.GetAtoms() if a.GetAtomicNum() != 1]
    if len(kept) == mol.GetNumAtoms():
        return mol, kept
    heavy = Chem.RemoveHs(mol)
    if heavy.GetNumAtoms() != len(kept):
        heavy = Chem.RemoveHs(mol, implicitOnly=False, updateExplicitCount=True, sanitize=True)
    if heavy.GetNumAtoms() != len(kept):
        raise InputError("could not set aside the explicit hydrogens of the structure")
    return heavy, kept


def predict_carbon_smiles(smiles: str, solvent: str = DEFAULT_SOLVENT, environment: bool = True) -> list[CarbonSignal]:
    """The predicted 13C signals of a SMILES; InputError on invalid SMILES or unknown solvent."""
    from .proton import parse_smiles

    return CarbonPredictor(solvent, environment=environment).predict(parse_smiles(smiles))
