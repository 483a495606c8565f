"""Constitutional isomers of a molecular formula, streamed without repeats.

The formula is split into atom types: an element in one valence state with a
fixed number of hydrogens, hence a fixed number of bonds to heavy atoms.  For
every way of sharing the hydrogens among the atoms, the compiled core
(``rank/generate/_enum.c``) grows connected multigraphs one atom at a time and keeps a
prefix only when its bond matrix is the lexicographic maximum over relabellings
(an orderly method: R. C. Read, Ann. Discrete Math. 1978, 2, 107).  No set of
seen structures is kept, so memory stays bounded whatever the count.

Two Kekule forms of one aromatic ring are one compound.  A structure that has an
alternating cycle (a second Kekule form) is kept only when it is the form that
RDKit gives back on reading its own canonical SMILES.

>>> sorted(s.smiles for s in IsomerStream("C2H6O", complete=True))
['CCO', 'COC']
"""

from __future__ import annotations

import time
from collections import Counter
from collections.abc import Iterable, Iterator
from dataclasses import dataclass
from functools import cache, cached_property
from itertools import combinations_with_replacement, product
from typing import NamedTuple

from rdkit import Chem, RDLogger

from ..errors import InputError
from ..formula import Formula, parse_formula
from ..tables import read_table
from . import _enum
from .fragment import Fragment, FragmentType, is_canonical_placement

RDLogger.DisableLog("rdApp.*")

DEFAULT_CEILING = 2_000_000
"""Largest estimated space a run starts without being asked (``--ceiling``)."""

HOPELESS = 10**10
"""Estimated structures beyond which no run can finish: the generator builds about 10^4
structures per second in the default space (``benchmarks/generator.py``), so this many take
weeks, and lifting the ceiling is no advice worth giving."""

REFUSAL_SECONDS = 2.0
"""Time a refusal spends sharpening its estimate after the space is known to pass the ceiling."""

MAX_HEAVY_ATOMS = 40
_BATCH = 2048
_BOND = {1: Chem.BondType.SINGLE, 2: Chem.BondType.DOUBLE, 3: Chem.BondType.TRIPLE}


@dataclass(frozen=True)
class AtomState:
    """An element in one valence state (``rules/valences.tsv``)."""

    id: str
    element: str
    valence: int
    charge: int
    extra: bool


@dataclass(frozen=True)
class AtomType:
    """An atom state with a fixed hydrogen count; ``degree`` bonds go to heavy atoms."""

    state: AtomState
    hydrogens: int
    double_bond: bool | None = None
    """True: the atom carries a double bond; False: it carries none; None: either."""

    @property
    def degree(self) -> int:
        return self.state.valence - self.hydrogens


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
def atom_states() -> tuple[AtomState, ...]:
    """The valence states of ``rules/valences.tsv``."""
    return tuple(
        AtomState(r["id"], r["element"], int(r["valence"]), int(r["charge"]), r["state"] == "extra")
        for r in read_table("valences")
    )


@cache
def plausibility_filters() -> tuple[Filter, ...]:
    """The rows of ``rules/filters.tsv``, SMARTS compiled."""
    rows = []
    for r in read_table("filters"):
        pattern = Chem.MolFromSmarts(r["smarts"])
        if pattern is None:
            raise ValueError(f"rules/filters.tsv row {r['id']}: bad SMARTS {r['smarts']!r}")
        rows.append(Filter(r["id"], pattern, r["reason"]))
    return tuple(rows)


class SpaceTooLarge(InputError):
    """The estimated space of a formula is above the ceiling.

    Attributes
    ----------
    formula : the formula (Hill order).
    estimate : the estimated structures to build; a lower bound when ``at_least``.
    ceiling : the limit that was passed.
    at_least : True when the estimate stopped early (time, or past :data:`HOPELESS`).
    """

    def __init__(self, formula: str, estimate: float, ceiling: int, at_least: bool, advice: str = "") -> None:
        self.formula, self.estimate, self.ceiling, self.at_least = formula, estimate, ceiling, at_least
        if not advice:
            advice = ("to rank suspects against a spectrum, give them to peakrank identify --candidates FILE"
                      if self.hopeless else "narrow it with --require/--forbid, or pass --ceiling 0 to lift it")
        self.advice = advice
        size = f"{'more than' if at_least else 'about'} {_figure(estimate)} structures to build"
        if self.hopeless:
            text = f"{formula}: {size}, far too many for any run (--ceiling 0 would not finish); {advice}"
        else:
            text = f"{formula}: {size}, above the limit of {ceiling:,}; {advice}"
        super().__init__(text)

    @property
    def hopeless(self) -> bool:
        """True when the space is beyond :data:`HOPELESS`: only a list of suspects helps."""
        return self.estimate >= HOPELESS

    def with_advice(self, advice: str) -> SpaceTooLarge:
        """The same refusal with other advice (the command that refuses knows what works there)."""
        return SpaceTooLarge(self.formula, self.estimate, self.ceiling, self.at_least, advice)


def _figure(x: float) -> str:
    """An estimate to two figures as a chemist writes it: 3,400,000 or 2.8e10."""
    if x < 1e7:
        return f"{float(f'{x:.2g}'):,.0f}"
    mantissa, exponent = f"{x:.1e}".split("e")
    return f"{mantissa}e{int(exponent)}"


def compile_smarts(text: str, what: str = "SMARTS") -> Chem.Mol:
    """Compile a user's SMARTS or raise InputError with a one-line reason."""
    pattern = Chem.MolFromSmarts(text) if text and text.strip() else None
    if pattern is None or pattern.GetNumAtoms() == 0:
        raise InputError(f"{what} {text!r} is not valid SMARTS (example: 'C(=O)O' or '[OH]')")
    return pattern


# ---------------------------------------------------------------- pruning ----
# A user's SMARTS prunes before structures are built only where the answer is
# already fixed by the atom types: one-atom patterns over element number, total
# H count and charge, and forbidden triple bonds between atoms given by element
# number (``[#6]#[#7]``); SMARTS ``C`` or ``c`` depends on aromaticity, which is
# known only for the finished structure.


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


def _atom_truth(pattern: Chem.Mol, index: int, t: AtomType | FragmentType) -> bool | None:
    atom = pattern.GetAtomWithIdx(index)
    if isinstance(t, FragmentType) or not atom.HasQuery():
        return None
    lines = [ln for ln in atom.DescribeQuery().splitlines() if ln.strip()]
    return _evaluate(lines, t)


def _triple_bond_pattern(pattern: Chem.Mol) -> bool:
    if pattern.GetNumAtoms() != 2 or pattern.GetNumBonds() != 1:
        return False
    text = pattern.GetBondWithIdx(0).DescribeQuery().split()
    return text[:2] == ["BondOrder", "3"] and "!=" not in text


# ------------------------------------------------------------------ space ----


def _state_choices(formula: Formula, complete: bool) -> Iterator[dict[AtomState, int]]:
    """Charge-balanced assignments of valence states to the heavy atoms."""
    per_element = []
    for element, n in formula.counts:
        if element == "H":
            continue
        states = [s for s in atom_states() if s.element == element and (not s.extra or not complete)]
        per_element.append([dict(zip(states, c)) for c in _compositions(n, len(states))])
    for parts in product(*per_element):
        merged = {s: c for part in parts for s, c in part.items() if c}
        if sum(s.charge * c for s, c in merged.items()) == 0:
            yield merged


def _compositions(n: int, k: int) -> Iterator[tuple[int, ...]]:
    if k == 1:
        yield (n,)
        return
    for first in range(n, -1, -1):
        for rest in _compositions(n - first, k - 1):
            yield (first, *rest)


def _multisets(count: int, hmax: int, total: int) -> Iterator[tuple[int, ...]]:
    """Non-increasing tuples of ``count`` values in 0..hmax summing to ``total``."""
    if count == 0:
        if total == 0:
            yield ()
        return
    for h in range(min(hmax, total), -1, -1):
        if h * count < total:
            break
        for rest in _multisets(count - 1, h, total - h):
            yield (h, *rest)


def _hydrogen_shares(
    groups: list[tuple[AtomState, int]], hydrogens: int, single: bool
) -> Iterator[Counter]:
    if not groups:
        if hydrogens == 0:
            yield Counter()
        return
    (state, count), rest = groups[0], groups[1:]
    hmax = state.valence if single else state.valence - 1
    for share in range(min(hydrogens, hmax * count), -1, -1):
        for tup in _multisets(count, hmax, share):
            for tail in _hydrogen_shares(rest, hydrogens - share, single):
                yield Counter(AtomType(state, h) for h in tup) + tail


class IsomerStream:
    """The constitutional isomers of a formula, as a lazy stream.

    Parameters
    ----------
    formula : str or Formula
    complete : bool
        True: every connected structure with standard valences, neutral, no
        filters (``isomers --all``).  False: adds the charge-separated and
        hypervalent states of ``rules/valences.tsv`` and removes the motifs of
        ``rules/filters.tsv``.
    require, forbid : iterable of str
        SMARTS every structure must match / must not match.
    ceiling : int
        Refuse (:class:`SpaceTooLarge`, an InputError) when the estimated space is
        larger; 0 lifts it.  See :meth:`check_ceiling`.
    budget : float, optional
        Seconds after which the stream stops; ``complete_run`` then says False.
    hints : iterable of rank.generate.Hint
        Claims read from a spectrum; a hydrogen distribution that cannot satisfy
        one is skipped, a structure that misses a hint's SMARTS is dropped, and
        both are counted in ``hinted`` (hint name -> structures, estimated for
        skipped distributions).

    Notes
    -----
    After iteration, ``explored`` counts structures built, ``removed`` counts
    structures per filter id, ``rejected`` structures per user pattern (``"--require
    'C=O'"``: built, then left out), ``pruned`` hydrogen distributions a one-atom
    pattern ruled out before building, and ``complete_run`` tells whether the space
    was exhausted.
    """

    def __init__(
        self,
        formula: str | Formula,
        *,
        complete: bool = False,
        require: Iterable[str] = (),
        forbid: Iterable[str] = (),
        ceiling: int = DEFAULT_CEILING,
        budget: float | None = None,
        hints: Iterable = (),
    ) -> None:
        self.formula = formula if isinstance(formula, Formula) else parse_formula(formula)
        if self.formula.heavy_atoms > MAX_HEAVY_ATOMS:
            raise InputError(f"formula has {self.formula.heavy_atoms} heavy atoms; at most {MAX_HEAVY_ATOMS}")
        if ceiling < 0:
            raise InputError("the ceiling must be 0 (no limit) or a positive number of structures")
        if budget is not None and budget <= 0:
            raise InputError("the time budget must be a positive number of seconds")
        self.complete = complete
        self.require = tuple(require)
        self.forbid = tuple(forbid)
        self._require = [compile_smarts(s, "--require") for s in self.require]
        self._forbid = [compile_smarts(s, "--forbid") for s in self.forbid]
        self.ceiling = ceiling
        self.budget = budget
        self.hints = tuple(hints)
        self._hint_patterns = [(h.name, h.pattern()) for h in self.hints if h.smarts]
        self.hinted: Counter = Counter()
        self.explored = 0
        self.removed: Counter = Counter()
        self.rejected: Counter = Counter()
        self.pruned: Counter = Counter()
        self.complete_run = False

    # -- the runs of the compiled core ------------------------------------------

    def runs(self) -> Iterator[list[tuple[AtomType | FragmentType, int]]]:
        """The hydrogen distributions the compiled core will search, as [(AtomType, count), ...].

        A hint that names a group (``Hint.fragments``) contracts one copy of it to a
        single vertex (a FragmentType); what the contraction removes is estimated
        hint by hint and counted in ``hinted``.
        """
        self.hinted.update(self._removed_by_groups)
        yield from self._runs(self._group_hints, True)

    @cached_property
    def _removed_by_groups(self) -> Counter:
        """Estimated structures each group hint removes, taking the group hints one by one."""
        grouped = self._group_hints
        levels = [sum(self._enumerator(types).estimate(16, 1) for types in self._runs(grouped[:k], False))
                  for k in range(len(grouped) + 1)] if grouped else []
        return Counter({h.name: max(0, round(before - after))
                        for h, before, after in zip(grouped, levels, levels[1:])})

    def _runs(self, grouped: list, tally: bool) -> Iterator[list[tuple[AtomType | FragmentType, int]]]:
        for formula, groups in _contractions(self.formula, grouped):
            single = formula.heavy_atoms + len(groups) == 1
            for states in _state_choices(formula, self.complete):
                ordered = sorted(states.items(), key=lambda sc: sc[0].id)
                for share in _hydrogen_shares(ordered, formula["H"], single):
                    types = sorted([*share.items(), *groups], key=lambda tc: _type_key(tc[0]), reverse=True)
                    if not self._feasible(types, single):
                        continue
                    pruned = self._pruned_by(types)
                    if pruned is not None:
                        if tally:
                            self.pruned[pruned] += 1
                        continue
                    refused = next((h for h in self.hints if not h.allows(types)), None)
                    if refused is not None:
                        if tally:
                            self.hinted[refused.name] += round(self._enumerator(types).estimate(16, 1))
                        continue
                    yield from self._split_by_double_bonds(types, tally)

    def _split_by_double_bonds(self, types: list, tally: bool = True) -> Iterator[list]:
        """Apply hints that put hydrogens on doubly bonded carbons.

        Carbons with h H become two types, with and without a double bond; one run per
        split with at least the hinted number on a double bond.  The runs are disjoint
        and cover every structure that satisfies the hint.
        """
        claims = [h for h in self.hints if getattr(h, "double_bond", False) and h.hydrogens is not None]
        if not claims:
            yield types
            return
        claim = max(claims, key=lambda h: h.min_atoms)
        need = claim.min_atoms - sum(t.fragment.carbons(claim.hydrogens, True) * c
                                     for t, c in types if isinstance(t, FragmentType))
        target = next(((t, c) for t, c in types if isinstance(t, AtomType) and t.state.element == "C"
                       and t.hydrogens == claim.hydrogens and t.double_bond is None), None)
        if target is None or need <= 0:
            yield types
            return
        t, c = target
        rest = [tc for tc in types if tc != target]
        kept = []
        for k in range(need, c + 1):
            parts = rest + [(AtomType(t.state, t.hydrogens, True), k), (AtomType(t.state, t.hydrogens, False), c - k)]
            kept.append(sorted([(a, n) for a, n in parts if n], key=lambda tc: _type_key(tc[0]), reverse=True))
        if tally:
            whole = self._enumerator(types).estimate(16, 1)
            left = sum(self._enumerator(x).estimate(16, 1) for x in kept)
            self.hinted[claim.name] += max(0, round(whole - left))
        yield from kept

    @staticmethod
    def _feasible(types: list[tuple[AtomType, int]], single: bool) -> bool:
        if single:
            return types[0][0].degree == 0
        total = sum(t.degree * c for t, c in types)
        n = sum(c for _, c in types)
        return all(t.degree >= 1 for t, _ in types) and total % 2 == 0 and total // 2 >= n - 1

    def _pruned_by(self, types: list[tuple[AtomType, int]]) -> str | None:
        """The option (e.g. ``--require '[NH2]'``) that rules out every structure of these types, if any."""
        for text, p in zip(self.require, self._require):
            if p.GetNumAtoms() == 1 and all(_atom_truth(p, 0, t) is False for t, _ in types):
                return f"--require {text!r}"
        for text, p in zip(self.forbid, self._forbid):
            if p.GetNumAtoms() == 1 and any(_atom_truth(p, 0, t) is True for t, _ in types):
                return f"--forbid {text!r}"
        return None

    def _enumerator(self, types: list[tuple[AtomType, int]], part: int = 0, parts: int = 1) -> _enum.Enumerator:
        size = len(types)
        forbid = bytearray(size * size)
        for p in self._forbid:
            if not _triple_bond_pattern(p):
                continue
            for i, (a, _) in enumerate(types):
                for j, (b, _) in enumerate(types):
                    if (_atom_truth(p, 0, a) and _atom_truth(p, 1, b)) or (
                        _atom_truth(p, 1, a) and _atom_truth(p, 0, b)
                    ):
                        forbid[i * size + j] |= 1 << 3
        for i, (a, _) in enumerate(types):
            # no double bond on this atom; a contracted group has single bonds only
            closed = (1 << 2) | (1 << 3) if isinstance(a, FragmentType) else 1 << 2 if a.double_bond is False else 0
            for j in range(size):
                forbid[i * size + j] |= closed
                forbid[j * size + i] |= closed
        return _enum.Enumerator(
            [size - i for i in range(size)],
            [t.degree for t, _ in types],
            [c for _, c in types],
            bytes(forbid),
            part=part,
            parts=parts,
            needs_double=[isinstance(t, AtomType) and bool(t.double_bond) for t, _ in types],
        )

    # -- public verbs --------------------------------------------------------------

    def estimate(self, probes: int = 64, seed: int = 1) -> float:
        """Knuth's random-probe estimate of the structures the core will build.

        References
        ----------
        D. E. Knuth, "Estimating the efficiency of backtrack programs",
        Math. Comp. 1975, 29, 121. doi:10.1090/S0025-5718-1975-0373371-6
        """
        return sum(self._enumerator(types).estimate(probes, seed) for types in self.runs())

    def check_ceiling(self) -> None:
        """Raise :class:`SpaceTooLarge` when the estimate of the space is above the ceiling.

        The per-run estimates of :meth:`estimate` are summed only until the sum passes
        the ceiling (every term is at least 0, so the whole is then above it too); the
        refusal then spends at most :data:`REFUSAL_SECONDS` carrying the sum on with
        fewer probes, to say roughly how far above, and stops at :data:`HOPELESS`.
        """
        if not self.ceiling:
            return
        runs = self._runs(self._group_hints, False)
        total = 0.0
        for types in runs:
            total += self._enumerator(types).estimate(64, 1)
            if total > self.ceiling:
                break
        else:
            return
        deadline = time.monotonic() + REFUSAL_SECONDS
        at_least = False
        for types in runs:
            if total >= HOPELESS or time.monotonic() > deadline:
                at_least = True
                break
            total += self._enumerator(types).estimate(4, 1)
        raise SpaceTooLarge(self.formula.hill, total, self.ceiling, at_least)

    @property
    def _group_hints(self) -> list:
        return [h for h in self.hints if h.fragments]

    def __iter__(self) -> Iterator[Isomer]:
        self.check_ceiling()
        self.explored, self.removed, self.complete_run = 0, Counter(), False
        self.hinted, self.rejected, self.pruned = Counter(), Counter(), Counter()
        deadline = None if self.budget is None else time.time() + self.budget
        for types in self.runs():
            yield from self.stream_run(types, deadline=deadline)
            if deadline is not None and time.time() > deadline:
                return
        self.complete_run = True

    def stream_run(self, types: list[tuple[AtomType, int]], part: int = 0, parts: int = 1,
                   deadline: float | None = None) -> Iterator[Isomer]:
        """The isomers of one hydrogen distribution, or of share ``part`` of ``parts`` of it.

        The shares are disjoint and together complete, and the same in any
        process, so they can be searched in parallel.  ``deadline`` is a
        ``time.time()`` value after which the stream stops.
        """
        core = self._enumerator(types, part, parts)
        kinds = [t for t, _ in types]
        while deadline is None or time.time() <= deadline:
            _, records = core.next_batch(_BATCH)
            if not records:
                return
            for record in records:
                self.explored += 1
                isomer = self._accept(kinds, record)
                if isomer is not None:
                    yield isomer

    def count(self) -> int:
        """Number of isomers; in the complete space without patterns, only
        structures with a second Kekule form are built in Python."""
        if not self.complete or self._require or self._forbid or self.hints:
            return sum(1 for _ in self)
        self.check_ceiling()
        self.explored, self.complete_run = 0, False
        deadline = None if self.budget is None else time.time() + self.budget
        total = 0
        for types in self.runs():
            core = self._enumerator(types)
            kinds = [t for t, _ in types]
            while True:
                if deadline is not None and time.time() > deadline:
                    return total
                skipped, records = core.next_batch(_BATCH, True)
                if not records and not skipped:
                    break
                total += skipped
                self.explored += skipped + len(records)
                total += sum(1 for r in records if self._accept(kinds, r) is not None)
        self.complete_run = True
        return total

    # -- one structure ---------------------------------------------------------

    def _accept(self, kinds: list, record: bytes) -> Isomer | None:
        mol, copies = _assemble(kinds, record, expand=True)
        if mol is None:
            return None
        smiles = None
        if copies:
            # the Kekule forms to merge are those of the contracted graph: the groups'
            # own rings are always written in one form, and their bonds out are single
            if record[-1] and not _is_kekule_representative(_assemble(kinds, record, expand=False)[0],
                                                            _assemble(kinds, record, False, False)[0]):
                return None
            if not is_canonical_placement(mol, copies):
                return None
        elif record[-1]:
            smiles = Chem.MolToSmiles(mol)
            if not _is_kekule_representative(mol, build_molecule(kinds, record, aromatize=False), smiles):
                return None
        # the user's patterns and the hints first: they are the most selective
        for text, p in zip(self.require, self._require):
            if not mol.HasSubstructMatch(p):
                self.rejected[f"--require {text!r}"] += 1
                return None
        for text, p in zip(self.forbid, self._forbid):
            if mol.HasSubstructMatch(p):
                self.rejected[f"--forbid {text!r}"] += 1
                return None
        for name, pattern in self._hint_patterns:
            if not mol.HasSubstructMatch(pattern):
                self.hinted[name] += 1
                return None
        if not self.complete:
            for f in plausibility_filters():
                if mol.HasSubstructMatch(f.pattern):
                    self.removed[f.id] += 1
                    return None
        return Isomer(smiles or Chem.MolToSmiles(mol), mol)


def _type_key(t: AtomType | FragmentType) -> tuple:
    if isinstance(t, FragmentType):
        return t.sort_key()
    return (t.degree, t.state.valence, -t.hydrogens, t.state.id, {None: 0, True: 1, False: -1}[t.double_bond])


_STAND_IN_ISOTOPE = 200
"""A contracted group drawn unexpanded is a saturated carbon labelled with this mass plus its type index."""


def _assemble(kinds: list, record: bytes, expand: bool = True,
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


def build_molecule(kinds: list, record: bytes, aromatize: bool = True) -> Chem.Mol | None:
    """An RDKit molecule from one record of the compiled core (contracted groups expanded)."""
    return _assemble(kinds, record, True, aromatize)[0]


def _is_kekule_representative(mol: Chem.Mol, own: Chem.Mol, smiles: str | None = None) -> bool:
    """True when the Kekule form ``own`` of ``mol`` is the one RDKit reads back from its canonical SMILES."""
    if not any(a.GetIsAromatic() for a in mol.GetAtoms()):
        return True
    reference = Chem.MolFromSmiles(smiles or Chem.MolToSmiles(mol))
    Chem.Kekulize(reference, clearAromaticFlags=True)
    return Chem.MolToSmiles(own) == Chem.MolToSmiles(reference)


def _contractions(formula: Formula, grouped: list) -> Iterator[tuple[Formula, list[tuple[FragmentType, int]]]]:
    """For each choice of variants (``copies`` per group hint): the formula left after taking
    those copies out, and the contracted vertices."""
    if not grouped:
        yield formula, []
        return
    families = [tuple(Fragment(s) for s in h.fragments) for h in grouped]
    picks = [combinations_with_replacement(family, h.copies) for h, family in zip(grouped, families)]
    for choice in product(*picks):
        left = formula.minus(sum((f.formula_counts() for chosen in choice for f in chosen), Counter()))
        if left is None:
            continue
        merged = Counter(FragmentType(f, family) for chosen, family in zip(choice, families) for f in chosen)
        yield left, sorted(merged.items(), key=lambda tc: tc[0].sort_key())


def isomers(formula: str, **options) -> Iterator[str]:
    """Canonical SMILES of the isomers of ``formula``; options as :class:`IsomerStream`."""
    return (iso.smiles for iso in IsomerStream(formula, **options))
