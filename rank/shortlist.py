"""Identify: score candidate structures against an observed peak list, keep the best.

The pipeline: the formula's isomers (or a list of suspects) stream in; each is
scored by :func:`score`, a pure function of (SMILES, observation, settings), so
scoring may run in worker processes and the result never depends on how many;
a heap keeps only the best ``top``, so memory does not grow with the number
scored.  Confidence is a softmax of misfits, ``exp(-misfit / T)`` normalised
over every candidate scored, with the temperature T fitted on the benchmark set
(``rules/calibration.tsv``).

A ranked candidate is a hypothesis, not an identification.
"""

from __future__ import annotations

import heapq
import math
import os
import signal
import sys
import time
from collections import Counter
from collections.abc import Iterable, Iterator, Sequence
from concurrent.futures import ProcessPoolExecutor
from dataclasses import dataclass, field, replace
from functools import cache
from pathlib import Path
from typing import NamedTuple

from rdkit import Chem
from rdkit.Chem import rdMolDescriptors

from .errors import InputError
from .formula import Formula, parse_formula
from .generate import (
    DEFAULT_CEILING,
    FragmentType,
    Hint,
    IsomerStream,
    Limit,
    SpaceTooLarge,
    carbon_limits,
    compile_smarts,
    proton_limits,
    read_hints,
)
from .match import (
    DEFAULT_CARBON_SETTINGS,
    DEFAULT_SETTINGS,
    CarbonMatch,
    CarbonSettings,
    Match,
    Settings,
    match,
    match_carbons,
)
from .predict import CarbonPredictor, CarbonSignal, Predictor, Signal
from .spectra import (
    DEFAULT_FIELD_MHZ,
    DEFAULT_SOLVENT,
    CarbonPeak,
    CarbonSpectrum,
    Dropped,
    Normalisation,
    Peak,
    PeakSource,
    Spectrum,
    drop_carbon_solvent_signals,
    drop_labelled_peaks,
    drop_solvent_signals,
    exchangeable_bound,
    find_solvent,
    normalise,
    read_peak_source,
)
from .standardize import Unsupported, quiet_rdkit, standardize, supported_text
from .tables import read_table

__all__ = [
    "CAUTION", "FIELD_RANGE_MHZ", "Candidate", "CandidateFile", "HydrogenProfile", "Identifier", "Observation",
    "Scored", "Shortlist", "available_cores", "evidence_limits", "identify", "observe", "read_candidates", "score",
    "temperature"
]

CAUTION = (
    "A ranked candidate is a hypothesis, not an identification: confirm it with a reference standard "
    "and orthogonal techniques under your laboratory's validated procedures and local regulations, "
    "and handle the unknown as hazardous."
)
_CHUNK = 256
FIELD_RANGE_MHZ = (20.0, 1500.0)
"""Spectrometer frequencies accepted (MHz): from low-field benchtop instruments to beyond any built."""


@dataclass(frozen=True)
class Observation:
    """Everything the scoring needs to know about the measured spectrum."""

    peaks: tuple[Peak, ...]
    normalisations: tuple[Normalisation, ...]
    solvent: str
    field_mhz: float
    exchange_absent: bool
    carbons: tuple[CarbonPeak, ...] = ()
    """The observed 13C lines, solvent dropped; empty when no 13C list was given."""


@dataclass(frozen=True)
class Scored:
    """One candidate's prediction and its best match over the normalisations; with a 13C list, its
    13C prediction and match, whose weighted misfit is part of ``misfit``."""

    smiles: str
    misfit: float
    match: Match
    normalisation: Normalisation
    signals: tuple[Signal, ...]
    carbon: CarbonMatch | None = None
    carbon_signals: tuple[CarbonSignal, ...] = ()
    carbon_weight: float = 0.0

    @property
    def proton_misfit(self) -> float:
        """The 1H part of the misfit (with the integral rounding)."""
        return round(self.match.misfit + self.normalisation.error, 6)

    @property
    def carbon_misfit(self) -> float:
        """The weighted 13C part of the misfit; 0 without a 13C list."""
        return 0.0 if self.carbon is None else round(self.carbon_weight * self.carbon.misfit, 6)


@dataclass(frozen=True)
class Candidate:
    """A ranked candidate; ``rank`` is shared by ties (equal misfit)."""

    rank: int
    smiles: str
    inchikey: str
    misfit: float
    confidence: float
    tied: bool
    scored: Scored
    reason: str


@dataclass
class Shortlist:
    """The result of one identification."""

    formula: Formula
    observation: Observation
    dropped: tuple[Dropped, ...]
    candidates: list[Candidate]
    explored: int
    complete: bool
    hints: tuple[Hint, ...] = ()
    hinted: dict[str, int] = field(default_factory=dict)
    limits: tuple[Limit, ...] = ()
    """Limits on atom counts read from the 13C list, applied inside the generator; what each removed is
    in ``hinted`` under its name."""
    skipped_inputs: int = 0
    other_formula: int = 0
    mixtures: int = 0
    neutralised: int = 0
    unsupported: dict[str, int] = field(default_factory=dict)
    unsupported_elements: tuple[str, ...] = ()
    rejected: dict[str, int] = field(default_factory=dict)
    tracked_misfit: float | None = None
    misfits: list[float] = field(default_factory=list)
    notes: tuple[str, ...] = ()
    """How the peaks were picked from a spectrum file (referencing, noise, spin systems); empty for a list."""
    guesses: tuple[Hint, ...] = ()
    """Hints read with unreported multiplicities let through (a budgeted run searches the space they leave
    first, then the rest); never a removal."""
    estimated: float | None = None
    """The structures the generator was estimated to build (Knuth estimates of its runs, after planning);
    None for a candidates file."""
    built: int = 0
    """The structures the generator built (before the filters, the patterns and the limits checked on built
    structures); ``built / estimated`` is about the share of the space searched."""

    @property
    def searched_text(self) -> str:
        """The share searched as the user reads it, e.g. ``0.05% of about 22,717,734 structures``; "" without
        an estimate."""
        share = self.coverage
        if share is None:
            return ""
        shown = f"{share:.0%}" if share >= 0.1 or share == 0 else f"{100 * share:.2g}%"
        return f"{shown} of about {self.estimated:,.0f} structures"

    @property
    def coverage(self) -> float | None:
        """About what share of the generated space was searched (1 when complete); None without an estimate."""
        if self.complete:
            return 1.0
        return None if not self.estimated else min(1.0, self.built / self.estimated)

    def candidates_file_note(self) -> str | None:
        """One line on what a candidates file needed changed or left out beyond unreadable
        lines and other formulas; None when nothing."""
        parts = self._candidates_file_changes()
        return "candidates file: " + "; ".join(parts) if parts else None

    def _candidates_file_changes(self) -> list[str]:
        parts = []
        if self.mixtures:
            parts.append(f"{_plural(self.mixtures, 'salt or mixture', 'salts or mixtures')} reduced to the "
                         "largest organic component")
        if self.neutralised:
            parts.append(f"{_plural(self.neutralised, 'ion', 'ions')} taken in neutral form")
        if self.unsupported.get("elements"):
            parts.append(f"{_plural(self.unsupported['elements'], 'structure', 'structures')} with "
                         f"{', '.join(self.unsupported_elements)} skipped (peakrank works on {supported_text()})")
        if self.unsupported.get("radical"):
            parts.append(f"{_plural(self.unsupported['radical'], 'radical', 'radicals')} skipped")
        if self.unsupported.get("inorganic"):
            parts.append(f"{_plural(self.unsupported['inorganic'], 'salt or mixture', 'salts or mixtures')} "
                         "without carbon skipped")
        return parts

    def tracked_rank(self) -> int | None:
        """Rank of the tracked answer counting ties against it; None if it was never scored."""
        if self.tracked_misfit is None:
            return None
        return sum(1 for m in self.misfits if m <= self.tracked_misfit)

    def to_frame(self):
        """The candidates as a pandas DataFrame, one row each, misfit parts as columns (``carbon``: the
        weighted 13C misfit, empty without a 13C list)."""
        import pandas as pd

        rows = []
        for c in self.candidates:
            parts = c.scored.match.parts
            rows.append({
                "rank": c.rank, "smiles": c.smiles, "inchikey": c.inchikey, "misfit": c.misfit,
                "confidence": c.confidence, "tied": c.tied,
                "shift": parts.shift, "integral": parts.integral, "multiplicity": parts.multiplicity,
                "coupling": parts.coupling, "count": parts.count,
                "carbon": c.scored.carbon_misfit if c.scored.carbon is not None else None,
                "reason": c.reason,
            })
        return pd.DataFrame(rows)


# --------------------------------------------------------------- observe ----


def observe(formula: Formula, spectrum: Spectrum, solvent: str | None = None, field_mhz: float | None = None,
            keep_all_peaks: bool = False, carbon: CarbonSpectrum | None = None
            ) -> tuple[Observation, tuple[Dropped, ...]]:
    """Drop solvent signals and find the plausible integral normalisations; with a 13C list, drop
    its solvent lines too (the dropped 13C lines follow the 1H ones).

    Peaks the chemist labelled as solvent, water or reference are always dropped;
    ``keep_all_peaks`` keeps the unlabelled ones that sit on a solvent's values.

    Raises InputError when nothing is left, the integrals cannot fit the formula, or the
    13C list has more lines than the formula has carbons.
    """
    chosen = find_solvent(solvent or spectrum.solvent or DEFAULT_SOLVENT)
    peaks, labelled = drop_labelled_peaks(spectrum.peaks)
    if keep_all_peaks:
        dropped = labelled
    else:
        peaks, by_value = drop_solvent_signals(peaks, chosen)
        dropped = labelled + by_value
    if not peaks:
        raise InputError("no peaks left after dropping solvent, water and TMS signals")
    hydrogens = formula["H"]
    if hydrogens == 0:
        raise InputError(f"{formula.hill} has no hydrogen; a 1H spectrum cannot rank its isomers")
    labile = exchangeable_bound(formula["N"], formula["O"], formula["S"], hydrogens)
    norms = normalise(peaks, hydrogens, labile)
    field_used = field_mhz or spectrum.field_mhz or DEFAULT_FIELD_MHZ
    carbons: tuple[CarbonPeak, ...] = ()
    if carbon is not None:
        carbons, carbon_dropped = _observe_carbons(formula, carbon, chosen, keep_all_peaks)
        dropped += carbon_dropped
    return Observation(peaks, tuple(norms), chosen.id, field_used, chosen.exchange, carbons), dropped


def _observe_carbons(formula: Formula, carbon: CarbonSpectrum, solvent, keep_all_peaks: bool
                     ) -> tuple[tuple[CarbonPeak, ...], tuple[Dropped, ...]]:
    """The 13C lines left after the solvent's (only the labelled ones with ``keep_all_peaks``)."""
    if keep_all_peaks:
        kept, dropped = drop_labelled_peaks(carbon.peaks)
    else:
        spectrum, dropped = drop_carbon_solvent_signals(carbon, solvent)
        kept = spectrum.peaks
    if not kept:
        raise InputError("no 13C lines left after dropping solvent and TMS signals")
    written = sum(p.carbons or 1 for p in kept)
    if written > formula["C"]:
        raise InputError(f"the 13C list holds {written} carbons but {formula.hill} has {formula['C']}; "
                         "check the formula and the list (solvent lines are dropped by the solvent given)")
    return tuple(kept), tuple(dropped)


def evidence_limits(formula: Formula, observation: Observation) -> tuple[Limit, ...]:
    """The limits the observed 1H list (over every reading of its integrals) and the 13C list set on the
    structures of the formula (``rank.generate.constraints``)."""
    labile = exchangeable_bound(formula["N"], formula["O"], formula["S"], formula["H"])
    readings = [(n.counts, n.missing) for n in observation.normalisations]
    limits = proton_limits(formula, observation.peaks, readings, labile)
    return limits + (carbon_limits(formula, observation.carbons) if observation.carbons else ())


# ----------------------------------------------------------------- score ----

_predictors: dict[tuple[str, float], Predictor] = {}
_carbon_predictors: dict[str, CarbonPredictor] = {}


def _predictor(solvent: str, field_mhz: float) -> Predictor:
    key = (solvent, field_mhz)
    if key not in _predictors:
        _predictors[key] = Predictor(solvent=solvent, field_mhz=field_mhz)
    return _predictors[key]


def _carbon_predictor(solvent: str) -> CarbonPredictor:
    if solvent not in _carbon_predictors:
        _carbon_predictors[solvent] = CarbonPredictor(solvent=solvent)
    return _carbon_predictors[solvent]


def score(smiles: str, observation: Observation, settings: Settings = DEFAULT_SETTINGS,
          carbon_settings: CarbonSettings = DEFAULT_CARBON_SETTINGS) -> Scored | None:
    """Predict a candidate's spectra and match them to the observation.

    The misfit is the 1H misfit (best over the integral normalisations) plus, with a 13C list,
    ``carbon_settings.weight`` times the 13C misfit.  A pure function of its arguments; returns
    None for a SMILES RDKit cannot read and for a structure the tables cannot predict (e.g. a
    carbanion).
    """
    mol = Chem.MolFromSmiles(smiles)
    if mol is None:
        return None
    try:
        signals = tuple(_predictor(observation.solvent, observation.field_mhz).predict(mol))
        carbon_signals = tuple(_carbon_predictor(observation.solvent).predict(mol)) if observation.carbons else ()
    except InputError:
        return None
    carbon = match_carbons(carbon_signals, observation.carbons, carbon_settings) if observation.carbons else None
    carbon_misfit = 0.0 if carbon is None else carbon_settings.weight * carbon.misfit
    best = None
    for norm in observation.normalisations:
        m = match(signals, observation.peaks, norm.counts, norm.missing, observation.exchange_absent, settings)
        misfit = round(m.misfit + norm.error + carbon_misfit, 6)
        if best is None or misfit < best.misfit:
            best = Scored(smiles, misfit, m, norm, signals, carbon, carbon_signals, carbon_settings.weight)
    return best


# ------------------------------------------------------------ candidates ----


class CandidateFile(NamedTuple):
    """The structures of a candidates file and what reading them took.

    ``smiles`` are canonical SMILES of neutral, closed-shell molecules (``rank.standardize``):
    a salt or mixture is its largest organic component, an ion its neutral form.
    """

    smiles: list[str]
    unreadable: int
    mixtures: int
    neutralised: int
    unsupported: Counter
    elements: tuple[str, ...]


def read_candidates(source: str | Sequence[str]) -> CandidateFile:
    """Suspects from a file (SMILES, one per line with an optional name after white space; or SDF)
    or from a sequence of SMILES.

    Lines RDKit cannot read are counted in ``unreadable``; structures with other
    elements, radicals and mixtures without carbon are skipped and counted in
    ``unsupported`` by kind (``"elements"``, ``"radical"``, ``"inorganic"``).
    """
    if isinstance(source, str):
        records = _candidate_records(source)
    else:
        with quiet_rdkit():  # an unreadable SMILES is counted, not printed
            records = [(Chem.MolFromSmiles(t), t) for t in source]
    smiles, unreadable, mixtures, neutralised = [], 0, 0, 0
    unsupported, elements = Counter(), set()
    for mol, text in records:
        if mol is None:
            unreadable += 1
            continue
        try:
            used = standardize(mol, text)
        except Unsupported as exc:
            unsupported[exc.kind] += 1
            elements.update(exc.elements)
            continue
        mixtures += used.mixture
        neutralised += used.neutralised
        smiles.append(used.smiles)
    return CandidateFile(smiles, unreadable, mixtures, neutralised, unsupported, tuple(sorted(elements)))


def _candidate_records(path: str) -> list[tuple[Chem.Mol | None, str | None]]:
    """(molecule or None, text) per entry of a SMILES or SDF file."""
    file = Path(path)
    if not file.is_file():
        raise InputError(f"candidates file {path!r} not found")
    if file.suffix.lower() in (".sdf", ".sd", ".mol"):
        return [(mol, None if mol is None else Chem.MolToSmiles(mol)) for mol in Chem.SDMolSupplier(str(file))]
    try:
        lines = file.read_text(encoding="utf-8").splitlines()
    except (OSError, UnicodeDecodeError) as exc:
        raise InputError(f"cannot read candidates file {path!r}: {exc}") from None
    texts = [line.split()[0] for line in lines if line.strip() and not line.strip().startswith("#")]
    with quiet_rdkit():  # an unreadable line is counted, not printed
        return [(Chem.MolFromSmiles(t), t) for t in texts]


# --------------------------------------------------------------- ranking ----


def temperature() -> float:
    """The softmax temperature fitted on the benchmark set (``rules/calibration.tsv``)."""
    rows = {r["name"]: r["value"] for r in read_table("calibration")}
    return float(rows["temperature"])


def _reason(s: Scored) -> str:
    parts = s.match.parts
    named = {"shift": parts.shift, "integrals": parts.integral, "multiplicities": parts.multiplicity,
             "J": parts.coupling, "signal count": parts.count}
    worst = max(named.items(), key=lambda kv: kv[1])
    placed = [p for p in s.match.pairings if p.peak is not None]
    mean_dev = sum(abs(p.observed - p.predicted) for p in placed) / max(len(placed), 1)
    text = f"mean |Δδ| {mean_dev:.2f} ppm over {len(placed)} signals"
    if worst[1] > 0.05 and worst[0] != "shift":
        text += f"; largest penalty: {worst[0]} {worst[1]:.2f}"
    return text


class _Best:
    """The best ``top`` scored candidates seen, plus any tied with the worst of them."""

    def __init__(self, top: int) -> None:
        self.top = top
        self.heap: list[tuple[float, tuple[int, ...], Scored]] = []  # min-heap on -misfit
        self.tied: list[Scored] = []

    def add(self, scored: Scored) -> None:
        item = (-scored.misfit, _reverse(scored.smiles), scored)
        if len(self.heap) < self.top:
            heapq.heappush(self.heap, item)
            return
        cut = -self.heap[0][0]
        if item[:2] > self.heap[0][:2]:
            evicted = heapq.heapreplace(self.heap, item)[2]
            if -self.heap[0][0] < cut:
                self.tied = []
            elif evicted.misfit == cut:
                self.tied.append(evicted)
        elif scored.misfit == cut:
            self.tied.append(scored)

    def items(self) -> list[Scored]:
        return sorted([s for _, _, s in self.heap] + self.tied, key=lambda s: (s.misfit, s.smiles))


@dataclass(frozen=True)
class _Job:
    """What every work unit shares: picklable, so units can run in worker processes."""

    formula: Formula
    require: tuple[str, ...]
    forbid: tuple[str, ...]
    hints: tuple[Hint, ...]
    limits: tuple[Limit, ...]
    observation: Observation
    settings: Settings
    carbon_settings: CarbonSettings
    top: int
    temperature: float
    track: str | None
    deadline: float | None
    notes: tuple[str, ...] = ()
    """How the peaks were picked from a spectrum file (referencing, noise, spin systems); empty for a list."""
    guesses: tuple[Hint, ...] = ()
    """Hints read with unreported multiplicities let through: the units marked ``first`` search the space
    they leave, before the whole space is searched."""
    seen: frozenset[str] = frozenset()
    """Structures the ``first`` units scored, which the others skip."""


@dataclass(frozen=True)
class _Unit:
    """One share of the work: a share of a hydrogen distribution, or a list of SMILES."""

    types: tuple | None = None
    part: int = 0
    parts: int = 1
    smiles: tuple[str, ...] = ()
    estimate: float = 0.0
    """The structures the unit is estimated to build (its share of the run's Knuth estimate)."""
    first: bool = False
    """A unit of the space the job's ``guesses`` leave (its ``types`` are planned with them)."""


@dataclass
class _Tally:
    """What one unit found."""

    best: list[Scored]
    log_norm: float
    scored: int
    hinted: Counter
    misfits: list[float]
    tracked: float | None
    timed_out: bool
    rejected: Counter = field(default_factory=Counter)
    filtered: Counter = field(default_factory=Counter)
    built: int = 0
    first: bool = False
    smiles: tuple[str, ...] = ()
    """The structures a ``first`` unit scored."""


_job: _Job | None = None


def _set_job(job: _Job) -> None:
    global _job
    _job = job


def _start_worker(job: _Job) -> None:
    """A worker leaves Ctrl-C to the parent, which stops it; then it takes the job."""
    signal.signal(signal.SIGINT, signal.SIG_IGN)
    _set_job(job)


def available_cores() -> int:
    """The CPU cores this process may run on (its affinity mask where the system has one)."""
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except (AttributeError, OSError):
        return max(1, os.cpu_count() or 1)


def _source(given, nucleus: str, solvent: str | None) -> PeakSource:
    """A peak list given as text, a file path, a spectrum or a PeakSource, as a PeakSource."""
    if isinstance(given, PeakSource):
        return given
    if isinstance(given, (Spectrum, CarbonSpectrum)):
        return PeakSource(given)
    return read_peak_source(given, nucleus, solvent)


def _run_unit(unit: _Unit) -> _Tally:
    """Score one unit of the job set by :func:`_set_job`; pure given (job, unit)."""
    job = _job
    best, log_norm, scored, misfits, tracked, timed_out = _Best(job.top), -math.inf, 0, [], None, False
    stream = None
    first: list[str] = []
    if unit.types is not None:
        hints = job.hints + job.guesses if unit.first else job.hints
        stream = IsomerStream(job.formula, require=job.require, forbid=job.forbid, ceiling=0, hints=hints,
                              limits=job.limits)
        source: Iterable[str] = (iso.smiles for iso in stream.stream_run(list(unit.types), unit.part,
                                                                        unit.parts, job.deadline))
    else:
        source = unit.smiles
    for smiles in source:
        if job.deadline is not None and time.time() > job.deadline:
            timed_out = True
            break
        if smiles in job.seen:
            continue
        result = score(smiles, job.observation, job.settings, job.carbon_settings)
        if result is None:
            continue
        if unit.first:
            first.append(smiles)
        scored += 1
        log_norm = _logaddexp(log_norm, -result.misfit / job.temperature)
        best.add(result)
        if job.track is not None:
            misfits.append(result.misfit)
            if result.smiles == job.track:
                tracked = result.misfit
    if job.deadline is not None and time.time() > job.deadline:
        timed_out = True
    if stream is None:
        return _Tally(best.items(), log_norm, scored, Counter(), misfits, tracked, timed_out)
    return _Tally(best.items(), log_norm, scored, stream.hinted, misfits, tracked, timed_out,
                  stream.rejected, stream.removed, stream.explored, unit.first, tuple(first))


@dataclass
class Identifier:
    """Rank candidate structures for a formula and a peak list.

    Parameters
    ----------
    top : how many candidates to keep; candidates tied with the last are kept too.
    solvent : overrides the peak list's own solvent; CDCl3 when neither says.
    field_mhz : overrides the peak list's spectrometer frequency; 400 when neither says.
    require, forbid : SMARTS that narrow the candidates.
    use_hints : read hints from the spectrum, and limits on carbon counts from the 13C list,
        to narrow the isomer space (each one reported with what it removed).
    workers : processes that generate and score; 1 works in this process
        (the command line's default is :func:`available_cores`).
        The result does not depend on it: the work is cut into the same units
        whatever the number of workers, and merged in unit order.
    budget : seconds after which the run stops and says it is incomplete (and how much it searched).
    ceiling : the generator's limit on the estimated isomer space of a run without a budget; a budgeted
        run searches any space, the likeliest hydrogen distributions first.
    progress : print a progress line on stderr on long runs.
    track : a known answer's SMILES; the run then records every misfit and the
        answer's own (benchmarks).

    Notes
    -----
    The class is longer than most because it holds one run's steps as short
    methods, each one job: validate the options, make the work units (generated
    or listed), run them in this process or in workers, merge the tallies.
    """

    top: int = 10
    solvent: str | None = None
    field_mhz: float | None = None
    require: Sequence[str] = ()
    forbid: Sequence[str] = ()
    use_hints: bool = True
    workers: int = 1
    budget: float | None = None
    ceiling: int = DEFAULT_CEILING
    keep_all_peaks: bool = False
    progress: bool = False
    settings: Settings = field(default_factory=Settings)
    carbon_settings: CarbonSettings = field(default_factory=CarbonSettings)
    track: str | None = None

    def check_options(self) -> None:
        """Raise InputError for an option no run can use; the one place options are validated."""
        if self.top < 1:
            raise InputError("--top must be at least 1")
        if self.workers < 1:
            raise InputError("--workers must be at least 1")
        if self.budget is not None and self.budget <= 0:
            raise InputError("the time budget must be a positive number of seconds")
        low, high = FIELD_RANGE_MHZ
        if self.field_mhz is not None and not low <= self.field_mhz <= high:
            raise InputError(f"--field must be a spectrometer frequency in MHz, between {low:g} and {high:g}")
        if self.solvent is not None:
            find_solvent(self.solvent)

    def identify(self, formula: str, peaks: str | Spectrum | PeakSource, candidates: str | Sequence[str] | None = None,
                 carbon: str | CarbonSpectrum | PeakSource | None = None) -> Shortlist:
        """Run the identification; ``peaks`` is inline text, a peak or spectrum file, a Spectrum or a
        PeakSource; ``candidates`` a file of suspects (SMILES or SDF) or a sequence of SMILES, else the
        formula's isomers; ``carbon`` a 13C list of the same kinds, scored beside the 1H.  What picking
        a spectrum file dropped is in the result's ``dropped``, its notes in ``notes``.

        Raises
        ------
        InputError
            Bad input; a generated space estimated above the ceiling
            (:class:`rank.generate.SpaceTooLarge`, with advice that can work); or no
            structure left to rank, naming what left none (a pattern, the hints,
            the filters, or a candidates file without the formula).
        """
        self.check_options()
        parsed = parse_formula(formula)
        sources = [_source(peaks, "1H", self.solvent)]
        if carbon is not None:
            sources.append(_source(carbon, "13C", self.solvent))
        observation, dropped = observe(parsed, sources[0].spectrum, self.solvent, self.field_mhz, self.keep_all_peaks,
                                       sources[1].spectrum if carbon is not None else None)
        dropped = tuple(d for source in sources for d in source.dropped) + dropped
        require = [compile_smarts(s, "--require") for s in self.require]
        forbid = [compile_smarts(s, "--forbid") for s in self.forbid]
        hints, limits, guesses = (), (), ()
        if self.use_hints:
            counts = observation.normalisations[0].counts
            hints = tuple(read_hints(observation.peaks, counts, parsed))
            if candidates is None:
                limits = evidence_limits(parsed, observation)
                if self.budget is not None:
                    claims = {(h.name, h.evidence) for h in hints}
                    guesses = tuple(h for h in read_hints(observation.peaks, counts, parsed, relaxed=True)
                                    if (h.name, h.evidence) not in claims)
        result = Shortlist(parsed, observation, dropped, [], 0, False, hints, limits=limits, guesses=guesses,
                           notes=tuple(note for source in sources for note in source.notes))
        start = time.time()
        deadline = None if self.budget is None else start + self.budget
        first: list[_Unit] = []
        if candidates is None:
            units, pruned = self._generated_units(result)
            if guesses:
                first = self._generated_units(result, guesses)[0]
                guessed = sum(u.estimate for u in first)
                if guessed > min(_GUESSED_SHARE * (result.estimated or 0), _GUESSED_MOST):
                    first, result.guesses = [], ()  # too little narrowed for a first pass, or too much to remember
        else:
            units, pruned = self._listed_units(candidates, require, forbid, result), Counter()
        job = _Job(parsed, tuple(self.require), tuple(self.forbid), hints, limits, observation, self.settings,
                   self.carbon_settings, self.top, temperature(), self.track, deadline, result.guesses)
        best, log_norm, filtered = self._merge(job, first, units, result, start)
        if result.explored == 0 and result.complete:
            raise InputError(_nothing_left(result, filtered, pruned, candidates))
        result.candidates = _ranked(best.items(), log_norm, job.temperature)
        return result

    def _generated_units(self, result: Shortlist, guesses: tuple[Hint, ...] = ()) -> tuple[list[_Unit], Counter]:
        """The generator's work units, nearest the list's hydrogen profile first; and the hydrogen
        distributions a one-atom pattern ruled out (pattern -> count).

        Without a time budget the space must be under the ceiling; with one, a larger space is searched
        in that order until the budget is spent, and the result says how much of it was searched.  With
        ``guesses``, the units of the smaller space the guesses leave (searched first; nothing is recorded
        in ``result``)."""
        stream = IsomerStream(result.formula, require=self.require, forbid=self.forbid, ceiling=self.ceiling,
                              hints=result.hints + guesses, limits=result.limits)
        if self.budget is None:
            try:
                stream.check_ceiling()
            except SpaceTooLarge as exc:
                raise exc.with_advice(_SUSPECTS_ADVICE if exc.hopeless else _NARROW_ADVICE) from None
        plan = stream.plan()
        units = []
        for types in plan.runs:
            guess = stream.estimate_run(types)
            parts = _shares(guess)
            units.extend(_Unit(tuple(types), part, parts, estimate=guess / parts, first=bool(guesses))
                         for part in range(parts))
        expected = HydrogenProfile.of_observation(result.observation, result.formula)
        units.sort(key=lambda u: expected.distance(HydrogenProfile.of_types(u.types)))  # stable among equals
        if guesses:
            return units, plan.pruned
        result.hinted = dict(plan.hinted)
        result.estimated = sum(u.estimate for u in units)
        return units, plan.pruned

    def _listed_units(self, source: str | Sequence[str], require, forbid, result: Shortlist) -> list[_Unit]:
        """A candidates file's structures of the formula that pass the patterns, in chunks;
        what was changed or left out is counted in ``result``."""
        listed = read_candidates(source)
        result.skipped_inputs, result.mixtures, result.neutralised = \
            listed.unreadable, listed.mixtures, listed.neutralised
        result.unsupported, result.unsupported_elements = dict(listed.unsupported), listed.elements
        suspects = list(self._suspects(listed.smiles, result.formula, require, forbid, result))
        return [_Unit(smiles=tuple(suspects[i:i + _CHUNK])) for i in range(0, len(suspects), _CHUNK)]

    def _merge(self, job: _Job, first: list[_Unit], units: list[_Unit], result: Shortlist,
               start: float) -> tuple[_Best, float, Counter]:
        """Run the ``first`` units, then the others, and merge their tallies in unit order into ``result``;
        returns the best candidates, the log of the softmax normaliser and the structures each filter
        removed.  What the first units' guesses left out is not a removal, and the others search it."""
        best, log_norm, timed_out, filtered = _Best(self.top), -math.inf, False, Counter()
        units_in_all = len(first) + len(units)
        try:
            for done, tally in enumerate(self._staged_tallies(job, first, units), 1):
                result.explored += tally.scored
                result.built += tally.built
                log_norm = _logaddexp(log_norm, tally.log_norm)
                for s in tally.best:
                    best.add(s)
                if not tally.first:
                    _add_counts(result.hinted, tally.hinted)
                    _add_counts(result.rejected, tally.rejected)
                    filtered.update(tally.filtered)
                result.misfits.extend(tally.misfits)
                if tally.tracked is not None:
                    result.tracked_misfit = tally.tracked
                timed_out = timed_out or tally.timed_out
                if self.progress:
                    print(_progress_line(done, units_in_all, result, time.time() - start), file=sys.stderr,
                          end="\r", flush=True)
        finally:
            if self.progress and units:
                print(file=sys.stderr)  # end the progress line, also when interrupted
        result.complete = not timed_out
        return best, log_norm, filtered

    def _staged_tallies(self, job: _Job, first: list[_Unit], units: list[_Unit]) -> Iterator[_Tally]:
        """The tallies of the ``first`` units, then of the others, which skip what the first ones scored."""
        seen: list[str] = []
        for tally in self._tallies(job, first):
            seen.extend(tally.smiles)
            yield tally
        yield from self._tallies(replace(job, seen=frozenset(seen)) if seen else job, units)

    def _tallies(self, job: _Job, units: list[_Unit]) -> Iterator[_Tally]:
        """The units' tallies in unit order, from this process or from worker processes.

        Workers ignore Ctrl-C; when the parent is interrupted (or stops reading), the
        pending units are cancelled and the workers terminated at once, rather than
        waiting for the units they are running.
        """
        if self.workers == 1 or len(units) < 2:
            _set_job(job)
            yield from map(_run_unit, units)
            return
        pool = ProcessPoolExecutor(max_workers=min(self.workers, len(units)), initializer=_start_worker,
                                   initargs=(job,))
        finished = False
        try:
            yield from pool.map(_run_unit, units, chunksize=1)
            finished = True
        finally:
            if finished:
                pool.shutdown(wait=True)
            else:
                _stop(pool)

    def _suspects(self, smiles: list[str], formula: Formula, require, forbid, result: Shortlist) -> Iterator[str]:
        seen = set()
        for s in smiles:
            mol = Chem.MolFromSmiles(s)
            if rdMolDescriptors.CalcMolFormula(mol) != formula.hill:
                result.other_formula += 1
                continue
            failed = next((f"--require {t!r}" for t, p in zip(self.require, require) if not mol.HasSubstructMatch(p)),
                          None) or next((f"--forbid {t!r}" for t, p in zip(self.forbid, forbid)
                                         if mol.HasSubstructMatch(p)), None)
            if failed is not None:
                result.rejected[failed] = result.rejected.get(failed, 0) + 1
                continue
            if s not in seen:
                seen.add(s)
                yield s


_SUSPECTS_ADVICE = ("give the suspects as --candidates FILE (SMILES lines or SDF, e.g. the known structures "
                    "of this formula from a database)")
_NARROW_ADVICE = ("narrow it with --require/--forbid or a 13C list (--carbon), score a list of suspects with "
                  "--candidates FILE, give a time budget (--budget SECONDS) to search the likeliest part first, "
                  "or pass --ceiling 0 to lift the limit")


def _progress_line(done: int, units: int, result: Shortlist, seconds: float) -> str:
    """Work units done, candidates scored of the estimated space, time so far and an estimate of the time left."""
    line = f"peakrank: {done}/{units} work units, {result.explored:,} candidates scored"
    if result.estimated:
        share = result.coverage  # the run is not complete yet: the share built
        line += f", {result.searched_text} searched"
        if 0 < share < 1 and seconds > 1:
            line += f", about {_duration(seconds * (1 - share) / share)} left"
    return f"{line}, {seconds:.0f} s   "


def _duration(seconds: float) -> str:
    if seconds < 90:
        return f"{seconds:.0f} s"
    return f"{seconds / 60:.0f} min" if seconds < 5400 else f"{seconds / 3600:.1f} h"


def _stop(pool: ProcessPoolExecutor) -> None:
    """Cancel what has not started and end the workers now (Ctrl-C, or the caller stopped reading)."""
    terminate = getattr(pool, "terminate_workers", None)  # Python 3.14 and later
    if terminate is not None:
        terminate()
        return
    # before 3.14 the workers are reached through the pool's process table, which shutdown clears
    processes = list((getattr(pool, "_processes", None) or {}).values())
    pool.shutdown(wait=False, cancel_futures=True)
    for process in processes:
        if process.is_alive():
            process.terminate()
    deadline = time.monotonic() + 1.0
    for process in processes:
        process.join(max(0.0, deadline - time.monotonic()))
        if process.is_alive():
            process.kill()


def _plural(n: int, one: str, many: str) -> str:
    return f"{n:,} {one if n == 1 else many}"


def _add_counts(into: dict[str, int], counts: Counter) -> None:
    for name, n in counts.items():
        into[name] = into.get(name, 0) + n


def _nothing_left(result: Shortlist, filtered: Counter, pruned: Counter,
                  candidates: str | Sequence[str] | None) -> str:
    """Why no candidate was scored, in one line that says what to change.

    The user's patterns come last in the pipeline, so when they left out anything
    they are named first, with what the hints had left them.
    """
    hill = result.formula.hill
    hinted = ", ".join(sorted(result.hinted)) if sum(result.hinted.values()) else ""
    no_hints = ", or pass --no-hints if a hint is wrong" if hinted else ""
    if candidates is not None and not result.rejected:
        if result.other_formula:
            return (f"no structure in the candidates file has formula {hill} ({result.other_formula} have "
                    "another formula); check the formula and the file")
        why = [_plural(result.skipped_inputs, "unreadable line", "unreadable lines")] if result.skipped_inputs else []
        why += result._candidates_file_changes()
        return (f"the candidates file {candidates!r} holds no structure peakrank can use"
                + (f" ({'; '.join(why)})" if why else " (no SMILES lines or SDF records)"))
    source = " in the candidates file" if candidates is not None else ""
    if result.rejected:
        tried = sum(result.rejected.values())
        context = f" among the {tried:,} the hints left ({hinted})" if hinted else f" ({tried:,} tried)"
        if len(result.rejected) == 1:
            (label, _), = result.rejected.items()
            what = "no structure" if label.startswith("--require") else "every structure"
            return f"{what} of {hill}{source} matches {label}{context}; check the pattern and the formula{no_hints}"
        parts = ", ".join(f"{n:,} {'without' if label.startswith('--require') else 'with'} {label.split(' ', 1)[1]}"
                          f" ({label.split(' ', 1)[0]})" for label, n in result.rejected.items())
        return (f"no structure of {hill}{source} passes the patterns{context}: {parts}; "
                f"check the patterns and the formula{no_hints}")
    if pruned:
        required = [label for label in pruned if label.startswith("--require")]
        if required:
            return f"no structure of {hill} can match {', '.join(required)}; check the pattern and the formula"
        return (f"every structure of {hill} matches {', '.join(pruned)} (an atom of the formula does); "
                "check the pattern and the formula")
    if hinted and filtered:
        return (f"no structure of {hill} is left after the hints read from the peaks ({hinted}) and the "
                f"plausibility filters ({', '.join(sorted(filtered))}); pass --no-hints if a hint is wrong")
    if hinted:
        return (f"the hints read from the peaks ({hinted}) leave no structure of {hill}; "
                "pass --no-hints if a hint is wrong, or check the formula and the integrals")
    if filtered:
        return (f"every structure of {hill} is removed by the plausibility filters "
                f"({', '.join(sorted(filtered))}, rules/filters.tsv); check the formula")
    return f"no structure with standard valences has formula {hill}; check the formula"


def _shares(guess: float) -> int:
    """How many units one hydrogen distribution is cut into: about 4,000 estimated structures each.

    Fixed by the Knuth estimate with a fixed seed, so the same for any number of workers.
    """
    return max(1, min(32, math.ceil(guess / 4000)))


class HydrogenProfile(NamedTuple):
    """What a hydrogen distribution fixes that a 1H list also shows: how many CH3, CH2 and CH carbons and how
    many H on heteroatoms.

    Budgeted runs score the work units whose profile is nearest the list's first (:meth:`distance`), so that
    the likeliest structures are scored before the time runs out; any order gives the same complete result.
    """

    methyls: int
    methylenes: int
    methines: int
    labile: int

    @classmethod
    def of_types(cls, types) -> HydrogenProfile:
        """The profile of a work unit's vertex types (atom types and contracted groups with their counts)."""
        counts = [0, 0, 0, 0]
        for t, c in types:
            if isinstance(t, FragmentType):
                for h in (1, 2, 3):
                    counts[3 - h] += c * t.fragment.carbons_of("C", (h,), None)
            elif t.state.element == "C":
                if t.hydrogens:
                    counts[3 - t.hydrogens] += c
            else:
                counts[3] += c * t.hydrogens
        return cls(*counts)

    @classmethod
    def of_observation(cls, observation: Observation, formula: Formula) -> HydrogenProfile:
        """The profile a 1H list suggests (first reading of the integrals), by common practice: sharp H above
        6.5 ppm are CH (aromatic, alkene, imine, aldehyde); sharp 3, 6 and 9 H signals in the methyl window
        of ``rules/hints.tsv`` are CH3 groups; other sharp signals are CH2 pairs and a CH for an odd H; broad
        signals and unobserved H are exchangeable H.  An ordering, never a constraint."""
        norm = observation.normalisations[0]
        low, high = _methyl_window()
        methyls = methylenes = methines = 0
        labile = norm.missing
        for p, c in zip(observation.peaks, norm.counts):
            if p.broad:
                labile += c
            elif p.shift > _AROMATIC_FROM:
                methines += c
            elif c in (3, 6, 9) and low <= p.shift <= high and p.multiplicity in (None, "s", "d", "t"):
                methyls += c // 3
            else:
                methylenes += c // 2
                methines += c % 2
        bound = exchangeable_bound(formula["N"], formula["O"], formula["S"], formula["H"])
        return cls(methyls, methylenes, methines, min(labile, bound))

    def distance(self, other: HydrogenProfile) -> tuple[int, int]:
        """How far ``other`` (a unit's profile) is from this one (a list's): first the CH3 groups and
        exchangeable H, which a list shows well; then the CH2 and CH carbons, which overlap and symmetry blur
        (on the fit part of the open data this order reaches the true distribution after a median 5 % of
        the estimated space, ``benchmarks/search_order.py``)."""
        return (abs(self.methyls - other.methyls) + abs(self.labile - other.labile),
                abs(self.methylenes - other.methylenes) + abs(self.methines - other.methines))


_GUESSED_SHARE = 0.5
"""The guesses' space is searched first only when it is at most this share of the whole (estimated)."""
_GUESSED_MOST = 200_000
"""... and at most this many structures (estimated): each process keeps their SMILES, about 150 bytes each."""

_AROMATIC_FROM = 6.5
"""ppm: sharp H above this sit on CH carbons (aromatic, alkene, imine and aldehyde H; common practice)."""


@cache
def _methyl_window() -> tuple[float, float]:
    row = next(r for r in read_table("hints") if r["id"] == "methyl")
    return float(row["low"]), float(row["high"])


def _ranked(best: list[Scored], log_norm: float, temp: float) -> list[Candidate]:
    ranked, previous, rank = [], None, 0
    for position, s in enumerate(best, 1):
        if previous is None or s.misfit != previous:
            rank = position
        previous = s.misfit
        confidence = math.exp(-s.misfit / temp - log_norm)
        ranked.append(Candidate(rank, s.smiles, Chem.MolToInchiKey(Chem.MolFromSmiles(s.smiles)),
                                s.misfit, confidence, False, s, _reason(s)))
    counts = Counter(c.misfit for c in ranked)
    return [replace(c, tied=counts[c.misfit] > 1) for c in ranked]


def _reverse(smiles: str) -> tuple[int, ...]:
    """A key that orders SMILES backwards, so the heap evicts the later of equal misfits."""
    return tuple(-ord(ch) for ch in smiles) + (1,)


def _logaddexp(a: float, b: float) -> float:
    if a == -math.inf:
        return b
    high = max(a, b)
    return high + math.log(math.exp(a - high) + math.exp(b - high))


def identify(formula: str, peaks: str, **options):
    """Identify from a formula and a peak list; returns a pandas DataFrame of the short list.

    Options are those of :class:`Identifier` plus ``candidates`` (a SMILES or SDF file).
    The DataFrame's ``attrs['shortlist']`` holds the full :class:`Shortlist`.
    """
    candidates = options.pop("candidates", None)
    result = Identifier(**options).identify(formula, peaks, candidates)
    frame = result.to_frame()
    frame.attrs["shortlist"] = result
    return frame
