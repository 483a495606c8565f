"""Pair the open data's HSQC entries with atoms through the 13C prediction.

The open data set ``benchmarks/data/open-spectra.tsv`` (derived from NMRShiftDB2, the open-access,
open-content NMR database: Steinbeck & Kuhn, Phytochemistry 2004, 65, 2711; Kuhn & Schloerer, Magn.
Reson. Chem. 2015, 53, 582 -- keep this attribution with anything derived) gives, per compound, the
one-bond 13C-1H pairs ``shiftC/shiftH (nH)`` (column ``hsqc``) and the 13C list with multiplicities
(column ``c13``), but no atom numbers.  This module puts the observed H shifts on atoms:

1. Each H-bearing 13C peak of the ``c13`` column (``shift (CH|CH2|CH3)``) with its HSQC pairs is one
   *peak*: its H per carbon k comes from the multiplicity, its carbon count from the H it carries
   (Σ nH / k; symmetric carbons are merged in the data).  A CH2 carrying two H shifts is one carbon
   with two (diastereotopic) H; a CH or CH3 with several H shifts is several carbons that coincide in
   δC.  A CH3 whose H shifts are not whole methyls, or an H total that is not a whole number of
   carbons, makes the row inconsistent.
2. The predicted 13C classes (``rank.predict.CarbonPredictor``, its environment correction on) with
   the same k take those carbons, each class as many as it has atoms: the Hungarian algorithm
   (scipy's ``linear_sum_assignment``; H. W. Kuhn, Naval Res. Logist. Q. 1955, 2, 83) on
   |δC,obs − δC,pred| in ppm, solved separately for CH, CH2 and CH3.  Unequal carbon counts of one
   kind leave the compound *unmatched*.
3. The pairing is *unambiguous* when every other assignment (a different count of some peak's carbons
   in some class) costs more than ``margin`` ppm above the best one: the second-best assignment is
   found by forbidding, in turn, one carbon of each (peak, class) pair of the best (as in K. G. Murty,
   Oper. Res. 1968, 16, 682) and re-solving.  A peak with several H shifts whose carbons go to
   different classes leaves the H ambiguous too (which carbon carries which H is not in the data).
   In an ambiguous compound, a class is still *firm* when none of its (peak, class) pairs can change
   within the margin: every near alternative gives it the same carbons (``Pairing.firm``).
4. Each H-bearing carbon atom then carries its observed H shift(s), one per H.

Carbons whose H shifts agree to ``H_TOLERANCE`` (0.02 ppm) may exchange places without that counting as
another assignment (:func:`_h_groups`).

Coverage (margin 2 ppm): held-out part 614 compounds, 283 paired (46.1 %), 309 ambiguous (289 of them with
firm classes), 11 unmatched (an HSQC or 13C entry missing), 11 inconsistent; fit part 2346: 1326 paired (56.5 %),
929 ambiguous, 36 unmatched, 53 inconsistent.  On the fit part, margin 1 / 2 / 3 / 4 ppm pairs 63 / 57 / 51 /
46 % of the compounds; the simulation below puts 1.7 % of the H of the paired compounds on a wrong carbon at
margin 2 with 13C errors of 1 × σ (4.2 % at 2 × σ; 0.9 % and 2.9 % at margin 3).  The simulation does not see
systematic 13C errors larger than the margin (e.g. the heavy-atom shift of a CH2Br predicted 6 ppm too low in
4-bromobutanoic acid, whose middle CH2 then takes the CH2Br place): such a pairing is confident and wrong, and
shows among the worst compounds of ``predict_open.py --pairing hsqc``.

Run as a script for the coverage on one part: ``python benchmarks/hsqc_pairing.py [--part held-out|fit]
[--margin PPM]``; ``--simulate SCALE`` instead estimates how often a pairing called unambiguous is wrong:
the best assignment is taken as the truth, the prediction replaced by the assigned δC minus Gaussian noise
of SCALE × the predicted class's σ, and the pairing redone.  The other benchmark scripts import
:func:`read_hsqc`, :func:`pair` and :func:`pair_cases`.
"""

from __future__ import annotations

import argparse
import csv
import math
import random
import re
import statistics
import sys
from collections import Counter, defaultdict
from dataclasses import dataclass, field, replace
from pathlib import Path
from types import SimpleNamespace

import numpy as np
from rdkit import Chem
from scipy.optimize import linear_sum_assignment

from rank.bench import data_part, read_cases
from rank.predict import CarbonPredictor

DATA = Path(__file__).resolve().parent / "data" / "open-spectra.tsv"
MARGIN = 2.0
"""Default margin (ppm of summed |δC,obs − δC,pred|) between the best and the second-best assignment."""

H_TOLERANCE = 0.02
"""ppm: carbons whose H shifts agree this closely may exchange places without counting as another assignment."""
TIE = 1e-4
"""Weight of Δ² added to |Δ| so that of two assignments of equal |Δ| the one in shift order is taken."""
COLUMNS = ("id", "nmrshiftdb2_id", "smiles", "formula", "solvent", "h1", "c13", "hsqc")
H_PER_CARBON = {"CH": 1, "CH2": 2, "CH3": 3}
STATUSES = ("paired", "ambiguous", "unmatched", "inconsistent", "no hsqc")
_PAIR = re.compile(r"^\s*(-?\d+(?:\.\d+)?)\s*/\s*(-?\d+(?:\.\d+)?)\s*\((\d+)H\)\s*$")
_CARBON = re.compile(r"^\s*(-?\d+(?:\.\d+)?)\s*\((C|CH|CH2|CH3)\)\s*$")
_BANNED = 1e6


@dataclass(frozen=True)
class Peak:
    """One H-bearing 13C peak with its HSQC pairs: ``carbons`` carbons of ``k`` H each at ``shift``;
    ``h`` the observed H shift of each of its H (len = carbons × k), in the order they go to carbons."""

    shift: float
    k: int
    carbons: int
    h: tuple[float, ...]

    def carbon_h(self, n: int) -> tuple[float, ...]:
        """The observed H shifts of the n-th carbon of this peak."""
        return self.h[n * self.k:(n + 1) * self.k]


@dataclass
class Pairing:
    """The outcome for one compound.

    status : paired, ambiguous, unmatched, inconsistent or "no hsqc".
    reason : why it is not paired ("" when paired).
    observed : heavy-atom index -> observed H shifts on that atom (one per H); filled when paired or ambiguous.
    cost : summed |δC,obs − δC,pred| of the best assignment (ppm).
    gap : cost of the second-best assignment minus ``cost`` (inf when there is no other).
    firm : the H-bearing atoms whose observed H are the same in every assignment within the margin (all of
        them when paired; in an ambiguous compound, those of the predicted classes that no near alternative
        changes).
    """

    status: str
    reason: str = ""
    observed: dict[int, tuple[float, ...]] = field(default_factory=dict)
    cost: float = math.nan
    gap: float = math.nan
    firm: frozenset[int] = frozenset()
    carbon: dict[int, float] = field(default_factory=dict)
    """heavy-atom index -> the observed δC its carbon was given."""


def read_hsqc(path: str | Path = DATA, part: str = "all") -> dict[str, dict[str, str]]:
    """The open data rows by InChIKey (columns as in the file's ``# columns:`` line), the fit or held-out
    part only when ``part`` says so (split by ``rank.bench.data_part``, as ``read_cases`` does)."""
    lines = [ln for ln in Path(path).read_text(encoding="utf-8").splitlines() if ln.strip() and not ln.startswith("#")]
    rows = csv.DictReader(lines, fieldnames=COLUMNS, delimiter="\t", quoting=csv.QUOTE_NONE)
    return {r["id"]: r for r in rows if part == "all" or data_part(r["id"]) == part}


def parse_pairs(text: str) -> list[tuple[float, float, int]]:
    """'shiftC/shiftH (nH), ...' -> [(δC, δH, nH)]; ValueError for an entry that does not read."""
    pairs = []
    for item in filter(None, (t.strip() for t in text.split(","))):
        m = _PAIR.match(item)
        if m is None:
            raise ValueError(f"HSQC entry {item!r} does not read")
        pairs.append((float(m[1]), float(m[2]), int(m[3])))
    return pairs


def parse_carbons(text: str) -> list[tuple[float, str]]:
    """'shift (C|CH|CH2|CH3), ...' -> [(δC, multiplicity)]."""
    found = []
    for item in filter(None, (t.strip() for t in text.split(","))):
        m = _CARBON.match(item)
        if m is None:
            raise ValueError(f"13C entry {item!r} does not read")
        found.append((float(m[1]), m[2]))
    return found


def peaks(hsqc: str, c13: str) -> list[Peak]:
    """The H-bearing 13C peaks with their H; ValueError when the two columns do not agree."""
    kinds: dict[float, set[str]] = defaultdict(set)
    for shift, mult in parse_carbons(c13):
        if mult in H_PER_CARBON:
            kinds[shift].add(mult)
    by_carbon: dict[float, list[tuple[float, int]]] = defaultdict(list)
    for c, h, n in parse_pairs(hsqc):
        by_carbon[c].append((h, n))
    found = []
    for c, hs in by_carbon.items():
        if len(kinds.get(c, ())) != 1:
            raise ValueError(f"δC {c}: {'no' if not kinds.get(c) else 'more than one'} H-bearing 13C peak")
        k = H_PER_CARBON[next(iter(kinds[c]))]
        total = sum(n for _, n in hs)
        if total % k:
            raise ValueError(f"δC {c}: {total} H is not a whole number of {k}-H carbons")
        carbons = total // k
        if k == 3 and any(n % 3 for _, n in hs):
            raise ValueError(f"δC {c}: a CH3 with H shifts that are not whole methyls")
        if len(hs) == k and all(n == carbons for _, n in hs):   # e.g. diastereotopic CH2: each carbon carries both
            h = tuple(s for _ in range(carbons) for s, _ in sorted(hs))
        else:
            h = tuple(s for s, n in sorted(hs) for _ in range(n))
        found.append(Peak(c, k, carbons, h))
    missing = set(kinds) - set(by_carbon)
    if missing:
        raise ValueError(f"δC {', '.join(map(str, sorted(missing)))}: H-bearing carbon without an HSQC pair")
    return sorted(found, key=lambda p: (p.k, -p.shift))


def _solve(cost: np.ndarray) -> tuple[float, np.ndarray]:
    """The cheapest assignment: (cost, column of each row); inf when it needs a forbidden pair."""
    rows, cols = linear_sum_assignment(cost)
    total = float(cost[rows, cols].sum())
    return (math.inf if total >= _BANNED else total), cols


def _block(obs: list[tuple[int, int]], shifts: list[float], pred: list[tuple[int, int]],
           centres: list[float], group: list[int]) -> tuple[float, dict[tuple[int, int], float], np.ndarray]:
    """One H count: rows are observed carbons (peak, n), columns predicted atoms (class, n); ``group`` gives
    each peak's H group (peaks whose carbons carry the same H, to ``H_TOLERANCE``).

    Returns the best cost, for each (peak, class) pair of the best assignment the extra cost of the cheapest
    assignment that puts fewer carbons of the peak's H group in the class, and the column of each row."""
    delta = np.subtract.outer(np.array([shifts[p] for p, _ in obs]), np.array([centres[c] for c, _ in pred]))
    cost = np.abs(delta) + TIE * delta ** 2   # ties of |Δ| (both carbons beyond both predictions) go in shift order
    best, cols = _solve(cost)
    used = Counter((group[obs[r][0]], pred[c][0]) for r, c in enumerate(cols))
    found: dict[tuple[int, int], float] = {}
    for (g, cls), count in used.items():
        # at most count - 1 of the group's carbons in the class: forbid the class to all but count - 1 of them
        rows = [r for r, (p, _) in enumerate(obs) if group[p] == g]
        banned = cost.copy()
        for r in rows[:len(rows) - count + 1]:
            banned[r, [c for c, (q, _) in enumerate(pred) if q == cls]] = _BANNED
        found[g, cls] = _solve(banned)[0] - best
    gaps = {(p, cls): found[group[p], cls] for p, cls in {(obs[r][0], pred[c][0]) for r, c in enumerate(cols)}}
    return best, gaps, cols


def _h_groups(found: list[Peak]) -> list[int]:
    """A group number per peak: peaks of one H count whose carbons all carry the same H shifts (to
    ``H_TOLERANCE`` of the group's first peak) share a group, since exchanging their carbons moves no H by
    more than that."""
    group = list(range(len(found)))
    uniform = [n for n, p in enumerate(found) if all(p.carbon_h(i) == p.carbon_h(0) for i in range(p.carbons))]
    firsts: list[int] = []
    for n in sorted(uniform, key=lambda n: (found[n].k, found[n].carbon_h(0))):
        first = next((m for m in firsts if found[m].k == found[n].k and all(
            abs(a - b) <= H_TOLERANCE for a, b in zip(found[m].carbon_h(0), found[n].carbon_h(0)))), None)
        if first is None:
            firsts.append(n)
        else:
            group[n] = first
    return group


def pair(mol: Chem.Mol, hsqc: str, c13: str, predictor: CarbonPredictor, margin: float = MARGIN) -> Pairing:
    """Put the observed H shifts of one compound on its atoms (module docstring)."""
    if not hsqc.strip():
        return Pairing("no hsqc", "no HSQC pairs")
    try:
        found = peaks(hsqc, c13)
    except ValueError as err:
        return Pairing("inconsistent", str(err))
    classes = [s for s in predictor.predict(mol) if s.n_h]
    group = _h_groups(found)
    observed: dict[int, tuple[float, ...]] = {}
    carbon: dict[int, float] = {}
    total, gaps, split = 0.0, {}, set()
    for k in sorted({p.k for p in found} | {s.n_h for s in classes}):
        mine = [n for n, p in enumerate(found) if p.k == k]
        theirs = [n for n, s in enumerate(classes) if s.n_h == k]
        obs = [(p, n) for p in mine for n in range(found[p].carbons)]
        pred = [(c, n) for c in theirs for n in range(len(classes[c].atoms))]
        if len(obs) != len(pred):
            kind = {1: "CH", 2: "CH2", 3: "CH3"}.get(k, f"CH{k}")
            return Pairing("unmatched", f"{len(obs)} {kind} observed, {len(pred)} predicted")
        best, block_gaps, cols = _block(obs, [p.shift for p in found], pred, [s.shift for s in classes], group)
        total += best
        gaps.update(block_gaps)
        went: dict[int, set[int]] = defaultdict(set)
        for r, c in enumerate(cols):
            (p, n), (cls, a) = obs[r], pred[c]
            observed[classes[cls].atoms[a]] = found[p].carbon_h(n)
            carbon[classes[cls].atoms[a]] = found[p].shift
            went[p].add(cls)
        split |= {p for p, cls in went.items() if len(cls) > 1 and max(found[p].h) - min(found[p].h) > H_TOLERANCE}
    # a class is firm when every assignment within the margin gives it the same carbons, with known H
    loose = {cls for (p, cls), g in gaps.items() if g <= margin or p in split}
    firm = frozenset(a for n, s in enumerate(classes) if n not in loose for a in s.atoms)
    gap = min(gaps.values(), default=math.inf)
    if gap <= margin:
        return Pairing("ambiguous", f"second-best assignment {gap:.2f} ppm above the best", observed, total, gap, firm,
                       carbon)
    if split:
        shifts = ", ".join(str(found[p].shift) for p in sorted(split))
        return Pairing("ambiguous", f"δC {shifts}: carbons in several classes with several H shifts", observed,
                       total, gap, firm, carbon)
    return Pairing("paired", "", observed, total, gap, firm, carbon)


def pair_cases(cases, margin: float = MARGIN, path: str | Path = DATA) -> dict[str, Pairing]:
    """case id -> :func:`pair` of its row, for ``rank.bench.Case`` objects of the open data (their SMILES, so
    atom indices are those of ``Chem.MolFromSmiles(case.smiles)``; their solvent's 13C predictor)."""
    rows = read_hsqc(path)
    carbon: dict[str, CarbonPredictor] = {}
    found = {}
    for case in cases:
        row = rows.get(case.id)
        if row is None:
            continue
        if case.solvent not in carbon:
            carbon[case.solvent] = CarbonPredictor(case.solvent)
        found[case.id] = pair(Chem.MolFromSmiles(case.smiles), row["hsqc"], row["c13"], carbon[case.solvent], margin)
    return found


def simulate(cases, margin: float, scale: float, seed: int = 1) -> tuple[int, int, int, int]:
    """How often a pairing called unambiguous is wrong, when the best assignment is taken as the truth and the
    13C prediction is replaced by the assigned δC minus Gaussian noise of ``scale`` × each class's σ.

    Returns (compounds paired, of them with some class given other H, H put on a wrong carbon, H paired)."""
    rng = random.Random(seed)
    rows, carbon = read_hsqc(DATA), CarbonPredictor()
    paired = wrong_compounds = wrong_h = total_h = 0
    for case in cases:
        row, mol = rows[case.id], Chem.MolFromSmiles(case.smiles)
        truth = pair(mol, row["hsqc"], row["c13"], carbon, margin)
        if truth.status not in ("paired", "ambiguous"):
            continue
        classes = [s for s in carbon.predict(mol) if s.n_h]
        noisy = [replace(s, shift=statistics.fmean(truth.carbon[a] for a in s.atoms) - rng.gauss(0.0, scale * s.sigma))
                 for s in classes]
        found = pair(mol, row["hsqc"], row["c13"], SimpleNamespace(predict=lambda _, noisy=noisy: noisy), margin)
        if found.status != "paired":
            continue
        paired += 1
        bad = [sum(len(truth.observed[a]) for a in s.atoms) for s in classes
               if any(abs(x - y) > H_TOLERANCE for x, y in zip(sorted(h for a in s.atoms for h in found.observed[a]),
                                                              sorted(h for a in s.atoms for h in truth.observed[a])))]
        wrong_compounds += bool(bad)
        wrong_h += sum(bad)
        total_h += sum(len(h) for h in found.observed.values())
    return paired, wrong_compounds, wrong_h, total_h


def main(argv: list[str]) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--part", choices=("held-out", "fit"), default="held-out")
    parser.add_argument("--margin", type=float, default=MARGIN, help="ppm between the best and second-best assignment")
    parser.add_argument("--show", type=int, default=0, help="print this many rows of each status but paired")
    parser.add_argument("--simulate", type=float, default=0.0, metavar="SCALE",
                        help="only estimate how often an unambiguous pairing is wrong, with 13C errors of SCALE × σ")
    args = parser.parse_args(argv)
    cases = read_cases(str(DATA), args.part)
    if args.simulate:
        paired, wrong, wrong_h, total_h = simulate(cases, args.margin, args.simulate)
        print(f"{args.part} part, margin {args.margin} ppm, simulated 13C errors {args.simulate} × σ: "
              f"{paired} compounds paired, {wrong} ({100 * wrong / paired:.1f} %) with a wrong class; "
              f"{wrong_h} of {total_h} H ({100 * wrong_h / total_h:.1f} %) on a wrong carbon")
        return 0
    outcomes = pair_cases(cases, args.margin)
    smiles = {case.id: case.smiles for case in cases}
    counts = Counter(o.status for o in outcomes.values())
    print(f"{args.part} part, margin {args.margin} ppm: {len(outcomes)} compounds; "
          + ", ".join(f"{s} {counts[s]} ({100 * counts[s] / len(outcomes):.1f} %)" for s in STATUSES))
    for status in STATUSES[1:]:
        shown = [(k, o) for k, o in outcomes.items() if o.status == status][:args.show]
        for key, o in shown:
            print(f"  {status}: {smiles[key]}  {o.reason}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main(sys.argv[1:]))
