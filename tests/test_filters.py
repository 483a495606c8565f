"""Plausibility filters of the default isomer space (``rules/filters.tsv``).

Every row is tested on a structure it removes and on a near miss it keeps, through the
stream itself.  The chemistry of each pair (why the first is implausible and the second is
a normal compound) follows the sources in the table: Bredt's rule (J. Bredt, Justus Liebigs
Ann. Chem. 1924, 437, 1), keto-enol and imine-enamine tautomerism, ring strain and
antiaromaticity (Clayden, Greeves, Warren, Organic Chemistry, 2nd ed., from memory); the
rest is common practice.
"""

from __future__ import annotations

from collections import Counter
from functools import cache

import pytest
from rdkit import Chem, RDLogger
from rdkit.Chem import rdMolDescriptors

from rank.generate import IsomerStream
from rank.tables import read_table

RDLogger.DisableLog("rdApp.*")

ROWS = read_table("filters")
ROW_IDS = [r["id"] for r in ROWS]
PATTERNS = {r["id"]: Chem.MolFromSmarts(r["smarts"]) for r in ROWS}

# row id -> (structures the row removes, near misses it keeps)
EXAMPLES: dict[str, tuple[list[str], list[str]]] = {
    "aromatic_ring_alkyne": (
        ["c1cc#c[nH]1"],  # 2,3-didehydropyrrole (aryne-type)
        ["N#Cc1ccco1"],  # 2-furonitrile: the triple bond is outside the ring
    ),
    "large_aromatic_ring": (
        ["c1ccoccoc1"],  # 1,4-dioxocin drawn aromatic (ten pi electrons)
        ["Oc1ccccc1O"],  # catechol, the same formula
    ),
    "aromatic_oxygen_seven_ring": (
        ["c1ccoooc1"],  # a trioxepin drawn aromatic
        ["c1ccoc1"],  # furan
    ),
    "aromatic_peroxide": (
        ["Cc1cooc1=O", "O=c1ccoo1"],  # 1,2-dioxol-3-ones drawn aromatic
        ["O=c1occo1"],  # vinylene carbonate (1,3-dioxol-2-one): the oxygens are apart
    ),
    "three_ring_aromatic": (
        ["c1ccc2c(c1)C2"],  # cyclopropabenzene
        ["c1ccc2c(c1)CC2"],  # benzocyclobutene
    ),
    "small_ring_alkyne": (
        ["C1#CCCCC1"],  # cyclohexyne
        ["C#CC1CC1"],  # ethynylcyclopropane: the triple bond is outside the ring
    ),
    "small_ring_allene": (
        ["C1=C=CCCC1"],  # cyclohexa-1,2-diene
        ["C1=CC=CCC1", "C=C=C1CC1", "O=S1(=O)CC=CC1"],  # conjugated cyclohexadiene; allene leaving a ring;
        # 3-sulfolene (NMRShiftDB2: the S of a cyclic sulfone is no allene)
    ),
    "bridgehead_alkene": (
        ["C12=CCC(C1)C2"],  # bicyclo[2.1.1]hex-1-ene
        ["C1=CC2CC1C2", "C1CC2=C1CC2"],  # bicyclo[2.1.1]hex-2-ene; fused bicyclo[2.2.0]hex-1(4)-ene
    ),
    "cyclobutadiene": (
        ["C1=CC=C1"],  # cyclobutadiene
        ["C=C1C=CC1", "C=C1C=C1"],  # 3-methylenecyclobutene; methylenecyclopropene
    ),
    "cyclobutadiene_in_aromatic": (
        ["c1cc2ccc1-2"],  # bicyclo[4.2.0]octa-1,3,5,7-tetraene, drawn aromatic by RDKit
        ["c1ccc2c(c1)CC2"],  # benzocyclobutene: one aromatic bond in the four-ring
    ),
    "three_ring_hetero_ene": (
        ["C1=CO1", "C1=CS1", "CN1C=C1"],  # oxirene, thiirene, 1-methyl-1H-azirine
        ["C1=NC1", "C=C1CO1"],  # 2H-azirine; methyleneoxirane
    ),
    "enol": (
        ["C=CO"],  # vinyl alcohol
        ["OC=CC=O", "C=CCO", "C=C(O)C(=O)O"],  # enol of malondialdehyde (conjugated); allyl alcohol;
        # the enol of pyruvic acid (enols of alpha-keto acids are stable; NMRShiftDB2 holds several)
    ),
    "ynol": (
        ["C#CO"],  # ethynol
        ["C#COC", "C#CCO"],  # methoxyethyne; propargyl alcohol
    ),
    "enamine_nh": (
        ["C=CN", "C=CNC"],  # vinylamine, N-methylvinylamine
        ["C=CN(C)C", "C=CCN", "CC(=O)C=CN", "NC=C(C#N)C#N"],  # tertiary enamine; allylamine; an
        # enaminone and an aminomethylene malononitrile (push-pull enamines, stable; NMRShiftDB2)
    ),
    "hemiacetal": (
        ["COCO", "NCO"],  # methoxymethanol; aminomethanol
        ["OCCO", "CNO", "OC1CCCCO1", "OC(O)C(F)(F)F", "COC(O)C(=O)OC", "C=CC(=O)NCO"],  # diol;
        # N-methylhydroxylamine; cyclic hemiacetal (sugars); fluoral hydrate; glyoxylate hemiacetal;
        # N-(hydroxymethyl)acrylamide: stable kinds NMRShiftDB2 holds
    ),
    "oxide_without_nplus": (
        ["C=[N+]=C[O-]"],  # oxido O on carbon
        ["CC#[N+][O-]", "C[N+](=O)[O-]"],  # acetonitrile N-oxide; nitromethane
    ),
    "nplus_without_oxide": (
        ["C=[N+]=[N+]([O-])[O-]"],  # one N+ holds both oxido O, the other none
        ["C=N[N+](=O)[O-]"],  # N-nitromethanimine
    ),
    "nplus_with_h": (
        ["C[NH2+][O-]"],  # N-oxide of methylamine
        ["C[N+](C)(C)[O-]", "CNO"],  # trimethylamine N-oxide; N-methylhydroxylamine
    ),
    "three_ring_o_hetero": (
        ["C1OO1", "CC1ON1C"],  # dioxirane; 2,3-dimethyloxaziridine
        ["C1CO1", "CC1(C)NN1C"],  # oxirane; 1,3,3-trimethyldiaziridine (NMRShiftDB2 holds a diaziridine)
    ),
    "fused_three_ring_hetero_pair": (
        ["C1CN2NC12", "C1CC2NN12"],  # diaziridines fused to a four- and a five-membered ring
        ["CC1(C)NN1C", "C1CC2OC2C1"],  # a lone diaziridine; cyclopentene oxide (one heteroatom)
    ),
    "short_bridged_benzene": (
        ["C1Cc2ccc1cc2", "C1CCc2ccc1cc2", "c1cc2cc(c1)CC2", "c1ccc2cc1-2"],  # para by two and three atoms;
        # meta by two atoms and directly
        ["c1ccc2c(c1)CC2", "c1ccc2c(c1)CCC2", "C1=CC2C=CC1C2"],  # benzocyclobutene; indane (ortho-fused);
        # norbornadiene (sp3 bridgeheads)
    ),
    "hypervalent_s_without_o": (
        ["C=S=C"],  # S(IV) with two C=S
        ["CS(C)=O"],  # dimethyl sulfoxide
    ),
    "sulfur_vi_one_o": (
        ["C=S(=C)=O"],  # S(VI) with one S=O
        ["CC=S=O", "CS(C)(=O)=O"],  # a sulfine; dimethyl sulfone
    ),
    "hypervalent_s_with_h": (
        ["C[SH]=O", "C[SH](=O)=O"],  # tautomers of methanesulfenic and methanesulfinic acid
        ["CSO", "CS(=O)O"],  # methanesulfenic acid; methanesulfinic acid
    ),
    "hypervalent_p_without_o": (
        ["C=[PH2]O", "C=[PH3]"],  # P(V) ylide forms
        ["C[PH2]=O"],  # methylphosphine oxide
    ),
    "peroxide_chain": (
        ["COOOC"],  # dimethyl trioxide
        ["OOCCO", "COOC"],  # 2-hydroperoxyethanol; dimethyl peroxide
    ),
}

STANDARD_VALENCE = {"C": 4, "N": 3, "O": 2, "S": 2, "P": 3, "F": 1, "Cl": 1, "Br": 1, "I": 1}


def _mol(smiles: str) -> Chem.Mol:
    mol = Chem.MolFromSmiles(smiles)
    assert mol is not None, f"RDKit cannot read {smiles!r}"
    return mol


def _formula(smiles: str) -> str:
    return rdMolDescriptors.CalcMolFormula(_mol(smiles))


def _standard(smiles: str) -> bool:
    return all(
        a.GetFormalCharge() == 0 and a.GetTotalValence() == STANDARD_VALENCE[a.GetSymbol()]
        for a in _mol(smiles).GetAtoms()
    )


@cache
def _default_space(formula: str) -> tuple[frozenset[str], Counter]:
    stream = IsomerStream(formula)
    smiles = frozenset(Chem.MolToSmiles(_mol(iso.smiles)) for iso in stream)
    return smiles, Counter(stream.removed)


@cache
def _complete_space(formula: str) -> frozenset[str]:
    return frozenset(Chem.MolToSmiles(_mol(iso.smiles)) for iso in IsomerStream(formula, complete=True))


def test_every_filter_row_has_examples():
    assert sorted(EXAMPLES) == sorted(ROW_IDS)
    assert all(removed and kept for removed, kept in EXAMPLES.values())


def test_every_filter_row_has_valid_smarts():
    assert [rid for rid, p in PATTERNS.items() if p is None] == []


@pytest.mark.parametrize("row_id", ROW_IDS)
def test_filter_row_removes_its_example(row_id):
    removed, _ = EXAMPLES.get(row_id, ([], []))
    assert removed, f"no example for filter row {row_id}"
    for smiles in removed:
        mol = _mol(smiles)
        assert mol.HasSubstructMatch(PATTERNS[row_id]), smiles
        first = next(rid for rid in ROW_IDS if mol.HasSubstructMatch(PATTERNS[rid]))
        assert first == row_id, f"{smiles} is charged to {first} before {row_id}"
        formula = _formula(smiles)
        if _standard(smiles):
            assert Chem.MolToSmiles(mol) in _complete_space(formula), f"{smiles} not built at all"
        default, counts = _default_space(formula)
        assert Chem.MolToSmiles(mol) not in default, f"{smiles} kept in the default space of {formula}"
        assert counts[row_id] >= 1


@pytest.mark.parametrize("row_id", ROW_IDS)
def test_filter_row_keeps_its_near_miss(row_id):
    _, kept = EXAMPLES.get(row_id, ([], []))
    assert kept, f"no near miss for filter row {row_id}"
    for smiles in kept:
        mol = _mol(smiles)
        assert not mol.HasSubstructMatch(PATTERNS[row_id]), smiles
        default, _ = _default_space(_formula(smiles))
        assert Chem.MolToSmiles(mol) in default, f"{smiles} missing from the default space"


# Charge-separated nitro groups and N-oxides, sulfoxides and sulfones are how chemists draw
# these compounds (common practice); they lie outside the neutral standard-valence space.
EXTRA_VALENCE = [
    ("CH3NO2", "C[N+](=O)[O-]"),  # nitromethane
    ("C2H6OS", "CS(C)=O"),  # dimethyl sulfoxide
    ("C2H6O2S", "CS(C)(=O)=O"),  # dimethyl sulfone
    ("C3H9NO", "C[N+](C)(C)[O-]"),  # trimethylamine N-oxide
]


@pytest.mark.parametrize(("formula", "smiles"), EXTRA_VALENCE, ids=[f for f, _ in EXTRA_VALENCE])
def test_default_space_has_charge_separated_and_hypervalent_forms_complete_space_not(formula, smiles):
    canonical = Chem.MolToSmiles(_mol(smiles))
    assert canonical in _default_space(formula)[0]
    assert canonical not in _complete_space(formula)


def test_nitromethane_default_space_adds_to_the_complete_space():
    default, _ = _default_space("CH3NO2")
    complete = _complete_space("CH3NO2")
    # methyl nitrite is in both; nitromethane only drawn charge-separated
    assert Chem.MolToSmiles(_mol("CON=O")) in default & complete
    assert Chem.MolToSmiles(_mol("C[N+](=O)[O-]")) in default - complete
