"""The increment fit (benchmarks/fit_increments.py) reads each predicted shift as linear in the table cells.

The fit is only as right as the factors it gives each cell, so they are checked against the predictor
itself: the cells times their factors add up to the predicted shift (less the solvent term), and moving
one cell moves the prediction by exactly its factor.  Structures are ordinary textbook compounds.
"""

from __future__ import annotations

import sys
from pathlib import Path

import pytest
from rdkit import Chem

from rank.predict import Predictor, shifts

sys.path.insert(0, str(Path(__file__).resolve().parent.parent / "benchmarks"))
fit_increments = pytest.importorskip("fit_increments")

SMILES = [
    "CCOC(C)=O",               # alpha, beta
    "CC(=O)OCc1ccccc1",        # attenuated second alpha increment
    "ClC(Cl)CO",               # attenuated alpha and beta increments
    "Cc1ccc(Cl)cc1C(=O)OC",    # ortho, meta, para per substituent
    "C/C=C/C(=O)OC",           # gem, cis, trans
    "C=CC(=O)OCC",             # two alkene H on one carbon
    "Cc1cccnc1",               # heteroaromatic parent + increments
    "O=Cc1ccccc1O",            # special row
    "CC1CCCC1=O",              # ring corrections
]


def _signals(smiles: str, tables) -> list:
    real = shifts.shift_tables
    shifts.shift_tables = lambda: tables
    try:
        return [s for s in Predictor("CDCl3").predict(Chem.MolFromSmiles(smiles)) if not s.exchangeable]
    finally:
        shifts.shift_tables = real


@pytest.mark.parametrize("smiles", SMILES)
def test_cells_times_factors_give_the_predicted_shift(smiles):
    tables = fit_increments.traced_tables({})
    values = fit_increments.table_values(tables)
    classes = fit_increments.coefficients(smiles, tables)
    for s in _signals(smiles, tables):
        coef = fit_increments.signal_coefficients(s, classes)
        assert coef, f"{smiles}: no fitted cell for the H at {s.shift}"
        assert s.shift == pytest.approx(sum(f * values[c] for c, f in coef.items()), abs=0.011)


@pytest.mark.parametrize("smiles", SMILES)
def test_moving_a_cell_moves_the_shift_by_its_factor(smiles):
    tables = fit_increments.traced_tables({})
    values = fit_increments.table_values(tables)
    before = {(s.atoms, round(s.shift, 2)): s for s in _signals(smiles, tables)}
    classes = fit_increments.coefficients(smiles, tables)
    for s in before.values():
        for cell, factor in fit_increments.signal_coefficients(s, classes).items():
            moved = _signals(smiles, fit_increments.traced_tables({cell: values[cell] + 0.2}))
            shifted = [m.shift for m in moved if m.atoms == s.atoms]
            assert any(abs(m - (s.shift + 0.2 * factor)) <= 0.011 for m in shifted), (smiles, cell, factor)


def test_the_attenuated_increment_counts_with_its_factor():
    tables = fit_increments.traced_tables({})
    (ch2,) = [c for c in fit_increments.coefficients("CC(=O)OCc1ccccc1", tables) if c[0] == (4,)]
    assert ch2[2][("shift_alkyl", "c_aryl", "alpha_ch2")] == pytest.approx(0.75)
    assert ch2[2][("shift_alkyl", "o_ester", "alpha_ch2")] == pytest.approx(1.0)
