"""Constitutional isomers of a molecular formula, streamed without repeats.

The formula is split into atom types: an element in one valence state with a
fixed number of hydrogens, hence a fixed number of bonds to heavy atoms.  For
every way of sharing the hydrogens among the atoms (the runs, ``plan.py``), the
compiled core (``rank/generate/_enum.c``, set up by ``core.py``) grows connected
multigraphs one atom at a time and keeps a prefix only when its bond matrix is the
lexicographic maximum over relabellings (an orderly method: R. C. Read, Ann.
Discrete Math. 1978, 2, 107).  No set of seen structures is kept, so memory stays
bounded whatever the count.

Two Kekule forms of one aromatic ring are one compound.  A structure that has an
alternating cycle (a second Kekule form) is kept only when it is the form that
RDKit gives back on reading its own canonical SMILES (``accept.py``).

>>> sorted(s.smiles for s in IsomerStream("C2H6O", complete=True))
['CCO', 'COC']
"""

from __future__ import annotations

import time
from collections import Counter
from collections.abc import Iterable, Iterator
from typing import NamedTuple, cast

from rdkit import Chem

from ..errors import InputError
from ..formula import Formula, parse_formula
from .accept import Acceptor, Isomer, Rejection, Why
from .constraints import Limit
from .core import CEILING_PROBES, MAX_DOUBLE_GROUPS, PLAN_PROBES, EnumeratorFactory, TypeCounts
from .hints import Hint
from .plan import Distribution, RunPlanner
from .smarts import compile_smarts

__all__ = ["DEFAULT_CEILING", "HOPELESS", "MAX_HEAVY_ATOMS", "REFUSAL_SECONDS", "IsomerStream", "Plan",
           "SpaceTooLarge"]

DEFAULT_CEILING = 2_000_000
"""Largest estimated space a run starts without being asked (``--ceiling``)."""

HOPELESS = 10**10
"""Estimated structures beyond which no run can finish: the generator builds about 10^4
structures per second in the default space (``benchmarks/generator.py``), so this many take
weeks, and lifting the ceiling is no advice worth giving."""

REFUSAL_SECONDS = 2.0
"""Time a refusal spends sharpening its estimate after the space is known to pass the ceiling."""

MAX_HEAVY_ATOMS = 40
"""Most heavy atoms the compiled core takes (``MAXN`` in ``_enum.c``)."""

_BATCH = 2048


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
        """The same refusal with other advice (the command that refuses knows what works there).

        Parameters
        ----------
        advice : str
            What to try instead, as the end of the one-line message.

        Returns
        -------
        SpaceTooLarge
        """
        return SpaceTooLarge(self.formula, self.estimate, self.ceiling, self.at_least, advice)


def _figure(x: float) -> str:
    """An estimate to two figures as a chemist writes it: 3,400,000 or 2.8e10."""
    if x < 1e7:
        return f"{float(f'{x:.2g}'):,.0f}"
    mantissa, exponent = f"{x:.1e}".split("e")
    return f"{mantissa}e{int(exponent)}"


class Plan(NamedTuple):
    """The work of a stream, planned before any structure is built."""

    runs: list[TypeCounts]
    """The runs of the compiled core, in order."""
    hinted: Counter
    """Hint or limit name -> estimated structures its planning removed (groups, distributions, splits)."""
    pruned: Counter
    """Option (``"--require '[NH2]'"``) -> hydrogen distributions it ruled out."""


class IsomerStream:
    """The constitutional isomers of a formula, as a lazy stream.

    Parameters
    ----------
    formula : str or Formula
    complete : bool, default False
        True: every connected structure with standard valences, neutral, no
        filters (``isomers --all``).  False: adds the charge-separated and
        hypervalent states of ``rules/valences.tsv`` and removes the motifs of
        ``rules/filters.tsv``.
    require, forbid : iterable of str, default ()
        SMARTS every structure must match / must not match.
    ceiling : int, default :data:`DEFAULT_CEILING`
        Refuse (:class:`SpaceTooLarge`, an InputError) when the estimated space is
        larger; 0 lifts it.  See :meth:`check_ceiling`.
    budget : float, optional
        Seconds after which the stream stops; ``complete_run`` then says False.
    hints : iterable of Hint, default ()
        Claims read from a spectrum; a hydrogen distribution that cannot satisfy
        one is skipped, a structure that misses a hint's SMARTS is dropped, and
        both are counted in ``hinted`` (hint name -> structures, estimated for
        skipped distributions).
    limits : iterable of Limit, default ()
        Bounds on atom counts (``rank.generate.constraints``, e.g. from a 13C list): a
        distribution that cannot satisfy one is skipped, double-bond flags and triple-bond
        bans narrow the runs where a bound leaves no choice, and each built structure is
        checked; what each removed is counted in ``hinted`` under its name, like a hint.

    Raises
    ------
    InputError
        Too many heavy atoms, a negative ceiling, a budget not above 0, or a bad SMARTS.

    Notes
    -----
    After iteration, ``explored`` counts structures built, ``removed`` counts
    structures per filter id, ``rejected`` structures per user pattern (``"--require
    'C=O'"``: built, then left out), ``pruned`` hydrogen distributions a one-atom
    pattern ruled out before building, and ``complete_run`` tells whether the space
    was exhausted.

    The work is done by a :class:`~rank.generate.plan.RunPlanner`, an
    :class:`~rank.generate.core.EnumeratorFactory` and an
    :class:`~rank.generate.accept.Acceptor`; the stream runs them against the budget
    (one loop, :meth:`_walk`, behind both iteration and :meth:`count`) and keeps the
    tallies.  The class runs past 80 lines because it is the generator's whole public
    interface (validation, planning, estimates, the ceiling, iteration, counting) with
    the docstrings that interface needs; each verb is a few lines over its parts.
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
        hints: Iterable[Hint] = (),
        limits: Iterable[Limit] = (),
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
        require_patterns = [(s, compile_smarts(s, "--require")) for s in self.require]
        forbid_patterns = [(s, compile_smarts(s, "--forbid")) for s in self.forbid]
        self.ceiling = ceiling
        self.budget = budget
        self.hints = tuple(hints)
        self.limits = tuple(limits)
        triple_ban = next((lim for lim in self.limits if lim.upper == 0 and lim.kind.triple_bond
                           and lim.kind.hydrogens is None and not lim.kind.environments), None)
        forbid_core = [p for _, p in forbid_patterns]
        plain = EnumeratorFactory(forbid_core)
        levels = []
        if triple_ban is not None:
            # the limit's kind leaves out the beta carbon of C#C-O, C#C-N, C#C-S: C#C is banned only without them
            banned = ["[#6]#[#7]"] + (["[#6]#[#6]"] if not any(self.formula[e] for e in "NOS") else [])
            forbid_core += [Chem.MolFromSmarts(s) for s in banned]
            levels.append((triple_ban.name, EnumeratorFactory(forbid_core)))
        double_limits = [lim for lim in self.limits if lim.kind.on_double_bonds][:MAX_DOUBLE_GROUPS]
        for k, lim in enumerate(double_limits, 1):
            levels.append((lim.name, EnumeratorFactory(forbid_core, double_limits[:k])))
        self._factory = levels[-1][1] if levels else plain
        self._planner = RunPlanner(self.formula, complete, self.hints, require_patterns, forbid_patterns,
                                   plain, self.limits, levels)
        self._acceptor = Acceptor(complete, require_patterns, forbid_patterns, self.hints, self.limits)
        self.hinted: Counter = Counter()
        self.explored = 0
        self.removed: Counter = Counter()
        self.rejected: Counter = Counter()
        self.pruned: Counter = Counter()
        self.complete_run = False

    # -- planning ----------------------------------------------------------------

    def runs(self) -> Iterator[TypeCounts]:
        """The runs the compiled core will search, as [(AtomType or FragmentType, count), ...].

        A hint that names a group (``Hint.fragments``) contracts its copies to single
        vertices (FragmentTypes).  Nothing is counted: see :meth:`plan`.

        Returns
        -------
        iterator of TypeCounts
        """
        return self._planner.runs()

    def plan(self) -> Plan:
        """The runs, with what planning them left out (the tallies iteration starts from).

        Returns
        -------
        Plan
        """
        hinted, pruned = Counter(), Counter()
        return Plan(list(self._planned_runs(hinted, pruned)), hinted, pruned)

    def _planned_runs(self, hinted: Counter, pruned: Counter) -> Iterator[TypeCounts]:
        """Every run of the plan in order, tallying into ``hinted`` and ``pruned`` what planning left out."""
        hinted.update(self._planner.group_removals)
        for d in self._planner.distributions():
            self._count_planned(d, hinted, pruned)
            yield from d.runs

    def estimate_run(self, types: TypeCounts, probes: int = PLAN_PROBES, seed: int = 1) -> float:
        """:meth:`EnumeratorFactory.estimate <rank.generate.core.EnumeratorFactory.estimate>` of one run."""
        return self._factory.estimate(types, probes, seed)

    def estimate(self, probes: int = CEILING_PROBES, seed: int = 1) -> float:
        """The sum of :meth:`estimate_run` over every run: the structures the core will build."""
        return sum(self._factory.estimate(types, probes, seed) for types in self.runs())

    def check_ceiling(self) -> None:
        """Raise :class:`SpaceTooLarge` when the estimate of the space is above the ceiling.

        The per-run estimates of :meth:`estimate` are summed only until the sum passes
        the ceiling (every term is at least 0, so the whole is then above it too); the
        refusal then spends at most :data:`REFUSAL_SECONDS` carrying the sum on with
        fewer probes, to say roughly how far above, and stops at :data:`HOPELESS`.

        Raises
        ------
        SpaceTooLarge
        """
        if self.ceiling:
            refusal = _refusal(self.formula.hill, self.runs(), self._factory, self.ceiling)
            if refusal is not None:
                raise refusal

    # -- streaming ---------------------------------------------------------------

    def __iter__(self) -> Iterator[Isomer]:
        """The isomers, lazily; the ceiling is checked and the tallies reset at the first ``next``."""
        # every structure built, the walk yields isomers only
        return cast("Iterator[Isomer]", self._walk(unbuilt=False))

    def stream_run(self, types: TypeCounts, part: int = 0, parts: int = 1,
                   deadline: float | None = None) -> Iterator[Isomer]:
        """The isomers of one run, or of share ``part`` of ``parts`` of it.

        The shares are disjoint and together complete, and the same in any
        process, so they can be searched in parallel.

        Parameters
        ----------
        types : TypeCounts
            A run of :meth:`runs`.
        part, parts : int, default 0 and 1
        deadline : float, optional
            A ``time.time()`` value after which the stream stops.

        Returns
        -------
        iterator of Isomer
            Lazy: the enumerator is set up at the first ``next``.
        """
        return cast("Iterator[Isomer]", self._run(types, part, parts, deadline, unbuilt=False))

    def count(self) -> int:
        """Number of isomers; in the complete space without patterns or hints, only
        structures with a second Kekule form are built in Python.

        Returns
        -------
        int
            Up to the budget, if one was given (``complete_run`` says whether all).
        """
        unbuilt = self.complete and not (self.require or self.forbid or self.hints or self.limits)
        return sum(item if isinstance(item, int) else 1 for item in self._walk(unbuilt))

    def _walk(self, unbuilt: bool) -> Iterator[Isomer | int]:
        """The one streaming loop: every run of the plan, against the budget, with the tallies.

        With ``unbuilt`` (counting the complete space without patterns or hints), a
        structure without a second Kekule form is accepted without being built: the
        core only counts such structures, and their number is yielded as an int.
        """
        self.check_ceiling()
        self.explored, self.removed, self.complete_run = 0, Counter(), False
        self.hinted, self.rejected, self.pruned = Counter(), Counter(), Counter()
        deadline = None if self.budget is None else time.time() + self.budget
        for types in self._planned_runs(self.hinted, self.pruned):
            yield from self._run(types, 0, 1, deadline, unbuilt)
            if deadline is not None and time.time() > deadline:
                return
        self.complete_run = True

    def _run(self, types: TypeCounts, part: int, parts: int, deadline: float | None,
             unbuilt: bool) -> Iterator[Isomer | int]:
        core = self._factory.build(types, part, parts)
        kinds = [t for t, _ in types]
        accept = self._acceptor
        # the core meets its own double-bond bounds exactly; the types settle others
        checks = tuple(lim for lim in self.limits
                       if lim not in self._factory.double_limits and not lim.settled(types))
        while deadline is None or time.time() <= deadline:
            skipped, records = core.next_batch(_BATCH, unbuilt)
            if not records and not skipped:
                return
            if skipped:
                self.explored += skipped
                yield skipped
            for record in records:
                self.explored += 1
                verdict = accept(kinds, record, checks)
                if type(verdict) is Isomer:
                    yield verdict
                else:
                    self._count_rejection(verdict)

    def _count_planned(self, d: Distribution, hinted: Counter, pruned: Counter) -> None:
        if d.pruned is not None:
            pruned[d.pruned] += 1
        removal = self._planner.hint_removal(d)
        if removal is not None:
            hinted[removal[0]] += removal[1]
        if self.limits:
            hinted.update(self._planner.limit_removals(d))

    def _count_rejection(self, rejection: Rejection) -> None:
        why = rejection.why
        if why is Why.FILTER:
            self.removed[rejection.key] += 1
        elif why is Why.PATTERN:
            self.rejected[rejection.key] += 1
        elif why is Why.HINT or why is Why.LIMIT:
            self.hinted[rejection.key] += 1


def _refusal(hill: str, runs: Iterator[TypeCounts], factory: EnumeratorFactory,
             ceiling: int) -> SpaceTooLarge | None:
    """The refusal :meth:`IsomerStream.check_ceiling` raises, or None under the ceiling."""
    total = 0.0
    for types in runs:
        total += factory.estimate(types, CEILING_PROBES, 1)
        if total > ceiling:
            break
    else:
        return None
    deadline = time.monotonic() + REFUSAL_SECONDS
    at_least = False
    for types in runs:
        if total >= HOPELESS or time.monotonic() > deadline:
            at_least = True
            break
        total += factory.estimate(types, 4, 1)
    return SpaceTooLarge(hill, total, ceiling, at_least)
