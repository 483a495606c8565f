"""The HSQC pairing of the open data (benchmarks/hsqc_pairing.py): observed H shifts put on atoms through
the 13C prediction.  Rows of benchmarks/data/open-spectra.tsv (derived from NMRShiftDB2; attribution in
its header), all from its fit part."""

from __future__ import annotations

import sys
from pathlib import Path
from types import SimpleNamespace

import pytest
from rdkit import Chem

sys.path.insert(0, str(Path(__file__).resolve().parent.parent / "benchmarks"))

from hsqc_pairing import Peak, pair, pair_cases, peaks, read_hsqc, simulate
from predict_open import hsqc_h, predictor_for, predictors

from rank.bench import read_cases
from rank.predict import CarbonPredictor

DATA = Path(__file__).resolve().parent.parent / "benchmarks" / "data" / "open-spectra.tsv"


@pytest.fixture(scope="module")
def rows():
    return read_hsqc(DATA, "fit")


def paired(rows, key):
    row = rows[key]
    mol = Chem.MolFromSmiles(row["smiles"])
    return mol, pair(mol, row["hsqc"], row["c13"], CarbonPredictor(row["solvent"] or "CDCl3"))


def on(mol, pairing, smarts):
    """Observed H shifts of the atoms matching the first atom of ``smarts``, one tuple per atom."""
    return sorted(pairing.observed[m[0]] for m in mol.GetSubstructMatches(Chem.MolFromSmarts(smarts)))


def test_peaks_read_diastereotopic_merged_and_coincident_carbons():
    # one CH2 with two H shifts: one carbon carrying both
    assert peaks("40.6/2.15 (1H), 40.6/1.93 (1H)", "40.6 (CH2)") == [Peak(40.6, 2, 1, (1.93, 2.15))]
    # two symmetric CH2, each with the same two H shifts (a piperidine ring)
    assert peaks("46.6/3.02 (2H), 46.6/2.51 (2H)", "46.6 (CH2)")[0].h == (2.51, 3.02, 2.51, 3.02)
    # two CH carbons that coincide in δC: two carbons, one H shift each
    found = peaks("126.3/8.57 (1H), 126.3/8.39 (1H)", "126.3 (CH), 120.0 (C)")
    assert found == [Peak(126.3, 1, 2, (8.39, 8.57))] and found[0].carbon_h(1) == (8.57,)
    with pytest.raises(ValueError, match="whole methyls"):
        peaks("14.2/1.44 (2H), 14.2/0.81 (1H)", "14.2 (CH3)")
    with pytest.raises(ValueError, match="without an HSQC pair"):
        peaks("14.2/1.44 (3H)", "14.2 (CH3), 30.0 (CH2)")


def test_ethyl_groups_on_oxygen(rows):
    # chloral diethyl acetal: OCH2 3.88, CH3 1.30, the acetal CH 4.68
    mol, found = paired(rows, "CGCJBAIEQANINV-UHFFFAOYSA-N")
    assert found.status == "paired"
    assert on(mol, found, "[CH2]O") == [(3.88, 3.88)] * 2
    assert on(mol, found, "[CH3]") == [(1.3, 1.3, 1.3)] * 2
    assert on(mol, found, "[CH](O)O") == [(4.68,)]


def test_ring_ch_against_ch2_and_alkyne(rows):
    # phenyl propargyl ether: OCH2 4.70, ≡CH 2.50, ortho 6.98, meta 7.30, para 7.00
    mol, found = paired(rows, "AIQRJSXKXVZCJO-UHFFFAOYSA-N")
    assert found.status == "paired"
    assert on(mol, found, "[CH2]O") == [(4.7, 4.7)]
    assert on(mol, found, "[CH]#C") == [(2.5,)]
    assert on(mol, found, "[cH]c(O)") == [(6.98,), (6.98,)]
    assert on(mol, found, "[cH]:[cH]:c(O)") == [(7.3,), (7.3,)]
    assert on(mol, found, "[cH]1:[cH]:[cH]:c(O):[cH]:[cH]:1") == [(7.0,)]


def test_pyridine_ring_h_and_diastereotopic_ch2(rows):
    # butyl nicotinate: H2 9.23 (between N and the ester), H6 8.77 (next to N), H4 8.30, H5 7.39
    mol, found = paired(rows, "DQULIMIQTCDUAN-UHFFFAOYSA-N")
    assert found.status == "paired"
    assert on(mol, found, "[cH](n)c(C=O)") == [(9.23,)]
    assert on(mol, found, "[cH](n)[cH]") == [(8.77,)]
    assert on(mol, found, "[cH]([cH][cH]n)c(C=O)") == [(8.3,)]
    assert on(mol, found, "[CH2]O") == [(4.37, 4.37)]
    # propyl 2-methylpentanoate: the CH2 next to the stereocentre has two H shifts
    mol, found = paired(rows, "AJYNZTLCODJWQR-UHFFFAOYSA-N")
    assert found.status == "paired"
    assert on(mol, found, "[CH2]([CH2][CH3])[CH]") == [(1.39, 1.65)]


def test_ambiguous_and_unusable_rows_are_reported(rows):
    # 4-benzylpiperidine: the aromatic CH lie within 1 ppm of each other and of their predictions
    mol, found = paired(rows, "ABGXADJDTPFFSZ-UHFFFAOYSA-N")
    assert found.status == "ambiguous" and found.gap <= 2.0 and found.observed
    # ... while its CH2 classes cannot change within the margin: they stay firm, with their H
    ch2 = {m[0] for m in mol.GetSubstructMatches(Chem.MolFromSmarts("[CH2]"))}
    ortho_meta = {m[0] for m in mol.GetSubstructMatches(Chem.MolFromSmarts("[cH]"))}
    ortho_meta -= {m[0] for m in mol.GetSubstructMatches(Chem.MolFromSmarts("[cH]1[cH][cH]c(C)[cH][cH]1"))}
    assert len(ortho_meta) == 4
    assert ch2 <= found.firm and not ortho_meta & found.firm
    assert on(mol, found, "[cH]1[cH][cH]c(C)[cH][cH]1") == [(7.18,)]   # para: firm, 125.7 against 126 predicted
    assert on(mol, found, "[CH2]c") == [(2.52, 2.52)]
    assert on(mol, found, "[CH2]N") == [(2.51, 3.02)] * 2   # axial and equatorial H of each NCH2
    # a pyrene: carbons that coincide in δC carry different H and go to different classes
    _, found = paired(rows, "AAJQTWWVKREOQP-UHFFFAOYSA-N")
    assert found.status == "ambiguous"
    assert paired(rows, "AEENFMCEQQAULS-UHFFFAOYSA-N")[1].status == "inconsistent"   # a CH3 with 2H + 1H


def test_margin_on_a_stub_predictor():
    """Two CH3 classes predicted at 20 and 30 ppm: far-apart observed carbons pair, close ones are ambiguous."""
    mol = Chem.MolFromSmiles("CCC")
    stub = SimpleNamespace(predict=lambda _: [SimpleNamespace(shift=20.0, n_h=3, atoms=(0,)),
                                              SimpleNamespace(shift=30.0, n_h=3, atoms=(2,)),
                                              SimpleNamespace(shift=25.0, n_h=2, atoms=(1,))])
    carbons = "21.0 (CH3), 29.0 (CH3), 25.0 (CH2)"
    found = pair(mol, "21.0/1.0 (3H), 29.0/2.0 (3H), 25.0/1.5 (2H)", carbons, stub)
    assert found.status == "paired" and found.observed == {0: (1.0,) * 3, 2: (2.0,) * 3, 1: (1.5, 1.5)}
    assert found.gap == pytest.approx(16.0, abs=0.1)
    found = pair(mol, "24.8/1.0 (3H), 25.2/2.0 (3H), 25.0/1.5 (2H)",
                 "24.8 (CH3), 25.2 (CH3), 25.0 (CH2)", stub)
    assert found.status == "ambiguous" and found.gap < 2.0
    # ... unless their H agree to 0.02 ppm: exchanging them moves no H, so that is not another assignment
    found = pair(mol, "24.8/1.00 (3H), 25.2/1.01 (3H), 25.0/1.5 (2H)",
                 "24.8 (CH3), 25.2 (CH3), 25.0 (CH2)", stub)
    assert found.status == "paired" and found.firm == {0, 1, 2}
    assert pair(mol, "21.0/1.0 (3H), 25.0/1.5 (2H)", "21.0 (CH3), 25.0 (CH2)", stub).status == "unmatched"


def test_terminal_methylene_h_pair_within_their_carbon():
    """The 1H side: the two predicted =CH2 signals of one carbon take that carbon's two observed H."""
    cases = [c for c in read_cases(str(DATA), "fit") if c.id == "BGSFCOHRQUBESL-UHFFFAOYSA-N"]
    found = pair_cases(cases)[cases[0].id]
    assert found.status == "paired"
    signals, pairs = hsqc_h(cases[0], predictor_for(cases[0], predictors(False)), found)
    on_methylene = sorted(o for k, o in pairs if signals[k].atoms == (0,))
    assert on_methylene == [5.26, 5.36]
    assert len(pairs) == sum(s.n_h for s in signals)


def test_simulation_finds_no_error_without_noise():
    cases = [c for c in read_cases(str(DATA), "fit")
             if c.id in ("CGCJBAIEQANINV-UHFFFAOYSA-N", "DQULIMIQTCDUAN-UHFFFAOYSA-N", "ABGXADJDTPFFSZ-UHFFFAOYSA-N")]
    paired, wrong, wrong_h, total_h = simulate(cases, margin=2.0, scale=1e-6)
    assert (paired, wrong, wrong_h) == (3, 0, 0) and total_h > 20
