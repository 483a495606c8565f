"""Every row of the shift, solvent and coupling tables fires on an example and not on a near miss.

A row "fires" when the prediction of the example uses it (``Signal.rows``: first match wins, so a
row shadowed by an earlier one never fires); the near miss is a close structure where another row
takes over. Examples are ordinary textbook structures (common practice); the values themselves are
checked against handbook data in test_predict.py and test_predict_reference.py.
"""

from __future__ import annotations

import re

import pytest
from rdkit import Chem

from rank.predict import Predictor, predict_smiles
from rank.predict.perceive import proton_classes
from rank.tables import read_table

ALKYL = {
    "o_formate": ("COC=O", "COC(C)=O"),
    "o_carbonate": ("COC(=O)OC", "COC(C)=O"),
    "o_ester_aryl": ("COC(=O)c1ccccc1", "COC(=O)C1CCCCC1"),
    "o_ester_vinyl": ("COC(=O)C=C", "COC(=O)CC"),
    "o_ester": ("COC(C)=O", "COCC(C)=O"),
    "o_sulfonate": ("COS(C)(=O)=O", "CS(=O)(=O)Oc1ccccc1"),
    "o_aryl": ("COc1ccccc1", "COC1CCCCC1"),
    "o_vinyl": ("CCOC=C", "CCOCC"),
    "o_hydroxyl": ("CCO", "CCOC"),
    "o_ether": ("CCOCC", "CCO"),
    "n_nitro": ("C[N+](=O)[O-]", "CN"),
    "n_amide": ("CNC(C)=O", "CNC(C)C"),
    "n_sulfonamide": ("CN(C)S(C)(=O)=O", "CN(C)C(C)=O"),
    "n_aromatic": ("Cn1cccc1", "Cc1ccc[nH]1"),
    "n_aryl": ("CN(C)c1ccccc1", "CN(C)C1CCCCC1"),
    "n_imine": ("CN=Cc1ccccc1", "CNCc1ccccc1"),
    "n_primary": ("CCN", "CCNC"),
    "n_secondary": ("CCNC", "CCN(C)C"),
    "n_tertiary": ("CCN(C)C", "CCN"),
    "n_other": ("C[N+](C)(C)[O-]", "CN(C)C"),
    "f": ("CCF", "CCCl"),
    "cl": ("CCCl", "CCBr"),
    "br": ("CCBr", "CCI"),
    "i": ("CCI", "CCCl"),
    "s_sulfone": ("CCS(=O)(=O)CC", "CCS(=O)CC"),
    "s_sulfoxide": ("CS(C)=O", "CSC"),
    "s_aryl": ("CSc1ccccc1", "CSC1CCCCC1"),
    "s_acyl": ("CSC(C)=O", "CSCC(C)=O"),
    "s_thiol": ("CCS", "CCSC"),
    "s_sulfide": ("CCSC", "CCS"),
    "s_other": ("C[S+](C)C", "CSC"),
    "p_any": ("CP(C)C", "CN(C)C"),
    "c_acyl_halide": ("CC(=O)Cl", "CC(C)=O"),
    "c_anhydride": ("CC(=O)OC(C)=O", "CC(=O)OC"),
    "c_acid": ("CC(=O)O", "CC(=O)OC"),
    "c_ester_enol": ("CC(=O)OC=C", "CC(=O)OCC"),
    "c_ester": ("CC(=O)OC", "CC(=O)OC=C"),
    "c_amide": ("CC(N)=O", "CC(=O)O"),
    "c_thioester": ("CC(=O)SC", "CC(=O)OC"),
    "c_aldehyde": ("CC=O", "CC(C)=O"),
    "c_ketone_aryl": ("CC(=O)c1ccccc1", "CC(=O)C1CCCCC1"),
    "c_ketone_vinyl": ("CC(=O)C=C", "CC(=O)CC"),
    "c_ketone": ("CC(C)=O", "CC=O"),
    "c_carbonyl_other": ("CC(C)=S", "CC(C)=O"),
    "c_nitrile": ("CC#N", "CC#C"),
    "c_imine": ("CC(C)=NO", "CC(C)=O"),
    "c_alkenyl_carbonyl": ("CC=CC=O", "CC=CC"),
    "c_alkenyl_carbonyl_gem": ("CC(=C)C=O", "CC(=C)C"),
    "c_alkenyl_aryl_gem": ("CC(=C)c1ccccc1", "CC(=C)C"),
    "c_alkenyl_aryl": ("CC=Cc1ccccc1", "CC=CC"),
    "c_alkenyl": ("CC=C", "CC#C"),
    "c_alkynyl": ("CC#C", "CC=C"),
    "c_aryl_aza": ("Cc1ccccn1", "Cc1cccnc1"),
    "c_aryl": ("Cc1ccccc1", "CC1CCCCC1"),
    "c_alkyl": ("CCC", "CO"),
    "other": ("CC=C=C", "CC=CC"),
}

ALKYL_SITE = {
    "base": ("CC", "c1ccccc1"),
    "methane": ("C", "CC"),
    "ring3": ("C1CC1", "C1CCC1"),
    "ring4": ("C1CCC1", "C1CCCC1"),
    "ring5_ketone": ("O=C1CCCC1", "O=C1CCCCC1"),
    "ring5": ("C1CCCC1", "C1CCCCC1"),
    "ring6_ketone_alpha": ("O=C1CCCCC1", "O=C1CCCC1"),
    "ring6_ketone_beta": ("O=C1CCCCC1", "O=C1CCCCCC1"),
    "ring6_ketone_gamma": ("O=C1CCCCC1", "O=C(C)C1CCCCC1"),
    "ring6": ("C1CCCCC1", "C1CCCCCC1"),
    "ring7": ("C1CCCCCC1", "CCCCCCC"),
    "ring8": ("C1CCCCCCC1", "C1CCCCCCCC1"),
    "ring9": ("C1CCCCCCCC1", "C1CCCCCCCCC1"),
    "ring10": ("C1CCCCCCCCC1", "C1CCCCCCCCCC1"),
    "ring11": ("C1CCCCCCCCCC1", "C1CCCCCCCCCCC1"),
    "acetal": ("COCOC", "COCCOC"),
    "attenuate_alpha_f2": ("CC(F)F", "CC(F)Cl"),
    "attenuate_alpha": ("OCc1ccccc1", "CCc1ccccc1"),
    "attenuate_beta": ("OCCO", "OCCC"),
    "rotamer_alpha": ("CN(C)C=O", "CNC=O"),
    "rotamer_beta": ("CCN(CC)C(C)=O", "CCNC(C)=O"),
}

ALKENE = {
    "base": ("C=C", "CC"),
    "allene": ("C=C=C", "C=CC"),
    "ring_alkyl": ("C1=CCCCC1", "C=C1CCCCC1"),
    "cf3": ("C=CC(F)(F)F", "C=CC(F)F"),
    "ch2_aryl": ("C=CCc1ccccc1", "C=Cc1ccccc1"),
    "ch2_o": ("C=CCO", "C=CCCO"),
    "ch2_s": ("C=CCSC", "C=CCCSC"),
    "ch2_hal": ("C=CCCl", "C=CCCCl"),
    "ch2_n": ("C=CCN", "C=CCCN"),
    "ch2_acyl": ("C=CCC(C)=O", "C=CCCC(C)=O"),
    "alkyl": ("C=CC", "C=Cc1ccccc1"),
    "nitrile": ("C=CC#N", "C=CC#C"),
    "alkynyl": ("C=CC#C", "C=CC#N"),
    "aldehyde": ("C=CC=O", "C=CC(C)=O"),
    "acid_conj": ("OC(=O)/C=C/c1ccccc1", "OC(=O)C=C"),
    "acid": ("OC(=O)C=C", "OC(=O)/C=C/c1ccccc1"),
    "ester_conj": ("COC(=O)/C=C/c1ccccc1", "COC(=O)C=C"),
    "ester": ("COC(=O)C=C", "COC(=O)/C=C/c1ccccc1"),
    "amide": ("NC(=O)C=C", "OC(=O)C=C"),
    "acyl_chloride": ("ClC(=O)C=C", "OC(=O)C=C"),
    "ketone_conj": ("CC(=O)/C=C/c1ccccc1", "CC(=O)C=C"),
    "ketone": ("CC(=O)C=C", "CC(=O)/C=C/c1ccccc1"),
    "vinyl": ("C=CC=C", "C=CC"),
    "aryl": ("C=Cc1ccccc1", "C=CC1CCCCC1"),
    "acyloxy": ("C=COC(C)=O", "C=COC"),
    "alkoxy_conj": ("C=COc1ccccc1", "C=COC"),
    "alkoxy": ("C=COC", "C=COc1ccccc1"),
    "enamide": ("C=CNC(C)=O", "C=CN(C)C"),
    "amino_conj": ("C=CN(C)c1ccccc1", "C=CN(C)C"),
    "nitro": ("C=C[N+](=O)[O-]", "C=CN(C)C"),
    "amino": ("C=CN(C)C", "C=C[N+](=O)[O-]"),
    "sulfonyl": ("C=CS(C)(=O)=O", "C=CS(C)=O"),
    "sulfinyl": ("C=CS(C)=O", "C=CSC"),
    "thio": ("C=CSC", "C=CS(C)=O"),
    "fluoro": ("C=CF", "C=CCl"),
    "chloro": ("C=CCl", "C=CBr"),
    "bromo": ("C=CBr", "C=CI"),
    "iodo": ("C=CI", "C=CCl"),
    "other": ("C=CP(C)C", "C=CN(C)C"),
}

BENZENE = {
    "base": ("c1ccccc1", "C1CCCCC1"),
    "cf3": ("FC(F)(F)c1ccccc1", "FC(F)c1ccccc1"),
    "ccl3": ("ClC(Cl)(Cl)c1ccccc1", "ClC(Cl)c1ccccc1"),
    "ch2_hal": ("ClCc1ccccc1", "ClCCc1ccccc1"),
    "ch2_o": ("OCc1ccccc1", "OCCc1ccccc1"),
    "ch2_n": ("NCc1ccccc1", "NCCc1ccccc1"),
    "ch2_acyl": ("N#CCc1ccccc1", "CCc1ccccc1"),
    "methyl": ("Cc1ccccc1", "CCc1ccccc1"),
    "ch2_alkyl": ("CCc1ccccc1", "Cc1ccccc1"),
    "ch_alkyl": ("CC(C)c1ccccc1", "CCc1ccccc1"),
    "c_alkyl": ("CC(C)(C)c1ccccc1", "CC(C)c1ccccc1"),
    "vinyl": ("C=Cc1ccccc1", "CCc1ccccc1"),
    "alkynyl": ("C#Cc1ccccc1", "N#Cc1ccccc1"),
    "nitrile": ("N#Cc1ccccc1", "C#Cc1ccccc1"),
    "aldehyde": ("O=Cc1ccccc1", "CC(=O)c1ccccc1"),
    "acid": ("OC(=O)c1ccccc1", "COC(=O)c1ccccc1"),
    "ester": ("COC(=O)c1ccccc1", "OC(=O)c1ccccc1"),
    "amide_tertiary": ("CN(C)C(=O)c1ccccc1", "CNC(=O)c1ccccc1"),
    "amide": ("NC(=O)c1ccccc1", "OC(=O)c1ccccc1"),
    "acyl_chloride": ("ClC(=O)c1ccccc1", "CC(=O)c1ccccc1"),
    "ketone_aryl": ("O=C(c1ccccc1)c1ccccc1", "CC(=O)c1ccccc1"),
    "ketone": ("CC(=O)c1ccccc1", "O=Cc1ccccc1"),
    "aryl": ("c1ccc(cc1)-c1ccccc1", "c1ccc2ccccc2c1"),
    "fused_five_ring": ("c1ccc2[nH]ccc2c1", "c1ccc2ccccc2c1"),
    "fused_aromatic": ("c1ccc2ccccc2c1", "c1ccc(cc1)-c1ccccc1"),
    "hydroxy": ("Oc1ccccc1", "COc1ccccc1"),
    "acyloxy": ("CC(=O)Oc1ccccc1", "COc1ccccc1"),
    "aryloxy": ("c1ccc(cc1)Oc1ccccc1", "COc1ccccc1"),
    "alkoxy": ("COc1ccccc1", "Oc1ccccc1"),
    "acylamino": ("CC(=O)Nc1ccccc1", "CNc1ccccc1"),
    "nitro": ("[O-][N+](=O)c1ccccc1", "Nc1ccccc1"),
    "amino": ("Nc1ccccc1", "CNc1ccccc1"),
    "alkylamino": ("CNc1ccccc1", "CN(C)c1ccccc1"),
    "dialkylamino": ("CN(C)c1ccccc1", "CNc1ccccc1"),
    "azo": ("c1ccc(cc1)N=Nc1ccccc1", "c1ccc(cc1)NNc1ccccc1"),
    "sulfonyl_chloride": ("ClS(=O)(=O)c1ccccc1", "CS(=O)(=O)c1ccccc1"),
    "sulfonamide": ("NS(=O)(=O)c1ccccc1", "ClS(=O)(=O)c1ccccc1"),
    "sulfonyl": ("CS(=O)(=O)c1ccccc1", "CSc1ccccc1"),
    "thiol": ("Sc1ccccc1", "CSc1ccccc1"),
    "thio": ("CSc1ccccc1", "Sc1ccccc1"),
    "fluoro": ("Fc1ccccc1", "Clc1ccccc1"),
    "chloro": ("Clc1ccccc1", "Brc1ccccc1"),
    "bromo": ("Brc1ccccc1", "Ic1ccccc1"),
    "iodo": ("Ic1ccccc1", "Fc1ccccc1"),
    "other": ("CP(C)c1ccccc1", "CN(C)c1ccccc1"),
}

HETERO = {
    "pyridine_2": ("c1ccncc1", "c1cncnc1"),
    "pyridine_3": ("c1ccncc1", "c1cncnc1"),
    "pyridine_4": ("c1ccncc1", "c1cnccn1"),
    "pyrimidine_2": ("c1cncnc1", "c1ccncc1"),
    "pyrimidine_4": ("c1cncnc1", "c1ccncc1"),
    "pyrimidine_5": ("c1cncnc1", "c1ccncc1"),
    "pyrazine": ("c1cnccn1", "c1cncnc1"),
    "pyridazine_3": ("c1ccnnc1", "c1cnccn1"),
    "pyridazine_4": ("c1ccnnc1", "c1cnccn1"),
    "pyrrole_2": ("c1cc[nH]c1", "c1ccoc1"),
    "pyrrole_3": ("c1cc[nH]c1", "c1ccoc1"),
    "pyrrole_n_2": ("Cn1cccc1", "c1cc[nH]c1"),
    "pyrrole_n_3": ("Cn1cccc1", "c1cc[nH]c1"),
    "furan_2": ("c1ccoc1", "c1ccsc1"),
    "furan_3": ("c1ccoc1", "c1ccsc1"),
    "thiophene_2": ("c1ccsc1", "c1ccoc1"),
    "thiophene_3": ("c1ccsc1", "c1ccoc1"),
    "imidazole_2": ("c1c[nH]cn1", "c1cn[nH]c1"),
    "imidazole_4": ("c1c[nH]cn1", "c1cn[nH]c1"),
    "pyrazole_3": ("c1cn[nH]c1", "c1c[nH]cn1"),
    "pyrazole_4": ("c1cn[nH]c1", "c1c[nH]cn1"),
    "thiazole_2": ("c1cscn1", "c1cocn1"),
    "thiazole_4": ("c1cscn1", "c1cocn1"),
    "thiazole_5": ("c1cscn1", "c1cocn1"),
    "oxazole_2": ("c1cocn1", "c1cscn1"),
    "oxazole_4": ("c1cocn1", "c1cscn1"),
    "oxazole_5": ("c1cocn1", "c1cscn1"),
    "fallback_6": ("c1ncncn1", "c1ccncc1"),
    "fallback_5": ("c1ccon1", "c1ccoc1"),
}

SPECIAL = {
    "ald_formaldehyde": ("C=O", "CC=O"),
    "ald_heteroaryl_o": ("O=Cc1ccco1", "O=Cc1cccs1"),
    "ald_aryl": ("O=Cc1ccccc1", "O=CC1CCCCC1"),
    "ald_conj": ("CC=CC=O", "CCCC=O"),
    "ald_tertiary": ("CC(C)(C)C=O", "CC(C)C=O"),
    "ald_secondary": ("CC(C)C=O", "CCC=O"),
    "ald_primary": ("CCC=O", "CC(C)C=O"),
    "ald_other": ("O=CC=O", "O=CCC=O"),
    "formyl_amide": ("CN(C)C=O", "COC=O"),
    "formyl_ester": ("COC=O", "CN(C)C=O"),
    "formyl_acid": ("OC=O", "COC=O"),
    "formyl_other": ("CSC=O", "COC=O"),
    "alkyne_aryl": ("C#Cc1ccccc1", "C#CC1CCCCC1"),
    "alkyne_conj": ("C#CC(=O)OC", "C#CCC(=O)OC"),
    "alkyne_propargyl_x": ("C#CCO", "C#CCCO"),
    "alkyne_alkyl": ("C#CC", "C#CCO"),
    "alkyne_other": ("C#C", "C#CC"),
    "imine_aryl_naryl": ("C(=Nc1ccccc1)c1ccccc1", "CN=Cc1ccccc1"),
    "imine_aryl_oxime": ("ON=Cc1ccccc1", "CN=Cc1ccccc1"),
    "imine_aryl": ("CN=Cc1ccccc1", "CCC=NC"),
    "imine_oxime": ("CC=NO", "CC=NC"),
    "imine_hydrazone": ("CC=NN(C)C", "CC=NC"),
    "imine_alkyl": ("CC=NC", "CC=NO"),
    "imine_other": ("C=NC", "CC=NC"),
    "ex_oh_chelated": ("COC(=O)c1ccccc1O", "COC(=O)c1ccc(O)cc1"),
    "ex_cooh": ("CC(=O)O", "CCO"),
    "ex_phenol": ("Oc1ccccc1", "OCc1ccccc1"),
    "ex_oxime": ("CC(C)=NO", "CC(C)NO"),
    "ex_alcohol": ("CCO", "Oc1ccccc1"),
    "ex_oh_other": ("CC(C)NO", "CC(C)=NO"),
    "ex_amide_nh": ("CC(=O)NC", "CCNC"),
    "ex_sulfonamide_nh": ("CS(=O)(=O)NC", "CCNC"),
    "ex_ring_nh": ("c1cc[nH]c1", "Nc1ccccc1"),
    "ex_aryl_nh": ("Nc1ccccc1", "NC1CCCCC1"),
    "ex_amine_nh": ("CCN", "Nc1ccccc1"),
    "ex_nh_other": ("CC(C)=N", "CC(C)N"),
    "ex_thiophenol": ("Sc1ccccc1", "SC1CCCCC1"),
    "ex_thiol": ("CCS", "Sc1ccccc1"),
    "ex_sh_other": ("S", "CS"),
    "other_h": ("CPC", "CNC"),
}

TABLES = {
    "shift_alkyl": ALKYL,
    "shift_alkyl_site": ALKYL_SITE,
    "shift_alkene": ALKENE,
    "shift_benzene": BENZENE,
    "shift_heteroaromatic": HETERO,
    "shift_special": SPECIAL,
}

# one structure per solvent-table target; "*" rows are checked on benzene or an alkyne, whose
# families have no row of their own in that solvent
TARGET_EXAMPLES = {
    "CH3": "CC(C)=O",
    "CH2": "C1CCCCC1",
    "CH": "ClC(Cl)Cl",
    "aromatic": "c1ccccc1",
    "heteroaromatic": "c1ccncc1",
    "formyl": "CN(C)C=O",
    "ex_alcohol": "CCO",
    "ex_phenol": "Oc1ccccc1",
    "ex_cooh": "CC(=O)O",
    "ex_amide_nh": "CC(=O)NC",
    "ex_aryl_nh": "Nc1ccccc1",
    "ex_ring_nh": "c1cc[nH]c1",
    "ex_oxime": "CC(C)=NO",
}

COUPLING = {
    "vic_sp3": ("CCCl", "CC(C)(C)Cl"),
    "vic_sp2_sp3": ("C=CC", "C=C(C)C"),
    "vic_sp2_sp2": ("C=CC=CC", "C=CC(C)=C"),
    "vic_aldehyde": ("CC=O", "CC(C)(C)C=O"),
    "vic_aldehyde_sp2": ("CC=CC=O", "CC=C(C)C=O"),
    "alkene_cis": ("C=CC", "C=C(C)C"),
    "alkene_trans": ("C=CC", "C=C(C)C"),
    "gem_sp2": ("C=CC", "CC=CC"),
    "ortho": ("Cc1ccccc1", "Cc1cc(C)cc(C)c1"),
    "ortho_aza": ("c1ccncc1", "c1ccccc1"),
    "ortho_5ring": ("c1ccoc1", "c1ccccc1"),
    "meta": ("Cc1ccccc1", "Cc1ccc(C)c(C)c1C"),
    "alkyne_4j": ("C#CC", "C#CC(C)(C)C"),
    "imine_4j": ("CN=Cc1ccccc1", "CC(C)(C)N=Cc1ccccc1"),
    "allylic": ("CC=CC(=O)OC", "C=C(C(C)(C)C)C(=O)OC"),
    "vic_nh_amide": ("CNC(C)=O", "CN(C)C(C)=O"),
    "vic_nh": ("CNC", "CN(C)C"),
    "vic_oh": ("CO", "CC(C)(C)O"),
    "vic_sh": ("CS", "CC(C)(C)S"),
}


def used_rows(smiles: str, solvent: str = "CDCl3") -> set[str]:
    return {key for s in predict_smiles(smiles, solvent) for key in s.rows}


def kinds(smiles: str) -> set[str]:
    return {p.kind for c in proton_classes(Chem.MolFromSmiles(smiles)) for p in c.partners}


def _cases(table: str):
    examples = TABLES[table]
    return [pytest.param(table, r["id"], *examples.get(r["id"], (None, None)), id=f"{table}:{r['id']}")
            for r in read_table(table)]


ALL_ROWS = [case for table in TABLES for case in _cases(table)]


@pytest.mark.parametrize(("table", "row", "example", "near_miss"), ALL_ROWS)
def test_shift_row_fires_on_its_example_and_not_on_the_near_miss(table, row, example, near_miss):
    assert example is not None, f"{table}.tsv row {row} has no example in this test"
    key = f"{table}:{row}"
    assert key in used_rows(example), f"{key} does not fire on {example}"
    assert key not in used_rows(near_miss), f"{key} fires on the near miss {near_miss}"


@pytest.mark.parametrize("table", sorted(TABLES))
def test_every_example_names_a_row_of_its_table(table):
    ids = {r["id"] for r in read_table(table)}
    assert set(TABLES[table]) <= ids


@pytest.mark.parametrize("table", ["shift_alkyl", "shift_alkene", "shift_benzene"])
def test_substituent_patterns_bond_atom_1_to_atom_2(table):
    # the (carbon, substituent) pair is read from the first two pattern atoms
    for r in read_table(table):
        if r.get("kind", "increment") != "increment":
            continue
        query = Chem.MolFromSmarts(r["smarts"])
        assert query.GetBondBetweenAtoms(0, 1) is not None, f"{table}.tsv row {r['id']}: {r['smarts']}"


@pytest.mark.parametrize("table", sorted(TABLES) + ["solvent_shift", "coupling", "multiplet", "sigma"])
def test_table_is_headed_by_its_source(table):
    from rank.tables import table_notes

    notes = " ".join(table_notes(table))
    assert notes, f"{table}.tsv has no source lines"
    assert "memory" in notes or "common practice" in notes


def _solvent_cases():
    rows = read_table("solvent_shift")
    listed: dict[str, set[str]] = {}
    for r in rows:
        listed.setdefault(r["solvent"], set()).add(r["target"])
    cases = []
    for r in rows:
        if r["target"] == "*":
            example = next(s for fam, s in (("aromatic", "c1ccccc1"), ("alkyne", "CC#C"))
                           if fam not in listed[r["solvent"]])
        else:
            example = TARGET_EXAMPLES.get(r["target"])
        cases.append(pytest.param(r["solvent"], r["target"], example, id=f"{r['solvent']}:{r['target']}"))
    return cases


@pytest.mark.parametrize(("solvent", "target", "example"), _solvent_cases())
def test_solvent_row_fires_in_its_solvent_only(solvent, target, example):
    assert example is not None, f"no example for solvent-table target {target}"
    key = f"solvent_shift:{solvent}/{target}"
    assert key in used_rows(example, solvent)
    other = "DMSO-d6" if solvent == "CDCl3" else "CDCl3"
    assert key not in used_rows(example, other)


@pytest.mark.parametrize("kind", [r["kind"] for r in read_table("coupling")])
def test_coupling_kind_appears_on_its_example_and_not_on_the_near_miss(kind):
    assert kind in COUPLING, f"coupling.tsv kind {kind} has no example in this test"
    example, near_miss = COUPLING[kind]
    assert kind in kinds(example)
    assert kind not in kinds(near_miss)


def test_every_family_has_a_sigma():
    from rank.predict.perceive import FAMILIES

    sigma = {r["family"]: float(r["sigma"]) for r in read_table("sigma")}
    assert set(FAMILIES) <= set(sigma)
    assert all(value > 0 for value in sigma.values())


def test_a_family_without_a_sigma_is_an_error_when_the_tables_load(monkeypatch):
    from rank.predict import shifts

    real = shifts.read_table
    monkeypatch.setattr(shifts, "read_table",
                        lambda name: [r for r in real(name) if not (name == "sigma" and r["family"] == "SH")])
    with pytest.raises(ValueError, match="sigma.tsv has no sigma for SH"):
        shifts.shift_tables.__wrapped__()   # the uncached loader


def test_multiplet_table_gives_every_rule_once(monkeypatch):
    from rank.predict import multiplets

    rules = multiplets.multiplet_rules()
    assert {r["id"] for r in read_table("multiplet")} == set(rules._fields)
    real = multiplets.read_table
    monkeypatch.setattr(multiplets, "read_table",
                        lambda name: [r for r in real(name) if r["id"] != "merge_j"])
    with pytest.raises(ValueError, match="merge_j"):
        multiplets.multiplet_rules.__wrapped__()


def test_every_known_solvent_has_solvent_rows():
    from rank.spectra import solvent_names

    listed = {r["solvent"] for r in read_table("solvent_shift")}
    assert set(solvent_names()) <= listed
    for name in solvent_names():
        Predictor(name)  # accepted


PROVENANCE = re.compile(r"\w+ fitted on \d+ compounds \(sd \d+\.\d\d; was -?\d+\.\d\d from memory\)|^from memory"
                        r"|fitted on \d+ H of the fit compounds \(was \d+\.\d\d from memory\)")


@pytest.mark.parametrize("table", sorted(TABLES) + ["sigma"])
def test_every_row_says_how_its_values_were_set(table):
    # benchmarks/fit_increments.py marks each row: fitted on the open data (with the value it replaced) or
    # from memory; a table with a fitted row names the open data in its header
    rows = read_table(table)
    unmarked = [r.get("id", r.get("family")) for r in rows if not PROVENANCE.search(r.get("provenance", ""))]
    assert not unmarked, f"{table}.tsv rows without a provenance mark: {unmarked}"
    if any("fitted on" in r["provenance"] for r in rows):
        from rank.tables import table_notes

        assert "NMRShiftDB2" in " ".join(table_notes(table))


@pytest.mark.parametrize("table", sorted(TABLES))
def test_a_fitted_value_differs_from_the_value_it_replaced(table):
    for r in read_table(table):
        for column, was in re.findall(r"(\w+) fitted on [^;]*; was (-?[\d.]+) from memory", r["provenance"]):
            assert float(r[column]) != float(was), f"{table}.tsv row {r['id']}: {column} marked fitted, unchanged"
