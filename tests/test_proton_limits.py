"""Limits on carbon counts read from a 1H peak list (``rank.generate.constraints.proton_limits``,
``rules/proton_constraints.tsv``): every limit keeps the true structure of the real compounds of the open
data, and the generator with them gives exactly its own unconstrained structures that satisfy them.

The real data are the fit part of ``benchmarks/data/open-spectra.tsv`` (NMRShiftDB2: Steinbeck & Kuhn,
Phytochemistry 2004, 65, 2711; Kuhn & Schloerer, Magn. Reson. Chem. 2015, 53, 582), observed as the
identification observes them (``rank.shortlist.observe``); whether a true structure satisfies a limit is
counted with RDKit, the reference library.  The small lists are typical CDCl3 values (Pretsch, Buhlmann,
Badertscher, 4th ed., 1H chapter; from memory).
"""

from __future__ import annotations

from pathlib import Path

import pytest
from rdkit import Chem
from test_constraints import assert_generator_applies

from rank.bench import read_cases
from rank.errors import InputError
from rank.formula import parse_formula
from rank.generate.constraints import proton_rules
from rank.shortlist import evidence_limits, observe
from rank.spectra import read_peaks

DATA = Path(__file__).resolve().parent.parent / "benchmarks" / "data" / "open-spectra.tsv"

# Fit-part rows whose true structure breaks a limit: each a database row in error (NMRShiftDB2 id -> limits).
KNOWN_WRONG_ROWS = {
    # 2-chlorostyrene listed with 6 of its 7 H and a vinyl CH2 H missing; one integral lands on CH2
    "20096848": {"1H: CH2"},
}


def _limits(formula: str, peaks: str, solvent: str | None = None):
    parsed = parse_formula(formula)
    observation, _ = observe(parsed, read_peaks(peaks), solvent)
    return parsed, evidence_limits(parsed, observation)


@pytest.fixture(scope="module")
def fit_part():
    return read_cases(str(DATA), "fit")


def test_every_fit_part_compound_satisfies_the_limits_of_its_own_1h_list(fit_part):
    assert len(fit_part) == 2346
    wrong: dict[str, set[str]] = {}
    fired = set()
    for case in fit_part:
        try:
            _, limits = _limits(case.formula, case.peaks, case.solvent)
        except InputError:
            continue
        mol = Chem.MolFromSmiles(case.smiles)
        for limit in limits:
            fired.add(limit.name)
            if not limit.holds(mol):
                wrong.setdefault(case.name.removeprefix("NMRShiftDB2 "), set()).add(limit.name)
    assert wrong == KNOWN_WRONG_ROWS
    # every row of the table bounds some real compound
    assert fired == {f"1H: {row.name}" for row in proton_rules()}


def test_an_aromatic_ester_list_bounds_methyls_aldehydes_and_oxygenated_carbons():
    # methyl benzoate: 8.04 (2H), 7.55 (1H), 7.43 (2H), 3.91 (s, 3H)
    _, limits = _limits("C8H8O2", "8.04 (d, 2H), 7.55 (t, 1H), 7.43 (t, 2H), 3.91 (s, 3H)")
    claims = {lim.name: (lim.lower, lim.upper) for lim in limits}
    assert claims["1H: CH3"] == (0, 1)
    assert claims["1H: aldehyde CHO"] == (0, 0)
    # the three OCH3 H could be three OCH carbons
    assert claims["1H: sp3 C-H on oxygen"] == (0, 3)
    # five H in 6.75-8.6 ppm, of which C8H8O2 could hold two as OH, and one of another kind (the tolerance)
    assert claims["1H: CH on a double bond"] == (2, None)


def test_a_broad_or_unassigned_h_in_the_aromatic_window_may_be_exchangeable():
    # acetanilide: 7.49 (d, 2H), 7.30 (t, 2H), 7.10 (t, 1H), 7.2 (br s, NH), 2.16 (s, 3H)
    _, limits = _limits("C8H9NO", "7.49 (d, 2H), 7.30 (t, 2H), 7.20 (br s, 1H), 7.10 (t, 1H), 2.16 (s, 3H)")
    lower = next(lim.lower for lim in limits if lim.name == "1H: CH on a double bond")
    assert lower <= 5
    assert all(lim.holds(Chem.MolFromSmiles("CC(=O)Nc1ccccc1")) for lim in limits)


@pytest.mark.parametrize(("formula", "peaks"), [
    # ethyl acetate: 4.12 (q, 2H), 2.05 (s, 3H), 1.26 (t, 3H)
    ("C4H8O2", "4.12 (q, J = 7.1 Hz, 2H), 2.05 (s, 3H), 1.26 (t, J = 7.1 Hz, 3H)"),
    # acrolein: 9.59 (d, 1H), 6.50-6.30 (m, 3H)
    ("C3H4O", "9.59 (d, 1H), 6.50-6.30 (m, 3H)"),
    # p-xylene: 7.05 (s, 4H), 2.30 (s, 6H)
    ("C8H10", "7.05 (s, 4H), 2.30 (s, 6H)"),
])
def test_the_generator_with_1h_limits_gives_the_unconstrained_structures_that_satisfy_them(formula, peaks):
    assert_generator_applies(*_limits(formula, peaks))
