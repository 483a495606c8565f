"""Predicted 1H shifts: each a sum of named terms read from the tables in ``rules/``.

* H on sp3 carbon: Shoolery-type additivity, a base value for CH3, CH2 or CH
  plus alpha increments of the substituents on the carbon and beta increments
  of those on its sp3 neighbours, with ring, acetal and multiple-substitution
  corrections (``shift_alkyl.tsv``, ``shift_alkyl_site.tsv``);
* alkene H: 5.25 + Z_gem + Z_cis + Z_trans (Pascual, Meier and Simon;
  ``shift_alkene.tsv``);
* benzene H: 7.36 + ortho, meta and para increments (``shift_benzene.tsv``);
  heteroaromatic H: the parent ring's value at that position plus the same
  increments by ring distance (``shift_heteroaromatic.tsv``);
* aldehyde, formyl, alkyne and imine H, and exchangeable H with a typical value
  and range (``shift_special.tsv``);
* then a solvent correction (``solvent_shift.tsv``).

The uncertainty σ of a shift is the family's σ (``sigma.tsv``) combined in
quadrature with the ``sigma_extra`` of each row used (once per row) and of the
solvent correction.

Each table is read, and its SMARTS compiled, once per process; each table's
patterns are matched at most once per molecule, when a class first needs them, and
a pattern the molecule's bonds rule out is not matched at all (``rank.predict.screen``).

>>> from rdkit import Chem
>>> from rank.predict.perceive import perceive
>>> from rank.spectra import find_solvent
>>> perception = perceive(Chem.MolFromSmiles("CCOC(C)=O"))
>>> shifts = ShiftCalculator(perception.graph, find_solvent("CDCl3"))
>>> arithmetic = shifts.predict(perception.drafts[1])    # the OCH2
>>> arithmetic.shift, [(t.name, t.value) for t in arithmetic.terms]
(4.09, [('CH2 base', 1.37), ('α OC(=O)R', 2.72)])

References
----------
J. N. Shoolery, Varian Associates Tech. Inform. Bull. 1959, 2(3), 2 (additivity for CH2XY).
C. Pascual, J. Meier, W. Simon, Helv. Chim. Acta 1966, 49, 164. doi:10.1002/hlca.19660490115
E. Pretsch, P. Buehlmann, M. Badertscher, Structure Determination of Organic Compounds, 4th ed.,
Springer 2009. doi:10.1007/978-3-540-93810-1
H. E. Gottlieb, V. Kotlyar, A. Nudelman, J. Org. Chem. 1997, 62, 7512. doi:10.1021/jo971176v
"""

from __future__ import annotations

import math
from functools import cache, cached_property
from typing import TYPE_CHECKING, NamedTuple, TypeVar

from rdkit import Chem

from ..errors import InputError
from ..tables import read_table
from .perceive import EXCHANGEABLE, FAMILIES, SP3_FAMILIES, ClassDraft, Graph
from .screen import Features, Screen

if TYPE_CHECKING:
    from collections.abc import Callable, Iterable, Sequence

    from ..spectra import Solvent

__all__ = [
    "AlkeneRow", "AlkylIncrement", "AlkylSiteRow", "BenzeneRow", "HeteroaromaticRow", "PredictedShift",
    "ShiftCalculator", "ShiftTables", "SolventShift", "SpecialRow", "Term", "shift_tables",
]

_MAX_MATCHES = 100_000
"""Most SMARTS matches RDKit is asked for per pattern and molecule (far above any real count)."""


class Term(NamedTuple):
    """One named summand of a predicted shift (ppm)."""

    name: str
    value: float


# ------------------------------------------------------------ table rows ----
# One NamedTuple per table, its fields named after the table's columns; ``query`` is the compiled
# ``smarts``, ``elements`` the atomic numbers it needs, ``key`` the row as cited (``table:id``).


class AlkylIncrement(NamedTuple):
    """A row of ``rules/shift_alkyl.tsv``: a substituent's increments (ppm) on sp3 C-H.

    ``alpha_*`` apply to H on the carbon carrying the substituent, ``beta_*`` to H one carbon
    further, by the family of the H-bearing carbon; ``beta_once``: the beta increment counts once
    per neighbouring carbon, however many times the pattern matches there.
    """

    id: str
    smarts: str
    alpha_ch3: float | None
    alpha_ch2: float | None
    alpha_ch: float | None
    beta_ch3: float | None
    beta_ch2: float | None
    beta_ch: float | None
    beta_once: bool
    sigma_extra: float
    label: str
    query: Chem.Mol
    elements: frozenset[int]
    key: str

    def alpha(self, family: str) -> float | None:
        """The alpha increment for H of ``family`` (CH3, CH2 or CH)."""
        return self[_ALPHA[family]]

    def beta(self, family: str) -> float | None:
        """The beta increment for H of ``family`` (CH3, CH2 or CH)."""
        return self[_BETA[family]]


class AlkylSiteRow(NamedTuple):
    """A row of ``rules/shift_alkyl_site.tsv``: a base value, correction or factor (by ``group``)
    for H on a matching sp3 carbon, by its family."""

    id: str
    group: str
    smarts: str
    ch3: float | None
    ch2: float | None
    ch: float | None
    sigma_extra: float
    label: str
    query: Chem.Mol
    elements: frozenset[int]
    key: str

    def value(self, family: str) -> float | None:
        """The value for H of ``family`` (CH3, CH2 or CH)."""
        return self[_SITE[family]]


class AlkeneRow(NamedTuple):
    """A row of ``rules/shift_alkene.tsv``: Z_gem, Z_cis and Z_trans of a substituent (ppm).

    The ``base`` row (the constant) and ``site`` rows (corrections for a matching H-bearing
    carbon) give their value in ``gem``.
    """

    id: str
    kind: str
    smarts: str
    gem: float | None
    cis: float | None
    trans: float | None
    sigma_extra: float
    label: str
    query: Chem.Mol
    elements: frozenset[int]
    key: str


class BenzeneRow(NamedTuple):
    """A row of ``rules/shift_benzene.tsv``: ortho, meta and para increments (ppm); the ``base``
    row gives benzene's shift in ``ortho``."""

    id: str
    kind: str
    smarts: str
    ortho: float | None
    meta: float | None
    para: float | None
    sigma_extra: float
    label: str
    query: Chem.Mol
    elements: frozenset[int]
    key: str

    def at(self, position: str) -> float | None:
        """The increment at ``position`` (ortho, meta or para) from the substituent."""
        return self[_AT[position]]


class HeteroaromaticRow(NamedTuple):
    """A row of ``rules/shift_heteroaromatic.tsv``: the parent ring's shift at a position (ppm)."""

    id: str
    smarts: str
    shift: float | None
    sigma_extra: float
    label: str
    query: Chem.Mol
    elements: frozenset[int]
    key: str


class SpecialRow(NamedTuple):
    """A row of ``rules/shift_special.tsv``: the shift of an H (ppm) and, for poorly defined
    H, the usual range ``low``-``high``."""

    id: str
    family: str
    smarts: str
    shift: float | None
    low: float | None
    high: float | None
    sigma_extra: float
    label: str
    query: Chem.Mol
    elements: frozenset[int]
    key: str


def _columns(row_type: type, names: dict[str, str]) -> dict[str, int]:
    """Field positions of a row type by key, so that an accessor indexes the row instead of building a dict."""
    return {key: row_type._fields.index(name) for key, name in names.items()}


_ALPHA = _columns(AlkylIncrement, {"CH3": "alpha_ch3", "CH2": "alpha_ch2", "CH": "alpha_ch"})
_BETA = _columns(AlkylIncrement, {"CH3": "beta_ch3", "CH2": "beta_ch2", "CH": "beta_ch"})
_SITE = _columns(AlkylSiteRow, {"CH3": "ch3", "CH2": "ch2", "CH": "ch"})
_AT = _columns(BenzeneRow, {"ortho": "ortho", "meta": "meta", "para": "para"})


class SolventShift(NamedTuple):
    """A row of ``rules/solvent_shift.tsv``: the move (ppm) of ``target`` H from CDCl3 to ``solvent``."""

    solvent: str
    target: str
    delta: float
    sigma_extra: float


class ShiftTables(NamedTuple):
    """The shift tables, read once (:func:`shift_tables`).

    ``solvent`` is keyed by (solvent id, target), the first row winning; ``sigma`` by family;
    ``screen`` skips the rows whose SMARTS cannot match a molecule.
    """

    alkyl: tuple[AlkylIncrement, ...]
    alkyl_site: tuple[AlkylSiteRow, ...]
    alkene: tuple[AlkeneRow, ...]
    benzene: tuple[BenzeneRow, ...]
    heteroaromatic: tuple[HeteroaromaticRow, ...]
    special: tuple[SpecialRow, ...]
    solvent: dict[tuple[str, str], SolventShift]
    sigma: dict[str, float]
    screen: Screen


_TEXT_COLUMNS = frozenset({"id", "smarts", "label", "group", "kind", "family"})

_Row = TypeVar("_Row", AlkylIncrement, AlkylSiteRow, AlkeneRow, BenzeneRow, HeteroaromaticRow, SpecialRow)


def _cell(column: str, text: str) -> str | float | bool | None:
    """A table cell as its row field: text, ``beta_once`` as yes/no, ``sigma_extra`` (empty: 0),
    any other column a number or None when empty."""
    if column in _TEXT_COLUMNS:
        return text
    if column == "beta_once":
        return text == "yes"
    if column == "sigma_extra":
        return float(text or 0)
    return float(text) if text.strip() else None


def _read_rows(table: str, row_type: type[_Row]) -> tuple[_Row, ...]:
    """The rows of ``rules/<table>.tsv`` as ``row_type``, their SMARTS compiled."""
    columns = [name for name in row_type._fields if name not in ("query", "elements", "key")]
    rows = []
    for record in read_table(table):
        query = Chem.MolFromSmarts(record["smarts"])
        if query is None:
            raise ValueError(f"rules/{table}.tsv row {record['id']}: bad SMARTS {record['smarts']!r}")
        missing = [c for c in columns if c not in record]
        if missing:
            raise ValueError(f"rules/{table}.tsv has no column {', '.join(missing)}")
        elements = frozenset(a.GetAtomicNum() for a in query.GetAtoms() if a.GetAtomicNum() > 1)
        cells = {c: _cell(c, record[c]) for c in columns}
        rows.append(row_type(**cells, query=query, elements=elements, key=f"{table}:{record['id']}"))
    return tuple(rows)


def _read_sigma() -> dict[str, float]:
    """σ by family from ``rules/sigma.tsv``; ValueError when a family of perception has none."""
    sigma = {r["family"]: float(r["sigma"]) for r in read_table("sigma")}
    missing = [family for family in FAMILIES if family not in sigma]
    if missing:
        raise ValueError(f"rules/sigma.tsv has no sigma for {', '.join(missing)}; add a row for each family")
    return sigma


def _read_solvent_shifts() -> dict[tuple[str, str], SolventShift]:
    table: dict[tuple[str, str], SolventShift] = {}
    for r in read_table("solvent_shift"):
        row = SolventShift(r["solvent"], r["target"], float(r["delta"]), float(r["sigma_extra"]))
        table.setdefault((row.solvent, row.target), row)
    return table


@cache
def shift_tables() -> ShiftTables:
    """The shift tables of ``rules/``, read and compiled once.

    Raises
    ------
    ValueError
        A bad SMARTS, a missing column, or a family of :data:`~rank.predict.perceive.FAMILIES`
        without a σ in ``rules/sigma.tsv``.
    """
    rows = {
        "alkyl": _read_rows("shift_alkyl", AlkylIncrement),
        "alkyl_site": _read_rows("shift_alkyl_site", AlkylSiteRow),
        "alkene": _read_rows("shift_alkene", AlkeneRow),
        "benzene": _read_rows("shift_benzene", BenzeneRow),
        "heteroaromatic": _read_rows("shift_heteroaromatic", HeteroaromaticRow),
        "special": _read_rows("shift_special", SpecialRow),
    }
    screen = Screen([row.query for table in rows.values() for row in table])
    return ShiftTables(**rows, solvent=_read_solvent_shifts(), sigma=_read_sigma(), screen=screen)


# -------------------------------------------------------------- matching ----


def _first_matches(graph: Graph, rows: Iterable[_Row], keys: Callable[[_Row, Sequence[tuple[int, ...]]], list],
                   screen: Screen, features: Features) -> dict:
    """The first row (in table order) matching at each key, ``keys(row, matches)`` giving the keys of a
    row's matches; each pattern matched once.

    Rows needing an element the molecule lacks, or a bond it lacks (``features``, from ``screen``), are
    not matched.
    """
    found: dict = {}
    needs, present, elements, mol = screen.needs, features.present, graph.elements, graph.mol
    for row in rows:
        need = needs[id(row.query)]
        if present & need != need or not row.elements <= elements:
            continue
        matches = screen.matches(row.query, features)
        if matches is None:
            matches = mol.GetSubstructMatches(row.query, uniquify=False, maxMatches=_MAX_MATCHES)
        if matches:
            earlier, found = found, dict.fromkeys(keys(row, matches), row)
            found.update(earlier)   # an earlier row keeps its keys
    return found


def _on_bond(row: _Row, matches: Sequence[tuple[int, ...]]) -> list[tuple[int, int]]:
    """Keys of a substituent row: (H-bearing atom, first substituent atom), the pattern's first two atoms."""
    return [m[:2] for m in matches]


def _on_atom(row: _Row, matches: Sequence[tuple[int, ...]]) -> list[int]:
    """Keys of a site row: the H-bearing atom, the pattern's first atom."""
    return [m[0] for m in matches]


def _in_group(row: AlkylSiteRow, matches: Sequence[tuple[int, ...]]) -> list[tuple[str, int]]:
    """Keys of a ``shift_alkyl_site`` row: (its group, the H-bearing atom)."""
    return [(row.group, m[0]) for m in matches]


class _Parts(NamedTuple):
    """The base row, site rows and substituent rows of the alkene or benzene table."""

    rows: tuple
    base: _Row
    sites: tuple
    increments: tuple


_PARTS: dict[int, _Parts] = {}


def _parts(rows: tuple[_Row, ...]) -> _Parts:
    """The parts of a table, worked out once per table (its rows are held, so their id is not reused)."""
    found = _PARTS.get(id(rows))
    if found is None or found.rows is not rows:
        if len(_PARTS) > 16:
            _PARTS.clear()
        found = _PARTS[id(rows)] = _Parts(rows, next(r for r in rows if r.kind == "base"),
                                          tuple(r for r in rows if r.kind == "site"),
                                          tuple(r for r in rows if r.kind not in ("base", "site")))
    return found


# ------------------------------------------------------------ arithmetic ----


class PredictedShift(NamedTuple):
    """The predicted shift of one proton class with its arithmetic.

    Attributes
    ----------
    shift : ppm against TMS; the sum of ``terms``.
    terms : base value first, then each named increment, rounded and folded (``2× β alkyl``).
    sigma : uncertainty of ``shift`` (ppm, one standard deviation).
    shift_range : for exchangeable (and other poorly defined) H, the usual range (ppm); else None.
    rows : the table rows the shift was computed from, as ``table:row id``.
    """

    shift: float
    terms: tuple[Term, ...]
    sigma: float
    shift_range: tuple[float, float] | None
    rows: tuple[str, ...]


class _Sum(NamedTuple):
    """The unrounded terms of one shift and the rows they came from (before the solvent)."""

    terms: list[Term]
    rows: list                                   # table rows, in the order used
    solvent_target: str                          # solvent-table target: special row id or family
    shift_range: tuple[float, float] | None = None


_POSITIONS = ("ortho", "meta", "para")
"""Ring positions from a substituent by distance 1, 2 and 3 (the farthest in a six-ring)."""


def _tidy(terms: list[Term]) -> list[Term]:
    """Round, drop zeros and fold repeated identical terms into one ('2× β alkyl')."""
    first, rest = terms[0], terms[1:]
    folded: dict[tuple[str, float], int] = {}
    for t in rest:
        value = round(t.value, 2)
        if value:
            folded[(t.name, value)] = folded.get((t.name, value), 0) + 1
    out = [Term(first.name, round(first.value, 2))]
    for (name, value), n in folded.items():
        out.append(Term(name if n == 1 else f"{n}× {name}", round(n * value, 2)))
    return out


class ShiftCalculator:
    """The shift arithmetic of the proton classes of one molecule in one solvent.

    Parameters
    ----------
    graph : Graph
        The molecule as perceived (``rank.predict.perceive.perceive``).
    solvent : rank.spectra.Solvent
        The solvent whose rows of ``rules/solvent_shift.tsv`` apply.

    Notes
    -----
    Each table's patterns are matched on the molecule when a class first needs them, then kept.
    """

    def __init__(self, graph: Graph, solvent: Solvent) -> None:
        self.graph = graph
        self.solvent = solvent
        self._matched = _Matched(graph, shift_tables())

    def predict(self, draft: ClassDraft) -> PredictedShift:
        """The shift of one proton class, its arithmetic, σ and the rows used.

        Raises
        ------
        ValueError
            When ``rules/shift_special.tsv`` has no row for a hydrogen of another family.
        """
        family, tables = draft.family, self._matched.tables
        arithmetic = _arithmetic(self._matched, draft)
        solvent_term, solvent_row = _solvent_correction(tables, self.solvent, family, arithmetic.solvent_target)
        terms = _tidy(arithmetic.terms + ([solvent_term] if solvent_term else []))
        shift = round(sum(t.value for t in terms), 2)
        distinct = {row.key: row for row in arithmetic.rows}   # a row used twice adds its doubt once
        spread = [tables.sigma[family], solvent_row.sigma_extra if solvent_row else 0.0,
                  *(row.sigma_extra for row in distinct.values())]
        sigma = round(math.sqrt(sum(x * x for x in spread)), 2)
        keys = tuple(distinct)
        if solvent_row is not None:
            keys += (f"solvent_shift:{solvent_row.solvent}/{solvent_row.target}",)
        return PredictedShift(shift, tuple(terms), sigma, arithmetic.shift_range, keys)


class _Matched:
    """The rows of each table matching one molecule, first match winning, matched on first need."""

    def __init__(self, graph: Graph, tables: ShiftTables) -> None:
        self.graph = graph
        self.tables = tables

    @cached_property
    def features(self) -> Features:
        """The screen's requirements the molecule meets."""
        g = self.graph
        return self.tables.screen.features(g.mol, g.z, g.aromatic, g.nh, g.charge, g.bond_types, g.rings)

    def _first(self, rows: Iterable[_Row], keys: Callable[[_Row, Sequence[tuple[int, ...]]], list]) -> dict:
        return _first_matches(self.graph, rows, keys, self.tables.screen, self.features)

    @cached_property
    def alkyl_increments(self) -> dict[tuple[int, int], AlkylIncrement]:
        return self._first(self.tables.alkyl, _on_bond)

    @cached_property
    def alkyl_sites(self) -> dict[tuple[str, int], AlkylSiteRow]:
        return self._first(self.tables.alkyl_site, _in_group)

    @cached_property
    def alkene_increments(self) -> dict[tuple[int, int], AlkeneRow]:
        return self._first(_parts(self.tables.alkene).increments, _on_bond)

    @cached_property
    def alkene_sites(self) -> dict[int, AlkeneRow]:
        return self._first(_parts(self.tables.alkene).sites, _on_atom)

    @cached_property
    def ring_increments(self) -> dict[tuple[int, int], BenzeneRow]:
        return self._first(_parts(self.tables.benzene).increments, _on_bond)

    @cached_property
    def heteroaromatic_parents(self) -> dict[int, HeteroaromaticRow]:
        return self._first(self.tables.heteroaromatic, _on_atom)

    @cached_property
    def special(self) -> dict[int, SpecialRow]:
        return self._first(self.tables.special, _on_atom)


def _arithmetic(matched: _Matched, draft: ClassDraft) -> _Sum:
    """The unrounded terms of one class's shift, by its family (before the solvent)."""
    if draft.family in SP3_FAMILIES:
        return _alkyl_sum(matched, draft)
    if draft.family == "alkene":
        return _alkene_sum(matched, draft)
    if draft.family in ("aromatic", "heteroaromatic"):
        return _ring_sum(matched, draft)
    return _special_sum(matched, draft)


def _alkyl_sum(matched: _Matched, draft: ClassDraft) -> _Sum:
    """Base + alpha increments (the 2nd, 3rd... attenuated) + beta increments + site corrections."""
    carbon, family, sites = draft.sites[0].atom, draft.family, matched.alkyl_sites
    base = sites.get(("base", carbon))
    if base is None:
        raise InputError(f"no base value in rules/shift_alkyl.tsv fits the {family} carbon at atom {carbon} "
                         "(a charged or unusual carbon); peakrank cannot predict this structure")
    terms, rows = [Term(f"{family} base", base.value(family))], [base]
    _add_alpha(matched, carbon, family, terms, rows)
    _add_beta(matched, carbon, family, terms, rows)
    for group in ("methane", "ring", "acetal"):
        row = sites.get((group, carbon))
        if row is not None and row.value(family) is not None:
            terms.append(Term(row.label, row.value(family)))
            rows.append(row)
    if draft.rotamer is not None:
        row = sites.get(("rotamer", carbon))
        if row is not None and row.value(family) is not None:
            branch = "A" if draft.rotamer.side > 0 else "B"
            terms.append(Term(f"{row.label} (branch {branch})", draft.rotamer.side * row.value(family)))
            rows.append(row)
    return _Sum(terms, rows, family)


def _add_alpha(matched: _Matched, carbon: int, family: str, terms: list[Term], rows: list) -> None:
    """Alpha increments, largest first; with an ``attenuate_alpha`` row the k-th further one is
    multiplied by its factor to the power k."""
    alphas = []
    for neighbour in matched.graph.bonds[carbon]:
        row = matched.alkyl_increments.get((carbon, neighbour))
        if row is None:
            continue
        if row.alpha(family):
            alphas.append((row.alpha(family), row))
        else:
            rows.append(row)  # a zero increment (alkyl) or an untabulated substituent
    alphas.sort(key=lambda value_row: -value_row[0])
    attenuate = matched.alkyl_sites.get(("attenuate_alpha", carbon))
    for k, (value, row) in enumerate(alphas):
        if k and attenuate is not None:
            factor = attenuate.value(family) ** k
            terms.append(Term(f"α {row.label} (×{factor:.2f})", value * factor))
            rows.append(attenuate)
        else:
            terms.append(Term(f"α {row.label}", value))
        rows.append(row)


def _add_beta(matched: _Matched, carbon: int, family: str, terms: list[Term], rows: list) -> None:
    """Beta increments of the substituents on each sp3 neighbour; with an ``attenuate_beta`` row,
    those of substituents other than H and C are multiplied by its factor."""
    graph = matched.graph
    attenuate = matched.alkyl_sites.get(("attenuate_beta", carbon))
    for neighbour in graph.bonds[carbon]:
        if not graph.saturated[neighbour]:
            continue
        counted = set()
        for substituent in graph.bonds[neighbour]:
            if substituent == carbon:
                continue
            row = matched.alkyl_increments.get((neighbour, substituent))
            if row is None or not row.beta(family) or row.id in counted:
                continue
            if row.beta_once:
                counted.add(row.id)
            if attenuate is not None and graph.z[substituent] not in (1, 6):
                factor = attenuate.value(family)
                terms.append(Term(f"β {row.label} (×{factor:.2f})", row.beta(family) * factor))
                rows.append(attenuate)
            else:
                terms.append(Term(f"β {row.label}", row.beta(family)))
            rows.append(row)


def _alkene_sum(matched: _Matched, draft: ClassDraft) -> _Sum:
    """5.25 + Z_gem of the other group on the H's carbon + Z_cis and Z_trans across the bond."""
    graph, carbon = matched.graph, draft.sites[0].atom
    other = next(j for j, order in graph.bonds[carbon].items() if order == 2.0)
    base = _parts(matched.tables.alkene).base
    terms, rows = [Term("alkene base", base.gem)], [base]
    for geminal in graph.bonds[carbon]:
        if geminal != other and (row := matched.alkene_increments.get((carbon, geminal))) is not None:
            terms.append(Term(f"gem {row.label}", row.gem))
            rows.append(row)
    for across in graph.bonds[other]:
        if across != carbon and (row := matched.alkene_increments.get((other, across))) is not None:
            if across == draft.cis_to:
                terms.append(Term(f"cis {row.label}", row.cis))
            else:
                terms.append(Term(f"trans {row.label}", row.trans))
            rows.append(row)
    row = matched.alkene_sites.get(carbon)
    if row is not None:
        terms.append(Term(row.label, row.gem))
        rows.append(row)
    return _Sum(terms, rows, draft.family)


def _ring_sum(matched: _Matched, draft: ClassDraft) -> _Sum:
    """Benzene 7.36, or the heteroaromatic parent's value, + increments by ring distance."""
    graph, atom = matched.graph, draft.sites[0].atom
    hetero = draft.family == "heteroaromatic"
    rings = [r for r in graph.rings if atom in r and all(graph.aromatic[x] for x in r)]
    if hetero:
        rings = [r for r in rings if any(graph.z[x] != 6 for x in r)] or rings
    else:
        rings = [r for r in rings if all(graph.z[x] == 6 for x in r)] or rings
    ring = min(rings, key=len) if rings else (atom,)
    if hetero:
        parent = matched.heteroaromatic_parents[atom]
        terms, rows = [Term(parent.label, parent.shift)], [parent]
    else:
        base = _parts(matched.tables.benzene).base
        terms, rows = [Term("benzene base", base.ortho)], [base]
    size, here = len(ring), ring.index(atom)
    for place, ring_atom in enumerate(ring):
        if ring_atom == atom:
            continue
        distance = min(min(abs(place - here), size - abs(place - here)), len(_POSITIONS))
        position = _POSITIONS[distance - 1]
        for substituent in graph.bonds[ring_atom]:
            if substituent in ring or (row := matched.ring_increments.get((ring_atom, substituent))) is None:
                continue
            if row.at(position):
                terms.append(Term(f"{position} {row.label}", row.at(position)))
            rows.append(row)
    return _Sum(terms, rows, draft.family)


def _special_sum(matched: _Matched, draft: ClassDraft) -> _Sum:
    """The first row of ``shift_special.tsv`` matching the H-bearing atom, with its range."""
    row = matched.special.get(draft.sites[0].atom)
    if row is None:
        raise ValueError(f"rules/shift_special.tsv has no row for a {draft.family} hydrogen; "
                         "its last row should match any atom carrying H")
    span = None if row.low is None or row.high is None else (row.low, row.high)
    return _Sum([Term(row.label, row.shift)], [row], row.id, span)


def _solvent_correction(tables: ShiftTables, solvent: Solvent, family: str,
                        target: str) -> tuple[Term | None, SolventShift | None]:
    """The solvent's term (None when zero) and the ``solvent_shift.tsv`` row it comes from.

    Exchangeable H move by their own rows only; the family and ``*`` rows describe C-H.
    """
    for key in (target,) if family in EXCHANGEABLE else (target, family, "*"):
        row = tables.solvent.get((solvent.id, key))
        if row is not None:
            term = Term(f"solvent {solvent.id}", row.delta) if row.delta else None
            return term, row
    return None, None
