"""Predicted 1H NMR signals of a structure: shifts with their arithmetic, multiplicities and J.

Every shift is a sum of named terms read from the tables in ``rules/``:

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

The multiplicity is first order (n+1 rule over groups of equal J, typical J by
coupling kind from ``coupling.tsv``), or ``m`` where partners lie too close in
Hz for first-order analysis at the given field (``multiplet.tsv``).

Prediction is a pure function of (molecule, solvent, field): the tables are
read and their SMARTS compiled once, and each table's patterns are matched
once per molecule.

>>> [(s.family, s.shift, s.multiplicity) for s in predict_smiles("CCOC(C)=O")]
[('CH2', 4.09, 'q'), ('CH3', 2.05, 's'), ('CH3', 1.26, 't')]
>>> print(predict_smiles("CCOC(C)=O")[0].explanation)
CH2 base 1.37 + α OC(=O)R 2.72 = 4.09

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
from dataclasses import dataclass
from functools import cache
from typing import NamedTuple

from rdkit import Chem, RDLogger

from ..errors import InputError
from ..spectra import find_solvent
from ..tables import read_table
from .perceive import EXCHANGEABLE, SP3_FAMILIES, Graph, Perception, _Draft, perceive

RDLogger.DisableLog("rdApp.*")

DEFAULT_FIELD_MHZ = 400.0


class Term(NamedTuple):
    """One named summand of a predicted shift (ppm)."""

    name: str
    value: float


class Coupling(NamedTuple):
    """A coupling of one H of a signal to ``n_h`` H of another signal, with the typical J (Hz)."""

    signal: int
    n_h: int
    j: float
    kind: str


@dataclass(frozen=True)
class Signal:
    """One predicted 1H signal.

    Attributes
    ----------
    shift : ppm against TMS; the sum of ``terms``.
    n_h : number of hydrogens.
    multiplicity : s, d, t, q, quint, sext, sept, dd, dt, td, ddd, dq, qd, ..., m or br s.
    j : estimated J values (Hz) of the resolved partner groups, largest first.
    family : CH3, CH2, CH, alkene, aromatic, heteroaromatic, aldehyde, formyl, alkyne,
        imine, OH, NH, SH, COOH or other.
    exchangeable : OH, NH, SH or COOH hydrogen (may be broad, moved or absent).
    broad : expected broad.
    atoms : input indices of the heavy atoms carrying these H.
    sigma : uncertainty of ``shift`` (ppm, one standard deviation).
    terms : the arithmetic: base value first, then each named increment.
    partners : couplings of one H of this signal (indices into the same signal list),
        including those too small to resolve.
    diastereotopic : CH2 hydrogens that may show as two signals of ``n_h // 2``.
    shift_range : for exchangeable (and other poorly defined) H, the usual range (ppm).
    note : a remark for the user (e.g. exchange with the solvent).
    rows : the table rows the shift was computed from, as ``table:row id``.
    """

    shift: float
    n_h: int
    multiplicity: str
    j: tuple[float, ...]
    family: str
    exchangeable: bool
    broad: bool
    atoms: tuple[int, ...]
    sigma: float
    terms: tuple[Term, ...]
    partners: tuple[Coupling, ...] = ()
    diastereotopic: bool = False
    shift_range: tuple[float, float] | None = None
    note: str = ""
    rows: tuple[str, ...] = ()

    @property
    def explanation(self) -> str:
        """The arithmetic as text, e.g. ``CH2 base 1.37 + α OC(=O)R 2.72 = 4.09``."""
        first, *rest = self.terms
        parts = [f"{first.name} {first.value:.2f}"]
        for t in rest:
            parts.append(f"{'+' if t.value >= 0 else '−'} {t.name} {abs(t.value):.2f}")
        text = " ".join(parts) + f" = {self.shift:.2f}"
        if self.shift_range is not None:
            text += f" (usual range {self.shift_range[0]:g}–{self.shift_range[1]:g})"
        if self.note:
            text += f"; {self.note}"
        return text

    def to_json(self) -> dict:
        """The signal as the ``peakrank predict --json`` dictionary."""
        return {
            "shift": self.shift,
            "n_h": self.n_h,
            "multiplicity": self.multiplicity,
            "exchangeable": self.exchangeable,
            "atoms": list(self.atoms),
            "sigma": self.sigma,
            "explanation": self.explanation,
            "j": list(self.j),
            "family": self.family,
            "terms": [[t.name, t.value] for t in self.terms],
            "broad": self.broad,
            "diastereotopic": self.diastereotopic,
            "shift_range": None if self.shift_range is None else list(self.shift_range),
            "partners": [{"signal": c.signal, "n_h": c.n_h, "j": c.j, "kind": c.kind} for c in self.partners],
            "rows": list(self.rows),
        }


# ----------------------------------------------------------------- tables ----


class _Row(NamedTuple):
    id: str
    label: str
    query: Chem.Mol
    needs: frozenset[int]
    values: tuple[float | None, ...]
    sigma_extra: float
    group: str        # site table: group; alkene/benzene: kind; special: family
    once: bool = False  # alkyl table: the beta increment counts once per neighbouring carbon
    table: str = ""

    @property
    def key(self) -> str:
        return f"{self.table}:{self.id}"


def _number(text: str) -> float | None:
    return float(text) if text.strip() else None


def _compile(table: str, row: dict) -> tuple[Chem.Mol, frozenset[int]]:
    query = Chem.MolFromSmarts(row["smarts"])
    if query is None:
        raise ValueError(f"rules/{table}.tsv row {row['id']}: bad SMARTS {row['smarts']!r}")
    needs = frozenset(a.GetAtomicNum() for a in query.GetAtoms() if a.GetAtomicNum() > 1)
    return query, needs


def _rows(table: str, columns: tuple[str, ...], group: str | None = None) -> tuple[_Row, ...]:
    out = []
    for r in read_table(table):
        query, needs = _compile(table, r)
        out.append(_Row(r["id"], r.get("label", r["id"]), query, needs,
                        tuple(_number(r[c]) for c in columns), float(r["sigma_extra"] or 0),
                        r[group] if group else "", r.get("beta_once") == "yes", table))
    return tuple(out)


@cache
def _alkyl_rows() -> tuple[_Row, ...]:
    return _rows("shift_alkyl", ("alpha_ch3", "alpha_ch2", "alpha_ch", "beta_ch3", "beta_ch2", "beta_ch"))


@cache
def _site_rows() -> tuple[_Row, ...]:
    return _rows("shift_alkyl_site", ("ch3", "ch2", "ch"), "group")


@cache
def _alkene_rows() -> tuple[_Row, ...]:
    return _rows("shift_alkene", ("gem", "cis", "trans"), "kind")


@cache
def _benzene_rows() -> tuple[_Row, ...]:
    return _rows("shift_benzene", ("ortho", "meta", "para"), "kind")


@cache
def _hetero_rows() -> tuple[_Row, ...]:
    return _rows("shift_heteroaromatic", ("shift",))


@cache
def _special_rows() -> tuple[_Row, ...]:
    return _rows("shift_special", ("shift", "low", "high"), "family")


@cache
def _sigma() -> dict[str, float]:
    return {r["family"]: float(r["sigma"]) for r in read_table("sigma")}


class _CouplingKind(NamedTuple):
    j: float
    observed: str


@cache
def _coupling() -> dict[str, _CouplingKind]:
    return {r["kind"]: _CouplingKind(float(r["j"]), r["observed"]) for r in read_table("coupling")}


@cache
def _multiplet() -> dict[str, float]:
    return {r["id"]: float(r["value"]) for r in read_table("multiplet")}


@cache
def _solvent_shifts() -> dict[tuple[str, str], tuple[float, float]]:
    table: dict[tuple[str, str], tuple[float, float]] = {}
    for r in read_table("solvent_shift"):
        table.setdefault((r["solvent"], r["target"]), (float(r["delta"]), float(r["sigma_extra"])))
    return table


def _base(rows: tuple[_Row, ...]) -> _Row:
    return next(r for r in rows if r.group == "base")


# --------------------------------------------------------------- matching ----


def _pair_rows(graph: Graph, rows: tuple[_Row, ...]) -> dict[tuple[int, int], _Row]:
    """First matching row for each (atom 1, atom 2) pair, each pattern matched once."""
    found: dict[tuple[int, int], _Row] = {}
    mol, elements = graph.mol, graph.elements
    for row in rows:
        if row.group in ("base", "site") or not row.needs <= elements:
            continue
        for m in mol.GetSubstructMatches(row.query, uniquify=False, maxMatches=100_000):
            found.setdefault((m[0], m[1]), row)
    return found


def _atom_rows(graph: Graph, rows: tuple[_Row, ...], groups: bool = False) -> dict:
    """First matching row for each atom (per group when ``groups``)."""
    found: dict = {}
    mol, elements = graph.mol, graph.elements
    for row in rows:
        if not row.needs <= elements:
            continue
        for m in mol.GetSubstructMatches(row.query, uniquify=False, maxMatches=100_000):
            found.setdefault((row.group, m[0]) if groups else m[0], row)
    return found


# -------------------------------------------------------------- predictor ----


class Predictor:
    """Predict the 1H NMR signals of structures.

    Parameters
    ----------
    solvent : str
        A solvent of ``rules/solvents.tsv`` by id or alias (CDCl3, DMSO-d6, CD3OD,
        D2O, acetone-d6, C6D6, CD3CN, CD2Cl2).
    field_mhz : float
        Spectrometer frequency for 1H, used to judge when couplings are first order.

    Raises
    ------
    InputError
        Unknown solvent, or a field that is not a positive number of MHz.

    Examples
    --------
    >>> from rdkit import Chem
    >>> [s.multiplicity for s in Predictor("CDCl3").predict(Chem.MolFromSmiles("CCCl"))]
    ['q', 't']
    """

    def __init__(self, solvent: str = "CDCl3", field_mhz: float = DEFAULT_FIELD_MHZ) -> None:
        self.solvent = solvent
        self.field_mhz = field_mhz
        self._solvent = find_solvent(solvent)
        if not isinstance(field_mhz, (int, float)) or not math.isfinite(field_mhz) or not field_mhz > 0:
            raise InputError(f"field {field_mhz!r} MHz: give the 1H frequency as a positive number, e.g. 400")

    @property
    def solvent_id(self) -> str:
        """The solvent's id in ``rules/solvents.tsv`` (an alias given to the constructor resolved)."""
        return self._solvent.id

    def predict(self, mol: Chem.Mol) -> list[Signal]:
        """The predicted signals of ``mol``, highest shift first.

        Parameters
        ----------
        mol : rdkit.Chem.Mol
            A sanitised molecule (hydrogens implicit or explicit).

        Returns
        -------
        list of Signal
            One per proton class (``rank.predict.perceive``); ``partners`` index this list.
        """
        return _Run(perceive(mol), self._solvent, float(self.field_mhz)).signals()


def signal_table(signals: list[Signal]) -> str:
    """The signals as a text table: shift, H count, multiplicity, J, family, sigma and the arithmetic."""
    lines = [f"{'δ/ppm':>6}  {'nH':>3}  {'mult':<7}  {'J/Hz':<16}  {'family':<14}  {'σ':>4}  arithmetic"]
    for s in signals:
        js = ", ".join(f"{j:.1f}" for j in s.j) or "-"
        mult = s.multiplicity + (" *" if s.diastereotopic else "")
        lines.append(f"{s.shift:6.2f}  {s.n_h:>3}  {mult:<7}  {js:<16}  {s.family:<14}  {s.sigma:4.2f}  "
                     f"{s.explanation}")
    if any(s.diastereotopic for s in signals):
        lines.append("* diastereotopic CH2: may appear as two signals")
    return "\n".join(lines) + "\n"


def parse_smiles(smiles: str, notes: list[str] | None = None) -> Chem.Mol:
    """A sanitised, neutral, closed-shell molecule from SMILES, or InputError saying what to fix.

    A salt or mixture gives its largest organic component, an ion its neutral form
    (``rank.standardize``); the molecule's atoms then follow its canonical SMILES.  An
    ion with no H to move (an onium ion) is kept as written.  Whenever there is
    something to say, a line is appended to ``notes`` if a list is given.  Elements
    other than C, H, N, O, S, P, F, Cl, Br and I, radicals and salts without carbon
    are refused.
    """
    from ..standardize import standardize

    mol = Chem.MolFromSmiles(smiles) if isinstance(smiles, str) and smiles.strip() else None
    if mol is None or mol.GetNumAtoms() == 0:
        raise InputError(f"{smiles!r} is not a valid SMILES; write e.g. 'CCOC(C)=O' (quote it in the shell)")
    used = standardize(mol, smiles)
    note = used.note(smiles)
    if note is not None and notes is not None:
        notes.append(note)
    return used.mol if used.mixture or used.neutralised else mol


def predict_smiles(smiles: str, solvent: str = "CDCl3") -> list[Signal]:
    """The predicted signals of a SMILES (400 MHz); InputError on invalid SMILES or unknown solvent."""
    return Predictor(solvent).predict(parse_smiles(smiles))


# -------------------------------------------------------------- one run ----


class _Shift(NamedTuple):
    terms: list[Term]
    used: list[_Row]                             # the rows the terms come from
    target: str                                  # solvent-table target: special row id or family
    shift_range: tuple[float, float] | None = None


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


class _Run:
    """The prediction for one molecule in one solvent at one field."""

    def __init__(self, perception: Perception, solvent, field: float) -> None:
        self.p = perception
        self.g = perception.graph
        self.solvent = solvent
        self.field = field
        fams = {d.family for d in perception.drafts}
        self.alkyl = _pair_rows(self.g, _alkyl_rows()) if fams & SP3_FAMILIES else {}
        self.site = _atom_rows(self.g, _site_rows(), groups=True) if fams & SP3_FAMILIES else {}
        self.alkene = _pair_rows(self.g, _alkene_rows()) if "alkene" in fams else {}
        self.alkene_site = _atom_rows(self.g, tuple(r for r in _alkene_rows() if r.group == "site")) \
            if "alkene" in fams else {}
        ring = fams & {"aromatic", "heteroaromatic"}
        self.benzene = _pair_rows(self.g, _benzene_rows()) if ring else {}
        self.hetero = _atom_rows(self.g, _hetero_rows()) if "heteroaromatic" in fams else {}
        self.special = _atom_rows(self.g, _special_rows()) if fams - SP3_FAMILIES - {
            "alkene", "aromatic", "heteroaromatic"} else {}

    # -- shifts ---------------------------------------------------------------

    def _shift(self, d: _Draft) -> _Shift:
        fam = d.family
        if fam in SP3_FAMILIES:
            return self._alkyl_shift(d)
        if fam == "alkene":
            return self._alkene_shift(d)
        if fam in ("aromatic", "heteroaromatic"):
            return self._ring_shift(d)
        return self._special_shift(d)

    def _alkyl_shift(self, d: _Draft) -> _Shift:
        g, c = self.g, d.sites[0].atom
        t = (2, 1, 0, 0)[min(g.nh[c], 4) - 1]
        site = self.site
        base = site[("base", c)]
        terms, used = [Term(f"{d.family} base", base.values[t])], [base]
        alphas = []
        for x in g.bonds[c]:
            row = self.alkyl.get((c, x))
            if row is None:
                continue
            if row.values[t]:
                alphas.append((row.values[t], row))
            else:
                used.append(row)  # a zero increment (alkyl) or an untabulated substituent
        alphas.sort(key=lambda vr: -vr[0])
        damp = site.get(("attenuate_alpha", c))
        for k, (value, row) in enumerate(alphas):
            if k and damp is not None:
                factor = damp.values[t] ** k
                terms.append(Term(f"α {row.label} (×{factor:.2f})", value * factor))
                used.append(damp)
            else:
                terms.append(Term(f"α {row.label}", value))
            used.append(row)
        damp_beta = site.get(("attenuate_beta", c))
        for y in g.bonds[c]:
            if not g.sp3(y):
                continue
            counted = set()
            for z in g.bonds[y]:
                row = self.alkyl.get((y, z)) if z != c else None
                if row is None or not row.values[3 + t] or row.id in counted:
                    continue
                if row.once:
                    counted.add(row.id)
                if damp_beta is not None and g.z[z] not in (1, 6):
                    factor = damp_beta.values[t]
                    terms.append(Term(f"β {row.label} (×{factor:.2f})", row.values[3 + t] * factor))
                    used.append(damp_beta)
                else:
                    terms.append(Term(f"β {row.label}", row.values[3 + t]))
                used.append(row)
        for group in ("methane", "ring", "acetal"):
            row = site.get((group, c))
            if row is not None and row.values[t] is not None:
                terms.append(Term(row.label, row.values[t]))
                used.append(row)
        if d.rotamer is not None:
            row = site.get(("rotamer", c))
            if row is not None and row.values[t] is not None:
                terms.append(Term(f"{row.label} (branch {'A' if d.rotamer.side > 0 else 'B'})",
                                  d.rotamer.side * row.values[t]))
                used.append(row)
        return _Shift(terms, used, d.family)

    def _alkene_shift(self, d: _Draft) -> _Shift:
        g, a = self.g, d.sites[0].atom
        b = next(j for j, o in g.bonds[a].items() if o == 2.0)
        base = _base(_alkene_rows())
        terms, used = [Term("alkene base", base.values[0])], [base]
        for x in g.bonds[a]:
            if x != b and (row := self.alkene.get((a, x))) is not None:
                terms.append(Term(f"gem {row.label}", row.values[0]))
                used.append(row)
        for y in g.bonds[b]:
            if y != a and (row := self.alkene.get((b, y))) is not None:
                if y == d.cis_to:
                    terms.append(Term(f"cis {row.label}", row.values[1]))
                else:
                    terms.append(Term(f"trans {row.label}", row.values[2]))
                used.append(row)
        row = self.alkene_site.get(a)
        if row is not None:
            terms.append(Term(row.label, row.values[0]))
            used.append(row)
        return _Shift(terms, used, d.family)

    def _ring_shift(self, d: _Draft) -> _Shift:
        g, h = self.g, d.sites[0].atom
        hetero = d.family == "heteroaromatic"
        rings = [r for r in g.rings if h in r and all(g.aromatic[x] for x in r)]
        if hetero:
            rings = [r for r in rings if any(g.z[x] != 6 for x in r)] or rings
        else:
            rings = [r for r in rings if all(g.z[x] == 6 for x in r)] or rings
        ring = min(rings, key=len) if rings else (h,)
        if hetero:
            row = self.hetero[h]
            terms, used = [Term(row.label, row.values[0])], [row]
        else:
            base = _base(_benzene_rows())
            terms, used = [Term("benzene base", base.values[0])], [base]
        size, p = len(ring), ring.index(h)
        where = ("ortho", "meta", "para")
        for q, r in enumerate(ring):
            if r == h:
                continue
            dist = min(min(abs(q - p), size - abs(q - p)), 3)
            for x in g.bonds[r]:
                if x in ring or (row := self.benzene.get((r, x))) is None:
                    continue
                if row.values[dist - 1]:
                    terms.append(Term(f"{where[dist - 1]} {row.label}", row.values[dist - 1]))
                used.append(row)
        return _Shift(terms, used, d.family)

    def _special_shift(self, d: _Draft) -> _Shift:
        row = self.special.get(d.sites[0].atom)
        if row is None:
            raise ValueError(f"rules/shift_special.tsv has no row for a {d.family} hydrogen; "
                             "its last row should match any atom carrying H")
        shift, low, high = row.values
        span = None if low is None or high is None else (low, high)
        return _Shift([Term(row.label, shift)], [row], row.id, span)

    def _solvent_term(self, fam: str, target: str) -> tuple[Term | None, float, str | None]:
        table, sid = _solvent_shifts(), self.solvent.id
        # exchangeable H move by their own rows only; the family and * rows describe C-H
        for key in (target,) if fam in EXCHANGEABLE else (target, fam, "*"):
            found = table.get((sid, key))
            if found is not None:
                delta, extra = found
                term = Term(f"solvent {sid}", delta) if delta else None
                return term, extra, f"solvent_shift:{sid}/{key}"
        return None, 0.0, None

    # -- multiplicity -----------------------------------------------------------

    def _observed(self, kind: str) -> bool:
        rule = _coupling()[kind].observed
        if rule == "all":
            return True
        if rule == "no_exchange":
            return not self.solvent.exchange
        return self.solvent.id in {s.strip() for s in rule.split(",")}

    def _pattern(self, i: int, shifts: list[float], couplings: list[Coupling]) -> tuple[str, tuple[float, ...]]:
        params = _multiplet()
        d, g = self.p.drafts[i], self.g
        resolved = [c for c in couplings if c.j >= params["min_resolved_j"]]
        if not resolved:
            return "s", ()
        groups: list[list[float]] = []   # [J, n] merged by J
        for c in sorted(resolved, key=lambda c: -c.j):
            if groups and groups[-1][0] - c.j < params["merge_j"]:
                j0, n0 = groups[-1]
                groups[-1] = [(j0 * n0 + c.j * c.n_h) / (n0 + c.n_h), n0 + c.n_h]
            else:
                groups.append([c.j, c.n_h])
        js = tuple(round(j, 1) for j, _ in groups)
        for c in resolved:
            if abs(shifts[i] - shifts[c.signal]) * self.field < params["first_order_ratio"] * c.j:
                return "m", js
        if params["ring_sp3_multiplet"] and d.family in SP3_FAMILIES:
            a = d.sites[0].atom
            low, high = params["ring_sp3_min_size"], params["ring_sp3_max_size"]
            ring = next((r for r in g.rings if a in r and low <= len(r) <= high), None)
            if ring is not None and any(
                self.p.drafts[c.signal].family in SP3_FAMILIES
                and any(s.atom in ring for s in self.p.drafts[c.signal].sites) for c in resolved
            ):
                return "m", js
        sizes = [int(n) for _, n in groups]
        if len(groups) > params["max_groups"]:
            return "m", js
        names = {1: "d", 2: "t", 3: "q", 4: "quint", 5: "sext", 6: "sept"}
        if len(groups) == 1:
            n = sizes[0]
            return (names[n] if n <= params["max_group_size"] else "m"), js
        if any(n > 3 for n in sizes):
            return "m", js
        return "".join(names[n] for n in sizes), js

    # -- assembly ---------------------------------------------------------------

    def signals(self) -> list[Signal]:
        drafts, classes = self.p.drafts, self.p.classes
        sigma_table = _sigma()
        shifts, rows = [], []
        for d in drafts:
            s = self._shift(d)
            term, solvent_extra, solvent_key = self._solvent_term(d.family, s.target)
            terms = _tidy(s.terms + ([term] if term else []))
            shift = round(sum(t.value for t in terms), 2)
            distinct = {r.key: r for r in s.used}   # a row used twice adds its doubt once
            spread = [sigma_table.get(d.family, 0.5), solvent_extra, *(r.sigma_extra for r in distinct.values())]
            sigma = round(math.sqrt(sum(x * x for x in spread)), 2)
            keys = tuple(distinct) + ((solvent_key,) if solvent_key else ())
            shifts.append(shift)
            rows.append((terms, sigma, s.shift_range, keys))
        out = []
        for i, (d, cls) in enumerate(zip(drafts, classes)):
            couplings = [Coupling(p.cls, p.n_h, _coupling()[p.kind].j, p.kind)
                         for p in cls.partners if self._observed(p.kind)]
            terms, sigma, span, keys = rows[i]
            note = ""
            if cls.exchangeable:
                if self.solvent.exchange:
                    note = f"exchanges with {self.solvent.id}; expected absent"
                else:
                    note = "exchangeable; position varies, may be broad or absent"
            if cls.exchangeable and (cls.family in ("NH", "COOH") or not any(
                    c.j >= _multiplet()["min_resolved_j"] for c in couplings)):
                mult, js, broad = "br s", (), True
            else:
                mult, js = self._pattern(i, shifts, couplings)
                broad = False
            out.append(Signal(shifts[i], cls.n_h, mult, js, cls.family, cls.exchangeable, broad,
                              cls.atoms, sigma, tuple(terms), tuple(couplings), cls.diastereotopic,
                              span, note, keys))
        order = sorted(range(len(out)), key=lambda k: -out[k].shift)
        new = {old: k for k, old in enumerate(order)}
        return [_renumber(out[k], new) for k in order]


def _renumber(s: Signal, new: dict[int, int]) -> Signal:
    partners = tuple(c._replace(signal=new[c.signal]) for c in s.partners)
    return Signal(s.shift, s.n_h, s.multiplicity, s.j, s.family, s.exchangeable, s.broad, s.atoms,
                  s.sigma, s.terms, partners, s.diastereotopic, s.shift_range, s.note, s.rows)


__all__ = ["Coupling", "Predictor", "Signal", "Term", "parse_smiles", "predict_smiles", "signal_table"]
