"""Run a known-answer set and measure how often the true structure comes first.

A known-answer file is tab-separated, ``#`` comment lines first, with columns

    id  name  formula  smiles  solvent  peaks  source

(``peaks`` inline as in a paper, or a path to a peak file).  The open assigned
data set (``benchmarks/data/open-spectra.tsv``, derived from NMRShiftDB2) is read
as it is: columns ``id`` (InChIKey), ``nmrshiftdb2_id``, ``smiles``, ``formula``,
``solvent``, ``h1`` (shift and H count per peak, no multiplicities), ``c13``,
``hsqc``.  Its rows are split once into a fit part (about 80 %) and a held-out
part (about 20 %) by the SHA-256 of the InChIKey (:func:`data_part`); figures
are quoted on the held-out part, and nothing is fitted on it.  In library mode
each compound is ranked among every structure of its formula in a grouped file
(``benchmarks/data/open-structures-by-formula.tsv``).  The rank of the
true structure counts ties against it: with three candidates at its misfit, the
true one is ranked last of the three.  The mean reciprocal rank is the mean of
1/rank, with 0 for an answer that was never scored.
"""

from __future__ import annotations

import csv
import hashlib
import math
import re
import time
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path

from rdkit import Chem

from .errors import InputError
from .formula import parse_formula
from .shortlist import Identifier

__all__ = [
    "COLUMNS", "OPEN_COLUMNS", "PARTS", "Case", "Outcome", "data_part", "fit_temperature", "read_cases",
    "read_library", "reliability", "run_case", "select_cases", "summary",
]

COLUMNS = ("id", "name", "formula", "smiles", "solvent", "peaks", "source")
OPEN_COLUMNS = ("id", "nmrshiftdb2_id", "smiles", "formula", "solvent", "h1")
PARTS = ("fit", "held-out", "all")


@dataclass(frozen=True)
class Case:
    id: str
    name: str
    formula: str
    smiles: str
    solvent: str
    peaks: str
    source: str
    part: str = "all"
    carbon: str = ""
    """The 13C list as the file gives it (the open data's ``c13`` column, an optional ``carbon`` column of a
    known-answer file); "" when there is none."""


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


def data_part(key: str) -> str:
    """``"held-out"`` for about one key in five (SHA-256 of the key modulo 5 is 0), else ``"fit"``.

    >>> data_part("AAAXMNYUNVCMCJ-UHFFFAOYSA-N"), data_part("AADOGXABUHCROC-UHFFFAOYSA-N")
    ('held-out', 'fit')
    """
    return "held-out" if int(hashlib.sha256(key.encode()).hexdigest(), 16) % 5 == 0 else "fit"


def read_cases(path: str, part: str = "all") -> list[Case]:
    """Rows of a known-answer file or of the open data set; InputError for a missing file or column.

    ``part`` keeps the fit or the held-out part of the open data set (``"all"``: every row).
    Rows of the open data with elements peakrank does not handle are left out.
    """
    if part not in PARTS:
        raise InputError(f"part {part!r} unknown; use one of {', '.join(PARTS)}")
    file = Path(path)
    if not file.is_file():
        raise InputError(f"known-answer file {path!r} not found")
    text = file.read_text(encoding="utf-8")
    lines = [ln for ln in text.splitlines() if ln.strip() and not ln.startswith("#")]
    open_data = re.search(r"^# columns: id \(InChIKey\), nmrshiftdb2_id", text, re.MULTILINE) is not None
    header = OPEN_COLUMNS + ("c13", "hsqc") if open_data else None  # the open data names its columns in a comment
    rows = list(csv.DictReader(lines, fieldnames=header, delimiter="\t", quoting=csv.QUOTE_NONE))
    if open_data:
        rows = [_open_row(r) for r in rows if _supported(r["formula"])]
    if not rows or any(c not in rows[0] for c in COLUMNS):
        raise InputError(f"{path}: needs the tab-separated columns {', '.join(COLUMNS)}")
    cases = []
    for r in rows:
        mol = Chem.MolFromSmiles(r["smiles"])
        if mol is None:
            raise InputError(f"{path}: row {r['id']}: SMILES {r['smiles']!r} is not valid")
        case = Case(r["id"], r["name"], r["formula"], Chem.MolToSmiles(mol, isomericSmiles=False),
                    r["solvent"] or "CDCl3", r["peaks"], r["source"], r.get("part", "all"), r.get("carbon") or "")
        if part == "all" or case.part == part:
            cases.append(case)
    return cases


def _open_row(r: dict[str, str]) -> dict[str, str]:
    return {"id": r["id"], "name": f"NMRShiftDB2 {r['nmrshiftdb2_id']}", "formula": r["formula"],
            "smiles": r["smiles"], "solvent": r["solvent"], "peaks": r["h1"],
            "source": f"NMRShiftDB2 {r['nmrshiftdb2_id']} (open data)", "part": data_part(r["id"]),
            "carbon": r["c13"]}


def _supported(formula: str) -> bool:
    """A formula peakrank handles: its elements only, with carbon."""
    try:
        return parse_formula(formula)["C"] > 0
    except InputError:
        return False


def select_cases(cases: list[Case], only: Sequence[str] = (), carbons: str | None = None,
                 sample: int | None = None, heteroatoms: int | None = None) -> list[Case]:
    """The cases named in ``only`` (all when empty), with a carbon count in ``carbons`` ("LOW-HIGH")
    and at most ``heteroatoms`` atoms other than C and H, then the first ``sample`` of them in a fixed
    order (by the SHA-256 of the id)."""
    chosen = [c for c in cases if not only or c.id in only]
    if carbons:
        m = re.fullmatch(r"(\d+)-(\d+)", carbons.strip())
        if not m:
            raise InputError(f"--carbons {carbons!r}: give a range such as 2-8")
        low, high = int(m.group(1)), int(m.group(2))
        chosen = [c for c in chosen if low <= parse_formula(c.formula)["C"] <= high]
    if heteroatoms is not None:
        chosen = [c for c in chosen
                  if sum(n for element, n in parse_formula(c.formula).counts if element not in "CH") <= heteroatoms]
    if sample is not None:
        chosen = sorted(chosen, key=lambda c: hashlib.sha256(c.id.encode()).hexdigest())[:sample]
    return chosen


def read_library(path: str) -> dict[str, list[str]]:
    """Structures by formula from a grouped file: ``formula<TAB>smiles|smiles|...`` per line."""
    file = Path(path)
    if not file.is_file():
        raise InputError(f"library file {path!r} not found")
    library = {}
    for line in file.read_text(encoding="utf-8").splitlines():
        if line.strip() and not line.startswith("#") and "\t" in line:
            formula, smiles = line.split("\t", 1)
            library[formula.strip()] = [s for s in smiles.strip().split("|") if s]
    return library


def run_case(case: Case, library: dict[str, list[str]] | None = None, with_carbon: bool = False,
             **options) -> Outcome:
    """Identify one case with the known answer tracked; a refused run (e.g. a space
    above the ceiling) is an outcome with the reason, not an error.  With a
    ``library``, the candidates are the library's structures of the case's formula;
    ``with_carbon`` adds the case's 13C list when it has one."""
    start = time.perf_counter()
    suspects = None if library is None else library.get(case.formula, [case.smiles])
    carbon = case.carbon if with_carbon and case.carbon else None
    try:
        result = Identifier(track=case.smiles, **options).identify(case.formula, case.peaks, suspects, carbon)
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
