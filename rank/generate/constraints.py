"""Limits on how many atoms of a kind a structure holds, read from the evidence of a spectrum.

A :class:`Limit` bounds the number of atoms of one :class:`Kind` (``lower <= count <= upper``),
with a name, the evidence it rests on and the tolerance its bounds already carry.  The
generator applies it as early as the kind allows:

- a kind the atom types decide (element and H count) refuses whole hydrogen distributions
  before anything is built (``plan.py``);
- a kind that also asks for a double bond (or for none) fixes the double-bond flag of the
  carbon types when the bound leaves no choice (every CH on a double bond, or none), so the
  compiled core never builds the rest, and refuses runs that cannot reach the bound; no
  triple bond at all bans triple bonds to carbon in the core;
- every limit is checked exactly on each built structure (``accept.py``), so a limit the
  types cannot decide (a carbonyl count, carbon environments) is applied there.

Each limit is tallied with what it removed, like a hint (``IsomerStream.hinted``, hint or
limit name -> structures, estimated for what planning removed).

:func:`carbon_limits` reads the limits of a 13C peak list (shift, DEPT type or None) with
the windows and tolerances of ``rules/constraints.tsv``; :func:`hint_limit` writes a count
hint of ``rules/hints.tsv`` (at least n CH3, at least n CH on a double bond) as a limit.

>>> from rank.formula import parse_formula
>>> limits = carbon_limits(parse_formula("C4H8O2"), [(171.1, 0), (60.4, 2), (21.0, 3), (14.2, 3)])
>>> [(lim.name, lim.lower, lim.upper) for lim in limits][:4]
[('13C: quaternary C', 1, 1), ('13C: CH', 0, 0), ('13C: CH2', 1, 1), ('13C: CH3', 2, 2)]
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from functools import cache, cached_property
from typing import NamedTuple

from rdkit import Chem

from ..formula import Formula
from ..tables import read_table
from .atoms import AtomType
from .fragment import FragmentType

__all__ = ["Kind", "Limit", "carbon_limits", "constraint_rules", "hint_limit", "limit_rows", "proton_limits",
           "proton_rules"]

_TYPE_NAMES = {0: "C", 1: "CH", 2: "CH2", 3: "CH3"}
_KIND_NAMES = {0: "quaternary C", 1: "CH", 2: "CH2", 3: "CH3"}


@dataclass(frozen=True)
class Kind:
    """Which atoms a limit counts.

    ``element`` and ``hydrogens`` (H counts allowed; None: any) are decided by the atom
    types; ``double_bond`` (True: the atom carries a double bond, in any Kekule form; False:
    it carries none; None: either) is a flag of the carbon types; ``triple_bond`` (True: it
    carries a triple bond), ``smarts`` (a one-atom SMARTS the atom must match) and
    ``environments`` (count symmetry classes of such atoms, not atoms) are seen only on a
    built structure.
    """

    element: str = "C"
    hydrogens: tuple[int, ...] | None = None
    double_bond: bool | None = None
    triple_bond: bool | None = None
    smarts: str | None = None
    environments: bool = False

    @property
    def on_double_bonds(self) -> bool:
        """True when the types and their double-bond flags decide the kind (``double_bond`` set, nothing else
        seen only on built structures): the core can bound it on partial structures."""
        return self.double_bond is not None and self.triple_bond is None and self.smarts is None \
            and not self.environments

    @property
    def typed(self) -> bool:
        """True when the atom types alone decide which atoms are of the kind."""
        return self.double_bond is None and self.triple_bond is None and self.smarts is None and not self.environments

    @cached_property
    def _pattern(self) -> Chem.Mol | None:
        return Chem.MolFromSmarts(self.smarts) if self.smarts else None

    @cached_property
    def _one_query(self) -> Chem.Mol | None:
        """The whole kind as one one-atom query, when it has a SMARTS and no bond or environment condition:
        its element, H counts and the SMARTS together (``[$(smarts);#6;H1,H2]``)."""
        if self.smarts is None or self.double_bond is not None or self.triple_bond is not None or self.environments:
            return None
        parts = [f"$({self.smarts})", f"#{Chem.GetPeriodicTable().GetAtomicNumber(self.element)}"]
        if self.hydrogens is not None:
            parts.append(",".join(f"H{h}" for h in self.hydrogens))
        return Chem.MolFromSmarts(f"[{';'.join(parts)}]")

    def _atom_type(self, t: AtomType) -> bool:
        return t.state.element == self.element and (self.hydrogens is None or t.hydrogens in self.hydrogens)

    def type_range(self, types: Sequence[tuple[AtomType | FragmentType, int]]) -> tuple[int, int]:
        """The fewest and the most atoms of the kind a structure of these vertex types can hold.

        Environments are bounded as atoms (an environment holds one atom or more).

        Parameters
        ----------
        types : sequence of (AtomType or FragmentType, int)

        Returns
        -------
        (int, int)
        """
        low = high = 0
        for t, c in types:
            if isinstance(t, FragmentType):
                most = t.fragment.carbons_of(self.element, self.hydrogens, self.double_bond)
                high += c * most
                low += c * most if self.typed else 0
                continue
            if not self._atom_type(t):
                continue
            can_double = t.double_bond is not False and t.degree >= 2
            must_double = t.double_bond is True
            if self.double_bond is True and not can_double or self.double_bond is False and must_double:
                continue
            if self.triple_bond and t.degree < 3:
                continue
            high += c
            decided = self.double_bond is None or (must_double if self.double_bond else not can_double)
            if decided and self.triple_bond is None and self.smarts is None and not self.environments:
                low += c
        return low, high

    def count(self, mol: Chem.Mol) -> int:
        """The atoms (or environments) of the kind in a built structure.

        Parameters
        ----------
        mol : Chem.Mol
            Sanitised, hydrogens implicit; double and triple bonds are read on a Kekule form.

        Returns
        -------
        int
        """
        if self._one_query is not None:
            return len(mol.GetSubstructMatches(self._one_query, uniquify=True, maxMatches=10_000))
        matched = None
        bonds_of = mol
        if (self.double_bond is not None or self.triple_bond is not None) and any(
                a.GetIsAromatic() for a in mol.GetAtoms()):
            # the bonds of a Kekule form: which atoms carry a double bond is the same in every one
            bonds_of = Chem.Mol(mol)
            Chem.Kekulize(bonds_of, clearAromaticFlags=True)
        if self._pattern is not None:
            matched = {m[0] for m in mol.GetSubstructMatches(self._pattern, uniquify=True, maxMatches=10_000)}
        atoms = []
        for i in range(mol.GetNumAtoms()):  # by index: RDKit's atom sequence iterates slowly
            a = mol.GetAtomWithIdx(i)
            if a.GetSymbol() != self.element:
                continue
            if self.hydrogens is not None and a.GetTotalNumHs() not in self.hydrogens:
                continue
            if self.double_bond is not None or self.triple_bond is not None:
                orders = {b.GetBondType() for b in bonds_of.GetAtomWithIdx(a.GetIdx()).GetBonds()}
                if self.double_bond is not None and (Chem.BondType.DOUBLE in orders) is not self.double_bond:
                    continue
                if self.triple_bond is not None and (Chem.BondType.TRIPLE in orders) is not self.triple_bond:
                    continue
            if matched is not None and a.GetIdx() not in matched:
                continue
            atoms.append(a.GetIdx())
        if not self.environments:
            return len(atoms)
        ranks = Chem.CanonicalRankAtoms(mol, breakTies=False)
        return len({ranks[i] for i in atoms})


@dataclass(frozen=True)
class Limit:
    """At least ``lower`` and at most ``upper`` (None: no upper bound) atoms of ``kind``.

    ``name`` is what the tallies count under (distinct from every hint's name);
    ``evidence`` the peaks it rests on; ``tolerance`` what the bounds already allow for,
    as the user reads it.
    """

    name: str
    evidence: str
    kind: Kind
    lower: int = 0
    upper: int | None = None
    tolerance: str = ""

    def allows(self, types: Sequence[tuple[AtomType | FragmentType, int]]) -> bool:
        """Whether some structure of these vertex types can satisfy the limit.

        Parameters
        ----------
        types : sequence of (AtomType or FragmentType, int)

        Returns
        -------
        bool
        """
        low, high = self.kind.type_range(types)
        return high >= self.lower and (self.upper is None or low <= self.upper)

    def settled(self, types: Sequence[tuple[AtomType | FragmentType, int]]) -> bool:
        """Whether every structure of these vertex types satisfies the limit (no check of built ones needed)."""
        low, high = self.kind.type_range(types)
        return low >= self.lower and (self.upper is None or high <= self.upper)

    def holds(self, mol: Chem.Mol) -> bool:
        """Whether a built structure satisfies the limit."""
        n = self.kind.count(mol)
        return n >= self.lower and (self.upper is None or n <= self.upper)

    @property
    def claim(self) -> str:
        """The limit as the user reads it, e.g. ``13C: CH3: 2 to 3``."""
        if self.upper is None:
            return f"{self.name}: at least {self.lower}"
        if self.lower == self.upper:
            return f"{self.name}: exactly {self.lower}"
        return f"{self.name}: {self.lower} to {self.upper}" if self.lower else f"{self.name}: at most {self.upper}"


class _Row:
    """One row of ``rules/constraints.tsv``."""

    def __init__(self, r: dict[str, str]) -> None:
        self.id, self.name, self.kind, self.bound = r["id"], r["name"], r["kind"], r["bound"]
        self.counts = r["counts"]
        self.n_h = tuple(int(x) for x in r["n_h"].split(",") if x.strip())
        self.low = float(r["low"]) if r["low"] else None
        self.high = float(r["high"]) if r["high"] else None
        self.peak_types = tuple(_TYPE_CODES[x.strip()] for x in r["peak_types"].split(",") if x.strip())
        self.tolerance = int(r["tolerance"]) if r["tolerance"] else 0

    def target(self) -> Kind:
        return _target(self.counts, self.n_h)


def _target(counts: str, n_h: tuple[int, ...]) -> Kind:
    """The kind a table row's ``counts`` and ``n_h`` cells name (see the headers of the constraint tables)."""
    hydrogens = n_h or None
    return {
        "any": Kind(hydrogens=hydrogens),
        "dbl": Kind(hydrogens=hydrogens, double_bond=True),
        "triple": Kind(hydrogens=hydrogens, triple_bond=True, smarts=_NOT_YNOL_BETA),
        "carbonyl": Kind(hydrogens=hydrogens, smarts="[#6;$([#6]=[#8]);!$([#6](=*)=*)]"),
        "c_x": Kind(hydrogens=hydrogens, smarts="[#6;$([#6]=[#7,#8,#16]),$([#6](=*)=*),$([#6](=[#6])-[#7,#8])]"),
        "ox": Kind(hydrogens=hydrogens, smarts="[CX4;$(C[#7,#8])]"),
        "o_sp3": Kind(hydrogens=hydrogens, smarts="[CX4;$(C[#8]);!$(C[F,Cl,Br,I])]"),
        "cho": Kind(hydrogens=hydrogens, smarts="[CX3H1](=O)[#6,#1]"),
    }[counts]


_TYPE_CODES = {"C": 0, "CH": 1, "CH2": 2, "CH3": 3}

_NOT_YNOL_BETA = "[#6;!$([#6]#[#6]-[#7,#8,#16])]"
"""Leaves out the shielded beta carbon of C#C-O, C#C-N and C#C-S (about 25-40 ppm)."""


@cache
def constraint_rules() -> tuple[_Row, ...]:
    """The rows of ``rules/constraints.tsv`` (settings and windows), in table order."""
    return tuple(_Row(r) for r in read_table("constraints"))


def _setting(name: str) -> int:
    return next(r.tolerance for r in constraint_rules() if r.kind == "setting" and r.id == name)


def limit_rows() -> dict[str, str]:
    """Limit name -> the ``rules/constraints.tsv`` row id it comes from (region rows), for tests and reports."""
    return {f"13C: {r.name}": r.id for r in constraint_rules() if r.kind == "region"}


def _caption(shift: float, n_h: int | None) -> str:
    return f"{shift:.1f}" if n_h is None else f"{shift:.1f} ({_TYPE_NAMES[n_h]})"


def carbon_limits(formula: Formula, peaks: Sequence, *, missing: int | None = None,
                  shared: int | None = None, mistyped: int | None = None) -> tuple[Limit, ...]:
    """The limits a 13C peak list sets on the carbons of every structure of the formula.

    Parameters
    ----------
    formula : Formula
    peaks : sequence of (float, int or None), or of peaks with ``.shift``, ``.n_h`` (and ``.carbons``)
        Shift (ppm) and DEPT type (H on the carbon, 0-3; None when not given) of each line,
        as ``rank.spectra.CarbonPeak`` gives them; a line written with its carbon count (``2C``)
        counts that many carbons.  Solvent lines must be left out.
    missing, shared, mistyped : int, optional
        Tolerances (default: the settings of ``rules/constraints.tsv``): quaternary carbons the
        list may miss, peaks that may each hold two inequivalent carbons, DEPT types that may
        be wrong.

    Returns
    -------
    tuple of Limit
        Only limits that bound something: per H count (typed peaks), per window of
        ``rules/constraints.tsv``, and on carbon environments.  Empty when the list has more
        peaks than the formula has carbons (it holds foreign peaks, and no bound is sound).

    Notes
    -----
    With DEPT types, a typed peak stands for at least one carbon of its H count, and a
    count can pass the number of its peaks only by carbons hidden in peaks: at most the
    formula's carbons minus the peaks (symmetric carbons merge, two carbons may coincide,
    a missing quaternary carbon is one more carbon than peaks).
    """
    missing = _setting("missing") if missing is None else missing
    shared = _setting("shared") if shared is None else shared
    mistyped = _setting("mistyped") if mistyped is None else mistyped
    lines = [_line(p) for p in peaks]
    # a line written with its carbon count (2C) stands for that many carbons; environments count lines
    peaks = [(s, n) for s, n, k in lines for _ in range(k)]
    carbons = formula["C"]
    hidden = carbons - len(peaks)
    if not peaks or hidden < 0:
        return ()
    untyped = sum(n is None for _, n in peaks)
    limits = []
    hidden_note = f"{hidden} more carbon{'s' if hidden != 1 else ''} may hide in peaks"
    if untyped < len(peaks):
        for h in range(4):
            own = [_caption(s, n) for s, n in peaks if n == h]
            lower = max(0, len(own) - mistyped)
            upper = min(carbons, len(own) + untyped + hidden + mistyped)
            evidence = f"{len(own)} {_TYPE_NAMES[h]} peak{'s' if len(own) != 1 else ''} of {len(peaks)} for C{carbons}"
            limits.append(Limit(f"13C: {_KIND_NAMES[h]}", f"{evidence}; {hidden_note}", Kind(hydrogens=(h,)),
                                lower, upper, f"{mistyped} wrong DEPT types" if mistyped else "none beyond hidden"))
    for row in constraint_rules():
        if row.kind != "region":
            continue
        limit = _region_limit(row, peaks, hidden, carbons, formula["I"])
        if limit is not None:
            limits.append(limit)
    if carbons <= _setting("environments"):
        limits.extend(_environment_limits([(s, n) for s, n, _ in lines], carbons, missing, shared, untyped))
    return tuple(lim for lim in limits if lim.lower > 0 or (lim.upper is not None and lim.upper < carbons))


def _line(peak) -> tuple[float, int | None, int]:
    """(shift, H count or None, carbons) of a (shift, n_h) pair or of a peak with ``.shift``, ``.n_h``
    and optionally ``.carbons`` (None: one)."""
    if hasattr(peak, "shift"):
        return float(peak.shift), peak.n_h, getattr(peak, "carbons", None) or 1
    shift, n_h = peak
    return float(shift), n_h, 1


def _region_limit(row: _Row, peaks: list[tuple[float, int | None]], hidden: int, carbons: int,
                  iodine: int) -> Limit | None:
    inside = [(s, n) for s, n in peaks if row.low <= s <= row.high]
    if row.bound == "lower":
        if row.peak_types:
            used = [(s, n) for s, n in inside if n in row.peak_types]
        else:
            used = inside
        lower = len(used) - row.tolerance
        if lower <= 0:
            return None
        evidence = ", ".join(_caption(s, n) for s, n in used)
        return Limit(f"13C: {row.name}", evidence, row.target(), lower=lower,
                     tolerance=f"{row.tolerance} peak{'s' if row.tolerance != 1 else ''} of another kind in "
                               f"{row.low:g}-{row.high:g} ppm")
    used = [(s, n) for s, n in inside if not row.peak_types or n is None or n in row.peak_types]
    heavy = iodine if row.counts in ("dbl", "triple") else 0
    upper = len(used) + hidden + row.tolerance + heavy
    if upper >= carbons:
        return None
    evidence = (f"{len(used)} peak{'s' if len(used) != 1 else ''} in {row.low:g}-{row.high:g} ppm"
                + (f" ({', '.join(_caption(s, n) for s, n in used)})" if used else "")
                + f"; {hidden} more carbon{'s' if hidden != 1 else ''} may hide in peaks")
    tolerance = f"{row.tolerance} outside the window" if row.tolerance else "the window's generous edges"
    if heavy:
        tolerance += f"; {heavy} carbon{'s' if heavy != 1 else ''} on iodine outside it"
    return Limit(f"13C: {row.name}", evidence, row.target(), upper=upper, tolerance=tolerance)


def _environment_limits(peaks: list[tuple[float, int | None]], carbons: int, missing: int, shared: int,
                        untyped: int) -> list[Limit]:
    """Carbon environments (symmetry classes): at most one per peak, plus coinciding and missing carbons."""
    tolerance = f"{shared} peak{'s' if shared != 1 else ''} holding two carbons, {missing} quaternary C missing"
    limits = [Limit("13C: carbon environments", f"{len(peaks)} peaks for C{carbons}",
                    Kind(environments=True), upper=len(peaks) + shared + missing, tolerance=tolerance)]
    if untyped == 0:
        for h in range(4):
            own = sum(n == h for _, n in peaks)
            upper = own + shared + (missing if h == 0 else 0)
            limits.append(Limit(f"13C: {_KIND_NAMES[h]} environments", f"{own} {_TYPE_NAMES[h]} peaks",
                                Kind(hydrogens=(h,), environments=True), upper=upper, tolerance=tolerance))
    return limits


def hint_limit(hint) -> Limit | None:
    """A count hint of ``rules/hints.tsv`` (at least ``min_atoms`` carbons with ``hydrogens`` H,
    on a double bond when ``double_bond``) written as a limit; None for other hints.

    Parameters
    ----------
    hint : Hint

    Returns
    -------
    Limit or None
    """
    if hint.hydrogens is None or hint.fragments or hint.smarts:
        return None
    kind = Kind(hydrogens=(hint.hydrogens,), double_bond=True if hint.double_bond else None)
    return Limit(hint.name, hint.evidence, kind, lower=hint.min_atoms, tolerance="a rule of thumb (rules/hints.tsv)")


# ------------------------------------------------------------------- 1H ----


class _ProtonRow(NamedTuple):
    """One row of ``rules/proton_constraints.tsv``."""

    id: str
    name: str
    kind: Kind
    bound: str
    low: float
    high: float
    h_per_atom: int
    labile: bool
    tolerance: int


@cache
def proton_rules() -> tuple[_ProtonRow, ...]:
    """The rows of ``rules/proton_constraints.tsv``, in table order."""
    return tuple(_ProtonRow(r["id"], r["name"], _target(r["counts"], tuple(int(x) for x in r["n_h"].split(",") if x)),
                            r["bound"], float(r["low"]), float(r["high"]), int(r["h_per_atom"]), r["labile"] == "yes",
                            int(r["tolerance"] or 0))
                 for r in read_table("proton_constraints"))


def proton_limits(formula: Formula, peaks: Sequence, readings: Sequence[tuple[Sequence[int], int]],
                  labile: int) -> tuple[Limit, ...]:
    """The limits a 1H peak list sets on the carbons of every structure of the formula.

    Parameters
    ----------
    formula : Formula
    peaks : sequence of peaks with ``.low`` and ``.high`` (ppm), as ``rank.spectra.Peak`` gives them;
        solvent signals left out.
    readings : sequence of (H count per peak, H not observed)
        Every reading of the integrals the scoring tries (``rank.spectra.Normalisation`` ``counts``
        and ``missing``); a bound holds for the loosest of them.
    labile : int
        The most exchangeable H (OH, NH, SH) the formula can hold (``rank.spectra.exchangeable_bound``).

    Returns
    -------
    tuple of Limit
        Only limits that bound something, per row of ``rules/proton_constraints.tsv``.
    """
    carbons = formula["C"]
    limits = []
    for row in proton_rules():
        bounds = [_proton_bound(row, peaks, counts, missing, labile) for counts, missing in readings]
        if not bounds:
            continue
        if row.bound == "upper":
            bound = max(b for b, _ in bounds)
            if bound >= carbons:
                continue
            limit = Limit(f"1H: {row.name}", max(bounds)[1], row.kind, upper=bound,
                          tolerance=_proton_tolerance(row))
        else:
            bound = min(b for b, _ in bounds)
            if bound <= 0:
                continue
            limit = Limit(f"1H: {row.name}", min(bounds)[1], row.kind, lower=bound, tolerance=_proton_tolerance(row))
        limits.append(limit)
    return tuple(limits)


def _proton_bound(row: _ProtonRow, peaks: Sequence, counts: Sequence[int], missing: int,
                  labile: int) -> tuple[int, str]:
    """The bound of one row under one reading of the integrals, with its evidence."""
    where = f"{row.low:g} to {row.high:g} ppm"
    if row.bound == "upper":
        h = sum(c for p, c in zip(peaks, counts) if p.high >= row.low and p.low <= row.high)
        unseen = f", {missing} H not observed" if missing else ""
        return (h + missing + row.tolerance) // row.h_per_atom, f"{h} H in {where}{unseen}"
    h = sum(c for p, c in zip(peaks, counts) if p.low >= row.low and p.high <= row.high)
    exchangeable = max(0, labile - missing) if row.labile else 0
    return -(-(h - exchangeable - row.tolerance) // row.h_per_atom), \
        f"{h} H in {where}" + (f", of which up to {exchangeable} may be OH/NH/SH" if exchangeable else "")


def _proton_tolerance(row: _ProtonRow) -> str:
    parts = ["the window's generous edges"]
    if row.labile:
        parts.append("exchangeable H")
    if row.tolerance:
        parts.append(f"{row.tolerance} H of another kind")
    return "; ".join(parts)
