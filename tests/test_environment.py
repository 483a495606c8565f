"""Environment codes and the corrections fitted on the fit part of the open data set.

Outside references: the sphere-by-sphere codes follow W. Bremser, Anal. Chim. Acta 1978, 103, 355
(HOSE codes); RDKit gives the molecules; rules/environment.tsv was fitted on the fit part of
benchmarks/data/open-spectra.tsv (derived from NMRShiftDB2, open data).
"""

from __future__ import annotations

from itertools import pairwise

from rdkit import Chem

from rank.predict import predict_smiles
from rank.predict.environment import MAX_RADIUS, environment_codes, find_correction
from rank.tables import read_table, table_notes


def test_symmetric_atoms_share_their_codes():
    # the two ortho CH of toluene are equivalent by symmetry (RDKit canonical ranking)
    mol = Chem.MolFromSmiles("Cc1ccccc1")
    assert environment_codes(mol, 2) == environment_codes(mol, 6)
    assert environment_codes(mol, 2) != environment_codes(mol, 3)


def test_each_code_extends_the_one_before():
    codes = environment_codes(Chem.MolFromSmiles("CCOC(C)=O"), 1)
    assert len(codes) == MAX_RADIUS + 1
    assert all(longer.startswith(shorter + "|") for shorter, longer in pairwise(codes))


def test_table_names_its_source_and_was_fitted_on_the_fit_part_only():
    notes = " ".join(table_notes("environment"))
    assert "NMRShiftDB2" in notes and "fit part" in notes and "held-out part was never read" in notes
    for row in read_table("environment"):
        assert row["code"].count("|") == int(row["radius"])
        assert int(row["compounds"]) >= (1 if row["radius"] == "0" else 2)


def test_the_largest_fitted_sphere_is_used():
    mol = Chem.MolFromSmiles("CCOC(C)=O")
    codes = environment_codes(mol, 1)
    found = find_correction(codes)
    assert found is not None and found.code in codes
    assert all(find_correction((code,)) is None for code in codes[found.radius + 1:])


def test_the_correction_is_one_more_named_term_when_asked_for():
    # ethyl acetate OCH2: additive 4.09; the corrected shift is the sum of its terms
    plain = predict_smiles("CCOC(C)=O")[0]
    corrected = predict_smiles("CCOC(C)=O", environment=True)[0]
    assert plain.shift == 4.09 and "environment" not in plain.explanation
    assert "environment correction" in corrected.explanation
    assert corrected.shift == round(sum(t.value for t in corrected.terms), 2)
