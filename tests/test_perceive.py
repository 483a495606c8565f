"""Proton classes: symmetry, the corrections to it, families and coupling partners.

Signal counts are those of the textbook spectra (R. M. Silverstein et al., Spectrometric
Identification of Organic Compounds, 7th ed., Wiley 2005, chapter 3; from memory); DMF's two
N-methyl signals are in H. E. Gottlieb et al., J. Org. Chem. 1997, 62, 7512 (from memory).
"""

from __future__ import annotations

from itertools import islice

import pytest
from rdkit import Chem

from rank.errors import InputError
from rank.predict.perceive import CIS_TO_H, FAMILIES, NOT_ALKENE, proton_classes


def classes(smiles: str):
    return proton_classes(Chem.MolFromSmiles(smiles))


def families(smiles: str) -> list[tuple[str, int]]:
    return sorted((c.family, c.n_h) for c in classes(smiles))


@pytest.mark.parametrize(("smiles", "count"), [
    ("Cc1ccc(C)cc1", 2),        # p-xylene
    ("Cc1cc(C)cc(C)c1", 2),     # mesitylene
    ("C1COCCO1", 1),            # 1,4-dioxane
    ("C1CCCCC1", 1),            # cyclohexane
    ("CN(C)C=O", 3),            # DMF: CHO and two N-CH3 (slow C(O)-N rotation)
    ("CC(=O)N(C)C", 3),         # DMAc
    ("c1ccccc1", 1),            # benzene
    ("CC(C)=O", 1),             # acetone
    ("CCOCC", 2),               # diethyl ether
    ("Cc1ccccc1", 4),           # toluene: CH3, ortho, meta, para
    ("c1ccncc1", 3),            # pyridine
    ("C=C(C)C", 2),             # isobutylene: the =CH2 H are each cis to one CH3
])
def test_signal_counts_of_textbook_compounds(smiles, count):
    # common practice (textbook spectra)
    assert len(classes(smiles)) == count


def test_styrene_terminal_ch2_gives_two_signals():
    alkene = [c for c in classes("C=Cc1ccccc1") if c.family == "alkene"]
    ch2 = [c for c in alkene if c.atoms == (0,)]
    assert [c.n_h for c in ch2] == [1, 1]
    # one H is cis to the phenyl carbon (atom 2), the other cis to the vinyl H
    assert sorted(c.cis_to for c in ch2) == [CIS_TO_H, 2]


def test_styrene_vinyl_couplings_are_cis_trans_and_geminal():
    cls = classes("C=Cc1ccccc1")
    ch = next(i for i, c in enumerate(cls) if c.atoms == (1,))
    cis_to_ph = next(i for i, c in enumerate(cls) if c.atoms == (0,) and c.cis_to == 2)
    kinds = {cls[p.cls].cis_to: p.kind for p in cls[ch].partners}
    # the =CH2 H cis to phenyl is trans to the vinyl H (J about 17 Hz)
    assert kinds == {2: "alkene_trans", CIS_TO_H: "alkene_cis"}
    assert any(p.kind == "gem_sp2" for p in cls[cis_to_ph].partners)


def test_two_equal_groups_on_an_alkene_carbon_are_split_when_the_other_carbon_is_unsymmetric():
    # 2-methyl-2-butene: three methyl signals (1.68, 1.60, 1.57; Pretsch 4th ed., from memory)
    methyls = [c for c in classes("CC=C(C)C") if c.family == "CH3"]
    assert len(methyls) == 3 and all(c.n_h == 3 for c in methyls)


def test_dmf_methyls_are_separate_amide_rotamer_branches():
    methyls = [c for c in classes("CN(C)C=O") if c.family == "CH3"]
    assert sorted(c.rotamer.side for c in methyls) == [-1, 1]
    assert all(c.rotamer.depth == 0 for c in methyls)


def test_diethylacetamide_ethyl_groups_split_at_both_carbons():
    cls = classes("CCN(CC)C(C)=O")
    assert families("CCN(CC)C(C)=O") == [("CH2", 2), ("CH2", 2), ("CH3", 3), ("CH3", 3), ("CH3", 3)]
    depths = sorted((c.rotamer.depth, c.rotamer.side) for c in cls if c.rotamer)
    assert depths == [(0, -1), (0, 1), (1, -1), (1, 1)]


def test_acetylpiperidine_ring_carbons_split_by_their_side_of_the_amide():
    cls = classes("CC(=O)N1CCCCC1")
    ring = [c for c in cls if c.family == "CH2"]
    # C2/C6 and C3/C5 differ; C4 lies on the axis
    assert len(ring) == 5
    assert sum(c.rotamer is None for c in ring) == 1


def test_amine_nitrogen_alkyl_groups_stay_equivalent():
    assert len(classes("CN(C)C")) == 1  # trimethylamine


def test_ch2_next_to_a_stereocentre_is_diastereotopic():
    cls = classes("CCC(C)O")  # 2-butanol
    ch2 = next(c for c in cls if c.family == "CH2")
    assert ch2.diastereotopic


def test_ch2_without_a_stereocentre_is_not_diastereotopic():
    assert not any(c.diastereotopic for c in classes("CCCCO"))
    assert not any(c.diastereotopic for c in classes("C1CCCCC1"))


def test_ring_ch2_of_a_monosubstituted_cyclohexane_is_diastereotopic():
    # cis and trans to the substituent (Mislow and Raban 1967)
    ring = [c for c in classes("CC1CCCCC1") if c.family == "CH2"]
    assert ring and all(c.diastereotopic for c in ring)


def test_families_of_the_hydrogen_kinds():
    assert families("CCO") == [("CH2", 2), ("CH3", 3), ("OH", 1)]
    assert families("CC(=O)O") == [("CH3", 3), ("COOH", 1)]
    assert families("O=Cc1ccccc1") == [("aldehyde", 1), ("aromatic", 1), ("aromatic", 2), ("aromatic", 2)]
    assert families("COC=O") == [("CH3", 3), ("formyl", 1)]
    assert families("CC#C") == [("CH3", 3), ("alkyne", 1)]
    assert families("CN=Cc1ccccc1")[-1] == ("imine", 1)
    assert families("c1ccoc1") == [("heteroaromatic", 2), ("heteroaromatic", 2)]
    assert families("CCS") == [("CH2", 2), ("CH3", 3), ("SH", 1)]
    assert families("CCN") == [("CH2", 2), ("CH3", 3), ("NH", 2)]
    assert families("C") == [("CH3", 4)]


def test_exchangeable_flag_follows_the_family():
    for c in classes("OCC(N)C(=O)O"):
        assert c.exchangeable == (c.family in ("OH", "NH", "SH", "COOH"))


def test_ethyl_group_partners_follow_the_n_plus_one_rule():
    ch3, ch2 = classes("CCCl")
    assert [(p.cls, p.n_h, p.kind) for p in ch3.partners] == [(1, 2, "vic_sp3")]
    assert [(p.cls, p.n_h, p.kind) for p in ch2.partners] == [(0, 3, "vic_sp3")]


def test_equivalent_protons_do_not_split_each_other():
    # 1,2-dichloroethane: one class, no partner
    (cls,) = classes("ClCCCl")
    assert cls.partners == ()


def test_aromatic_partners_ortho_and_meta():
    cls = classes("Cc1ccccc1")
    para = next(c for c in cls if c.atoms == (4,))
    by_kind = {p.kind: p.n_h for p in para.partners}
    assert by_kind == {"ortho": 2, "meta": 2}


def test_pyridine_h2_h3_coupling_is_of_the_aza_kind():
    cls = classes("c1ccncc1")  # atoms 2 and 4 flank the N
    h2 = next(c for c in cls if c.atoms == (2, 4))
    h3 = next(i for i, c in enumerate(cls) if c.atoms == (1, 5))
    h4 = next(i for i, c in enumerate(cls) if c.atoms == (0,))
    assert {(p.cls, p.kind) for p in h2.partners} == {(h3, "ortho_aza"), (h4, "meta")}


def test_stereo_from_the_smiles_decides_cis_or_trans_coupling():
    trans = {p.kind for c in classes("C/C=C/C=O") for p in c.partners}
    cis = {p.kind for c in classes("C/C=C\\C=O") for p in c.partners}
    assert "alkene_trans" in trans and "alkene_cis" not in trans
    assert "alkene_cis" in cis and "alkene_trans" not in cis


def test_unspecified_acyclic_alkene_is_taken_as_trans():
    kinds = {p.kind for c in classes("CC=CC=O") for p in c.partners}
    assert "alkene_trans" in kinds


def test_ring_alkene_h_is_cis_to_the_other_h():
    cls = classes("C1=CCCCC1")
    alkene = next(c for c in cls if c.family == "alkene")
    assert alkene.cis_to == CIS_TO_H


def test_non_alkene_classes_carry_no_geometry():
    assert all(c.cis_to == NOT_ALKENE for c in classes("CCO"))


def test_terminal_alkyne_couples_through_four_bonds():
    cls = classes("CCC#C")
    alkyne = next(c for c in cls if c.family == "alkyne")
    assert [(p.n_h, p.kind) for p in alkyne.partners] == [(2, "alkyne_4j")]


def test_amide_nh_couples_to_n_methyl():
    cls = classes("CNC(C)=O")
    nme = next(c for c in cls if c.atoms == (0,))
    assert [(p.n_h, p.kind) for p in nme.partners] == [(1, "vic_nh_amide")]


def test_atoms_refer_to_the_input_when_hydrogens_are_explicit():
    params = Chem.SmilesParserParams()
    params.removeHs = False
    mol = Chem.MolFromSmiles("[H]OC([H])([H])C", params)
    got = {c.family: c.atoms for c in proton_classes(mol)}
    assert got == {"OH": (1,), "CH2": (2,), "CH3": (5,)}


def test_hydrogen_explicit_molecule_gives_the_same_classes():
    mol = Chem.MolFromSmiles("CC(=O)OCC")
    plain = [(c.family, c.n_h, c.atoms) for c in proton_classes(mol)]
    explicit = [(c.family, c.n_h, c.atoms) for c in proton_classes(Chem.AddHs(mol))]
    assert plain == explicit


def test_none_is_an_input_error():
    with pytest.raises(InputError):
        proton_classes(None)


def _isomers(formula: str, n: int):
    from rank.generate import IsomerStream

    return [iso.mol for iso in islice(IsomerStream(formula, budget=10), n)]


@pytest.mark.parametrize("formula", ["C5H10O", "C4H7NO", "C7H8O"])
def test_classes_hold_every_hydrogen_once(formula):
    for mol in _isomers(formula, 300):
        cls = proton_classes(mol)
        assert sum(c.n_h for c in cls) == sum(a.GetTotalNumHs() for a in mol.GetAtoms())
        assert all(c.family in FAMILIES for c in cls)
        for c in cls:
            assert c.n_h % len(c.atoms) == 0


@pytest.mark.parametrize("formula", ["C5H10O", "C4H7NO", "C7H8O"])
def test_couplings_are_mutual(formula):
    # n_i * (partners of i in j) = n_j * (partners of j in i): both count the same H pairs
    for mol in _isomers(formula, 300):
        cls = proton_classes(mol)
        count = {(i, p.cls, p.kind): p.n_h for i, c in enumerate(cls) for p in c.partners}
        for (i, j, kind), n in count.items():
            assert cls[i].n_h * n == cls[j].n_h * count[(j, i, kind)], Chem.MolToSmiles(mol)
