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
import sys
import time
from collections.abc import Iterable, Iterator, Sequence
from concurrent.futures import ProcessPoolExecutor
from dataclasses import dataclass, field
from pathlib import Path

from rdkit import Chem
from rdkit.Chem import rdMolDescriptors

from .errors import InputError
from .formula import Formula, parse_formula
from .generate import DEFAULT_CEILING, IsomerStream, compile_smarts
from .hints import Hint, read_hints
from .match import DEFAULT_SETTINGS, Match, Settings, match
from .peaks import (
    Dropped,
    Normalisation,
    Peak,
    Spectrum,
    drop_solvent_signals,
    find_solvent,
    normalise,
    read_peaks,
)
from .predict import Predictor, Signal
from .tables import read_table

CAUTION = (
    "A ranked candidate is a hypothesis, not an identification: confirm it with a reference standard "
    "and orthogonal techniques under your laboratory's validated procedures and local regulations, "
    "and handle the unknown as hazardous."
)
_CHUNK = 256


@dataclass(frozen=True)
class Observation:
    """Everything the scoring needs to know about the measured spectrum."""

    peaks: tuple[Peak, ...]
    normalisations: tuple[Normalisation, ...]
    solvent: str
    field_mhz: float
    exchange_absent: bool


@dataclass(frozen=True)
class Scored:
    """One candidate's prediction and its best match over the normalisations."""

    smiles: str
    misfit: float
    match: Match
    normalisation: Normalisation
    signals: tuple[Signal, ...]


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
    skipped_inputs: int = 0
    other_formula: int = 0
    tracked_misfit: float | None = None
    misfits: list[float] = field(default_factory=list)

    def tracked_rank(self) -> int | None:
        """Rank of the tracked answer counting ties against it; None if it was never scored."""
        if self.tracked_misfit is None:
            return None
        return sum(1 for m in self.misfits if m <= self.tracked_misfit)

    def to_frame(self):
        """The candidates as a pandas DataFrame, one row each, misfit parts as columns."""
        import pandas as pd

        rows = []
        for c in self.candidates:
            parts = c.scored.match.parts
            rows.append({
                "rank": c.rank, "smiles": c.smiles, "inchikey": c.inchikey, "misfit": c.misfit,
                "confidence": c.confidence, "tied": c.tied,
                "shift": parts.shift, "integral": parts.integral, "multiplicity": parts.multiplicity,
                "coupling": parts.coupling, "count": parts.count, "reason": c.reason,
            })
        return pd.DataFrame(rows)


# --------------------------------------------------------------- observe ----


def observe(formula: Formula, spectrum: Spectrum, solvent: str | None = None,
            field_mhz: float | None = None, keep_all_peaks: bool = False) -> tuple[Observation, tuple[Dropped, ...]]:
    """Drop solvent signals and find the plausible integral normalisations.

    Raises InputError when nothing is left or the integrals cannot fit the formula.
    """
    chosen = find_solvent(solvent or spectrum.solvent or "CDCl3")
    if keep_all_peaks:
        peaks, dropped = spectrum.peaks, ()
    else:
        peaks, dropped = drop_solvent_signals(spectrum.peaks, chosen)
    if not peaks:
        raise InputError("no peaks left after dropping solvent, water and TMS signals")
    hydrogens = formula["H"]
    if hydrogens == 0:
        raise InputError(f"{formula.hill} has no hydrogen; a 1H spectrum cannot rank its isomers")
    labile = min(hydrogens, 2 * formula["N"] + formula["O"] + formula["S"])
    norms = normalise(peaks, hydrogens, labile)
    field_used = field_mhz or spectrum.field_mhz or 400.0
    return Observation(peaks, tuple(norms), chosen.id, field_used, chosen.exchange), dropped


# ----------------------------------------------------------------- score ----

_predictors: dict[tuple[str, float], Predictor] = {}


def _predictor(solvent: str, field_mhz: float) -> Predictor:
    key = (solvent, field_mhz)
    if key not in _predictors:
        _predictors[key] = Predictor(solvent=solvent, field_mhz=field_mhz)
    return _predictors[key]


def score(smiles: str, observation: Observation, settings: Settings = DEFAULT_SETTINGS) -> Scored | None:
    """Predict a candidate's spectrum and match it to the observation.

    A pure function of its arguments; returns None for a SMILES RDKit cannot read.
    """
    mol = Chem.MolFromSmiles(smiles)
    if mol is None:
        return None
    signals = tuple(_predictor(observation.solvent, observation.field_mhz).predict(mol))
    best = None
    for norm in observation.normalisations:
        m = match(signals, observation.peaks, norm.counts, norm.missing, observation.exchange_absent, settings)
        misfit = round(m.misfit + norm.error, 6)
        if best is None or misfit < best.misfit:
            best = Scored(smiles, misfit, m, norm, signals)
    return best


def _score_chunk(args: tuple[list[str], Observation, Settings]) -> list[Scored | None]:
    smiles, observation, settings = args
    return [score(s, observation, settings) for s in smiles]


# ------------------------------------------------------------ candidates ----


def read_candidates(path: str) -> tuple[list[str], int]:
    """SMILES (one per line, optional name after white space) or SDF; returns (smiles, bad lines)."""
    file = Path(path)
    if not file.is_file():
        raise InputError(f"candidates file {path!r} not found")
    smiles, bad = [], 0
    if file.suffix.lower() in (".sdf", ".sd", ".mol"):
        for mol in Chem.SDMolSupplier(str(file)):
            if mol is None:
                bad += 1
            else:
                smiles.append(Chem.MolToSmiles(mol))
        return smiles, bad
    try:
        lines = file.read_text(encoding="utf-8").splitlines()
    except (OSError, UnicodeDecodeError) as exc:
        raise InputError(f"cannot read candidates file {path!r}: {exc}") from None
    for line in lines:
        text = line.strip()
        if not text or text.startswith("#"):
            continue
        mol = Chem.MolFromSmiles(text.split()[0])
        if mol is None:
            bad += 1
        else:
            smiles.append(Chem.MolToSmiles(mol))
    return smiles, bad


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


@dataclass
class Identifier:
    """Rank candidate structures for a formula and a peak list.

    Parameters
    ----------
    top : how many candidates to keep (ties at the cut are counted, not kept).
    solvent : overrides the peak list's own solvent; CDCl3 when neither says.
    require, forbid : SMARTS that narrow the candidates.
    use_hints : read hints from the spectrum to narrow the isomer space
        (each one reported with what it removed).
    workers : scoring processes; 1 scores in this process.
    budget : seconds after which the run stops and says it is incomplete.
    ceiling : the generator's limit on the estimated isomer space.
    progress : print a progress line on stderr on long runs.
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
    track: str | None = None
    """A known answer's SMILES: the run then records every misfit and the answer's (benchmarks)."""

    def identify(self, formula: str, peaks: str | Spectrum, candidates: str | None = None) -> Shortlist:
        """Run the identification; ``peaks`` is inline text, a file path or a Spectrum."""
        if self.top < 1:
            raise InputError("--top must be at least 1")
        if self.workers < 1:
            raise InputError("--workers must be at least 1")
        parsed = parse_formula(formula)
        spectrum = peaks if isinstance(peaks, Spectrum) else read_peaks(peaks)
        observation, dropped = observe(parsed, spectrum, self.solvent, self.field_mhz, self.keep_all_peaks)
        require = [compile_smarts(s, "--require") for s in self.require]
        forbid = [compile_smarts(s, "--forbid") for s in self.forbid]
        hints = tuple(read_hints(observation.peaks, observation.normalisations[0].counts)) if self.use_hints else ()
        result = Shortlist(parsed, observation, dropped, [], 0, False, hints)
        if candidates is None:
            stream = IsomerStream(parsed, require=self.require, forbid=self.forbid, ceiling=self.ceiling,
                                  budget=self.budget, hints=hints)
            source: Iterable[str] = (iso.smiles for iso in stream)
        else:
            stream = None
            listed, result.skipped_inputs = read_candidates(candidates)
            source = self._suspects(listed, parsed, require, forbid, result)
        ranked = self._rank(source, observation, result)
        if stream is not None:
            result.complete = stream.complete_run and not self._timed_out
            result.hinted = dict(stream.hinted)
        else:
            result.complete = not self._timed_out
        result.candidates = ranked
        return result

    def _suspects(self, smiles: list[str], formula: Formula, require, forbid, result: Shortlist) -> Iterator[str]:
        seen = set()
        for s in smiles:
            mol = Chem.MolFromSmiles(s)
            if rdMolDescriptors.CalcMolFormula(mol) != formula.hill:
                result.other_formula += 1
                continue
            if any(not mol.HasSubstructMatch(p) for p in require) or any(mol.HasSubstructMatch(p) for p in forbid):
                continue
            if s not in seen:
                seen.add(s)
                yield s

    def _scored_stream(self, source: Iterable[str], observation: Observation) -> Iterator[Scored | None]:
        chunks = _chunks(source, _CHUNK)
        if self.workers == 1:
            for chunk in chunks:
                yield from _score_chunk((chunk, observation, self.settings))
            return
        with ProcessPoolExecutor(max_workers=self.workers) as pool:
            jobs = ((chunk, observation, self.settings) for chunk in chunks)
            for results in pool.map(_score_chunk, jobs, chunksize=1):
                yield from results

    def _rank(self, source: Iterable[str], observation: Observation, result: Shortlist) -> list[Candidate]:
        temp = temperature()
        heap: list[tuple[float, str, Scored]] = []  # max-heap via negated misfit
        log_norm = -math.inf
        start = time.monotonic()
        self._timed_out = False
        last_note = start
        tied_at_cut: list[Scored] = []  # equal to the worst kept misfit: shown too, as ties
        for scored in self._scored_stream(self._budgeted(source, start), observation):
            if scored is None:
                continue
            result.explored += 1
            if self.track is not None:
                result.misfits.append(scored.misfit)
                if scored.smiles == self.track:
                    result.tracked_misfit = scored.misfit
            now = time.monotonic()
            if self.progress and now - last_note > 2.0 and heap:
                last_note = now
                print(f"peakrank: {result.explored:,} candidates scored in {now - start:.0f} s; "
                      f"best misfit {-max(heap)[0]:.3f}", file=sys.stderr, end="\r")
            log_norm = _logaddexp(log_norm, -scored.misfit / temp)
            item = (-scored.misfit, _reverse(scored.smiles), scored)
            if len(heap) < self.top:
                heapq.heappush(heap, item)
                continue
            cut = -heap[0][0]
            if item[:2] > heap[0][:2]:
                evicted = heapq.heapreplace(heap, item)[2]
                if -heap[0][0] < cut:
                    tied_at_cut = []
                elif evicted.misfit == cut:
                    tied_at_cut.append(evicted)
            elif scored.misfit == cut:
                tied_at_cut.append(scored)
        if self.progress and result.explored:
            print(file=sys.stderr)
        best = sorted([s for _, _, s in heap] + tied_at_cut, key=lambda s: (s.misfit, s.smiles))
        ranked, previous, rank = [], None, 0
        for position, s in enumerate(best, 1):
            if previous is None or s.misfit != previous:
                rank = position
            previous = s.misfit
            confidence = math.exp(-s.misfit / temp - log_norm)
            ranked.append(Candidate(rank, s.smiles, Chem.MolToInchiKey(Chem.MolFromSmiles(s.smiles)),
                                    s.misfit, confidence, False, s, _reason(s)))
        for i, c in enumerate(ranked):
            tied = any(o.misfit == c.misfit for j, o in enumerate(ranked) if j != i)
            ranked[i] = Candidate(c.rank, c.smiles, c.inchikey, c.misfit, c.confidence, tied, c.scored, c.reason)
        return ranked

    def _budgeted(self, source: Iterable[str], start: float) -> Iterator[str]:
        for s in source:
            if self.budget is not None and time.monotonic() - start > self.budget:
                self._timed_out = True
                return
            yield s


def _reverse(smiles: str) -> tuple[int, ...]:
    """A key that orders SMILES backwards, so the heap evicts the later of equal misfits."""
    return tuple(-ord(ch) for ch in smiles) + (1,)


def _chunks(items: Iterable[str], size: int) -> Iterator[list[str]]:
    chunk = []
    for item in items:
        chunk.append(item)
        if len(chunk) == size:
            yield chunk
            chunk = []
    if chunk:
        yield chunk


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
