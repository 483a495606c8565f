"""Accuracy and speed of the 1H shift predictor on the reference set.

Compares predicted and experimental CDCl3 shifts atom by atom
(``tests/data/reference_shifts.tsv``: atom-mapped SMILES, one assignment group
per map number) and prints the mean absolute error over non-exchangeable H,
the worst compounds and classes, the error by family, and the time per
molecule on the reference set and on generated isomers (C6-C10).

Run: ``python benchmarks/predict_mae.py``
"""

from __future__ import annotations

import csv
import statistics
import sys
import time
from dataclasses import dataclass
from itertools import islice
from pathlib import Path

from rdkit import Chem

ROOT = Path(__file__).resolve().parent.parent
REFERENCE = ROOT / "tests" / "data" / "reference_shifts.tsv"
if str(ROOT) not in sys.path:
    sys.path.insert(0, str(ROOT))

from rank.predict import Predictor


@dataclass(frozen=True)
class Entry:
    """One reference compound."""

    id: str
    name: str
    smiles: str
    groups: dict[int, tuple[float, ...]]   # map number -> observed shifts
    source: str
    in_tables: bool


@dataclass(frozen=True)
class Pair:
    """One predicted signal set against the observed shift of its assignment group."""

    compound: str
    group: int
    family: str
    predicted: float
    observed: float
    exchangeable: bool
    inside_range: bool
    n_atoms: int
    sigma: float
    explanation: str

    @property
    def error(self) -> float:
        return self.predicted - self.observed


def load_reference(path: Path = REFERENCE) -> list[Entry]:
    """The reference compounds of ``tests/data/reference_shifts.tsv``."""
    lines = [ln for ln in path.read_text(encoding="utf-8").splitlines() if ln.strip() and not ln.startswith("#")]
    entries = []
    for row in csv.DictReader(lines, delimiter="\t", quoting=csv.QUOTE_NONE):
        groups = {}
        for item in row["shifts"].split():
            key, values = item.split(":")
            groups[int(key)] = tuple(float(v) for v in values.split("/"))
        entries.append(Entry(row["id"], row["name"], row["smiles"], groups, row["source"],
                             row["in_tables"] == "yes"))
    return entries


def molecule(entry: Entry) -> tuple[Chem.Mol, dict[int, list[int]]]:
    """The molecule with its map numbers cleared, and the atoms of each map number."""
    mol = Chem.MolFromSmiles(entry.smiles)
    if mol is None:
        raise ValueError(f"{entry.id}: unreadable SMILES {entry.smiles!r}")
    members: dict[int, list[int]] = {}
    for atom in mol.GetAtoms():
        if atom.GetAtomMapNum():
            members.setdefault(atom.GetAtomMapNum(), []).append(atom.GetIdx())
            atom.SetAtomMapNum(0)
    return mol, members


def compare(entry: Entry, predictor: Predictor) -> list[Pair]:
    """Per-group comparison: each predicted signal on a group's atoms against the group's shift(s).

    A group with one observed value is compared with every predicted signal on its atoms; a group with
    several values needs as many predicted signals and is compared in order of size.
    """
    mol, members = molecule(entry)
    signals = predictor.predict(mol)
    pairs = []
    for key, observed in entry.groups.items():
        atoms = set(members.get(key, ()))
        found = [s for s in signals if atoms & set(s.atoms)]
        if not found:
            raise ValueError(f"{entry.id}: group {key} carries no predicted signal")
        if len(observed) == 1:
            matched = [(s, observed[0]) for s in found]
        elif len(observed) == len(found):
            matched = list(zip(sorted(found, key=lambda s: s.shift), sorted(observed)))
        else:
            raise ValueError(f"{entry.id}: group {key} has {len(observed)} observed values "
                             f"but {len(found)} predicted signals")
        for s, value in matched:
            inside = s.shift_range is not None and s.shift_range[0] <= value <= s.shift_range[1]
            pairs.append(Pair(entry.id, key, s.family, s.shift, value, s.exchangeable, inside,
                              len(atoms & set(s.atoms)), s.sigma, s.explanation))
    return pairs


def _mae(pairs: list[Pair], per_atom: bool = False) -> float:
    if not pairs:
        return float("nan")
    if per_atom:
        return sum(abs(p.error) * p.n_atoms for p in pairs) / sum(p.n_atoms for p in pairs)
    return statistics.fmean(abs(p.error) for p in pairs)


def _isomer_molecules(limit: int) -> list[Chem.Mol]:
    from rank.generate import IsomerStream

    mols = []
    for formula in ("C6H12O2", "C7H7NO", "C8H10O", "C9H12", "C10H14O"):
        mols.extend(iso.mol for iso in islice(IsomerStream(formula, budget=20), limit))
    return mols


def _time(predictor: Predictor, mols: list[Chem.Mol], repeats: int = 1) -> float:
    predictor.predict(mols[0])  # tables read, SMARTS compiled
    start = time.perf_counter()
    for _ in range(repeats):
        for m in mols:
            predictor.predict(m)
    return (time.perf_counter() - start) / (repeats * len(mols)) * 1000


def main() -> int:
    predictor = Predictor("CDCl3", 400.0)
    entries = load_reference()
    pairs = [p for e in entries for p in compare(e, predictor)]
    measured = [p for p in pairs if not p.exchangeable]
    exchange = [p for p in pairs if p.exchangeable]
    held_out = {e.id for e in entries if not e.in_tables}
    print(f"reference set: {len(entries)} compounds, {len(measured)} non-exchangeable assigned shifts "
          f"({sum(p.n_atoms for p in measured)} H-bearing atoms), {len(exchange)} exchangeable")
    print(f"MAE (per assigned shift)      {_mae(measured):.3f} ppm")
    print(f"MAE (per H-bearing atom)      {_mae(measured, per_atom=True):.3f} ppm")
    print(f"MAE, compounds not used for any table value ({len(held_out)}): "
          f"{_mae([p for p in measured if p.compound in held_out]):.3f} ppm")
    print(f"MAE, compounds used for table values ({len(entries) - len(held_out)}): "
          f"{_mae([p for p in measured if p.compound not in held_out]):.3f} ppm")
    within = sum(abs(p.error) <= 2 * p.sigma for p in measured) / len(measured)
    print(f"errors within 2 sigma          {within:.0%}")
    worst = max(measured, key=lambda p: abs(p.error))
    print(f"largest error                 {worst.error:+.2f} ppm ({worst.compound}, group {worst.group})")
    print(f"exchangeable H inside the predicted range: {sum(p.inside_range for p in exchange)}/{len(exchange)}")

    print("\nby family:")
    for fam in sorted({p.family for p in measured}):
        sub = [p for p in measured if p.family == fam]
        print(f"  {fam:15s} n={len(sub):3d}  MAE {_mae(sub):.3f}  max {max(abs(p.error) for p in sub):.2f}")

    print("\nworst compounds (mean |error|):")
    by_compound: dict[str, list[Pair]] = {}
    for p in measured:
        by_compound.setdefault(p.compound, []).append(p)
    ranked = sorted(by_compound.items(), key=lambda kv: -_mae(kv[1]))
    for cid, sub in ranked[:10]:
        print(f"  {cid:22s} {_mae(sub):.3f}")

    print("\nworst classes:")
    for p in sorted(measured, key=lambda p: -abs(p.error))[:12]:
        print(f"  {p.compound:20s} group {p.group}: predicted {p.predicted:.2f}, observed {p.observed:.2f} "
              f"({p.error:+.2f})  {p.explanation}")

    ref_mols = [molecule(e)[0] for e in entries]
    t_ref = _time(predictor, ref_mols, repeats=20)
    isomers = _isomer_molecules(2000)
    t_iso = _time(predictor, isomers)
    heavy = statistics.fmean(m.GetNumHeavyAtoms() for m in isomers)
    print(f"\ntime per molecule: reference set {t_ref:.3f} ms; "
          f"{len(isomers)} generated isomers (C6-C10, mean {heavy:.1f} heavy atoms) {t_iso:.3f} ms")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
