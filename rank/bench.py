"""Run a known-answer set and measure how often the true structure comes first.

A known-answer file is tab-separated, ``#`` comment lines first, with columns

    id  name  formula  smiles  solvent  peaks  source

(``peaks`` inline as in a paper, or a path to a peak file).  The rank of the
true structure counts ties against it: with three candidates at its misfit, the
true one is ranked last of the three.  The mean reciprocal rank is the mean of
1/rank, with 0 for an answer that was never scored.
"""

from __future__ import annotations

import csv
import math
import time
from dataclasses import dataclass
from pathlib import Path

from rdkit import Chem

from .errors import InputError
from .shortlist import Identifier

__all__ = [
    "COLUMNS", "Case", "Outcome", "fit_temperature", "read_cases", "reliability", "run_case", "summary"
]

COLUMNS = ("id", "name", "formula", "smiles", "solvent", "peaks", "source")


@dataclass(frozen=True)
class Case:
    id: str
    name: str
    formula: str
    smiles: str
    solvent: str
    peaks: str
    source: str


@dataclass(frozen=True)
class Outcome:
    case: Case
    rank: int | None          # None: the true structure was never scored
    scored: int
    seconds: float
    best: str | None
    true_misfit: float | None
    best_misfit: float | None
    misfits: tuple[float, ...]
    refused: str = ""


def read_cases(path: str) -> list[Case]:
    """Rows of a known-answer file; InputError for a missing file or column."""
    file = Path(path)
    if not file.is_file():
        raise InputError(f"known-answer file {path!r} not found")
    lines = [ln for ln in file.read_text(encoding="utf-8").splitlines() if ln.strip() and not ln.startswith("#")]
    rows = list(csv.DictReader(lines, delimiter="\t", quoting=csv.QUOTE_NONE))
    if not rows or any(c not in rows[0] for c in COLUMNS):
        raise InputError(f"{path}: needs the tab-separated columns {', '.join(COLUMNS)}")
    cases = []
    for r in rows:
        mol = Chem.MolFromSmiles(r["smiles"])
        if mol is None:
            raise InputError(f"{path}: row {r['id']}: SMILES {r['smiles']!r} is not valid")
        cases.append(Case(r["id"], r["name"], r["formula"], Chem.MolToSmiles(mol, isomericSmiles=False),
                          r["solvent"] or "CDCl3", r["peaks"], r["source"]))
    return cases


def run_case(case: Case, **options) -> Outcome:
    """Identify one case with the known answer tracked; a refused run (e.g. a space
    above the ceiling) is an outcome with the reason, not an error."""
    start = time.perf_counter()
    try:
        result = Identifier(track=case.smiles, **options).identify(case.formula, case.peaks)
    except InputError as exc:
        return Outcome(case, None, 0, time.perf_counter() - start, None, None, None, (), str(exc))
    seconds = time.perf_counter() - start
    best = result.candidates[0] if result.candidates else None
    return Outcome(case, result.tracked_rank(), result.explored, seconds,
                   best.smiles if best else None, result.tracked_misfit,
                   best.misfit if best else None, tuple(result.misfits))


def summary(outcomes: list[Outcome]) -> dict[str, float]:
    """top-1, top-3, top-10 (fractions), MRR, and time figures."""
    n = len(outcomes)
    ranks = [o.rank for o in outcomes]
    times = sorted(o.seconds for o in outcomes)

    def within(k: int) -> float:
        return sum(1 for r in ranks if r is not None and r <= k) / n

    return {
        "cases": n,
        "top1": within(1), "top3": within(3), "top10": within(10),
        "mrr": sum(1 / r for r in ranks if r) / n,
        "scored_total": sum(o.scored for o in outcomes),
        "median_s": times[n // 2] if n % 2 else (times[n // 2 - 1] + times[n // 2]) / 2,
        "max_s": times[-1],
    }


def fit_temperature(outcomes: list[Outcome]) -> float:
    """Softmax temperature maximising the likelihood of the true structures.

    Minimises Σ_cases [m_true / T + log Σ_i exp(-m_i / T)] over T with scipy's
    bounded Brent method; cases whose answer was never scored are left out.
    """
    from scipy.optimize import minimize_scalar

    usable = [o for o in outcomes if o.true_misfit is not None and o.misfits]

    def nll(log_t: float) -> float:
        t = math.exp(log_t)
        total = 0.0
        for o in usable:
            low = min(o.misfits)
            total += (o.true_misfit - low) / t + math.log(sum(math.exp(-(m - low) / t) for m in o.misfits))
        return total

    best = minimize_scalar(nll, bounds=(math.log(0.01), math.log(100.0)), method="bounded")
    return math.exp(best.x)


def reliability(outcomes: list[Outcome], temperature: float, bins: int = 5) -> list[tuple[str, int, float, float]]:
    """Calibration of the top candidate's confidence: (bin, cases, mean confidence, fraction right)."""
    rows = []
    pairs = []
    for o in outcomes:
        if not o.misfits:
            continue
        low = min(o.misfits)
        norm = sum(math.exp(-(m - low) / temperature) for m in o.misfits)
        pairs.append((1.0 / norm, o.rank == 1))
    for b in range(bins):
        lo, hi = b / bins, (b + 1) / bins
        inside = [(c, ok) for c, ok in pairs if lo <= c < hi or (b == bins - 1 and c == 1.0)]
        if inside:
            rows.append((f"{lo:.1f}-{hi:.1f}", len(inside), sum(c for c, _ in inside) / len(inside),
                         sum(ok for _, ok in inside) / len(inside)))
    return rows
