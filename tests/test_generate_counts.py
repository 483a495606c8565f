"""Isomer counts of the complete constitutional space against published counts.

Sources are named beside each table.  Every structure is also read back with RDKit, the
reference library, to check its formula and that no compound comes twice.
"""

from __future__ import annotations

from collections import Counter

import pytest
from rdkit import Chem, RDLogger
from rdkit.Chem import rdMolDescriptors

from rank.generate import IsomerStream

RDLogger.DisableLog("rdApp.*")

# OEIS A000602: number of alkanes C(n)H(2n+2), i.e. of carbon trees with no vertex of
# degree above four, n = 1..14 (https://oeis.org/A000602).
A000602 = [1, 1, 1, 2, 3, 5, 9, 18, 35, 75, 159, 355, 802, 1858]

# OEIS A000598: number of rooted carbon trees with n vertices, which is the number of
# saturated alcohols C(n)H(2n+1)OH, n = 1..8 (https://oeis.org/A000598).
A000598 = [1, 1, 2, 4, 8, 17, 39, 89]

# Textbook counts of constitutional isomers (from memory), and C6H6 217 as quoted in the
# structure-generation literature (from memory).
TEXTBOOK = [
    ("C2H4O", 3),  # acetaldehyde, oxirane, vinyl alcohol
    ("C3H6O", 9),
    ("C4H6", 9),
    ("C6H12", 25),
    ("C4H10O", 7),  # four butanols, three ethers
    ("C6H14O", 32),
    ("C4H11N", 8),
    ("C5H13N", 17),
    ("C3H6Cl2", 4),
    ("C4H8Cl2", 9),
    ("C6H6", 217),
]

OH = Chem.MolFromSmarts("[OX2H1]")


def _alkane(n: int) -> str:
    return f"C{n if n > 1 else ''}H{2 * n + 2}"


def _read(smiles: str) -> Chem.Mol:
    mol = Chem.MolFromSmiles(smiles)
    assert mol is not None, f"RDKit cannot read {smiles!r}"
    return mol


@pytest.mark.parametrize(
    ("n", "expected"), list(enumerate(A000602, 1)), ids=[_alkane(n) for n in range(1, 15)]
)
def test_alkane_count_matches_oeis_a000602(n, expected):
    assert IsomerStream(_alkane(n), complete=True).count() == expected


@pytest.mark.parametrize("n", range(1, 11), ids=[_alkane(n) for n in range(1, 11)])
def test_alkane_stream_agrees_with_count_and_holds_only_acyclic_alkanes(n):
    smiles = [iso.smiles for iso in IsomerStream(_alkane(n), complete=True)]
    assert len(smiles) == A000602[n - 1]  # OEIS A000602
    assert len(set(smiles)) == len(smiles)
    for s in smiles:
        mol = _read(s)
        assert rdMolDescriptors.CalcMolFormula(mol) == _alkane(n)
        assert mol.GetRingInfo().NumRings() == 0
        assert all(b.GetBondType() == Chem.BondType.SINGLE for b in mol.GetBonds())


@pytest.mark.parametrize(("n", "expected"), list(enumerate(A000598, 1)), ids=[f"C{n}" for n in range(1, 9)])
def test_saturated_alcohol_count_matches_oeis_a000598(n, expected):
    formula = f"C{n if n > 1 else ''}H{2 * n + 2}O"
    alcohols = [iso.smiles for iso in IsomerStream(formula, complete=True) if iso.mol.HasSubstructMatch(OH)]
    assert len(alcohols) == expected
    # the same space narrowed with --require gives the same count
    assert IsomerStream(formula, complete=True, require=["[OX2H1]"]).count() == expected


@pytest.mark.parametrize(("formula", "expected"), TEXTBOOK, ids=[f for f, _ in TEXTBOOK])
def test_textbook_isomer_count(formula, expected):
    assert IsomerStream(formula, complete=True).count() == expected
    assert sum(1 for _ in IsomerStream(formula, complete=True)) == expected


def test_butanol_isomers_are_the_textbook_seven():
    # four butanols and three ethers (from memory)
    expected = {"CCCCO", "CCC(C)O", "CC(C)CO", "CC(C)(C)O", "CCOCC", "CCCOC", "COC(C)C"}
    got = {Chem.MolToSmiles(_read(iso.smiles)) for iso in IsomerStream("C4H10O", complete=True)}
    assert got == {Chem.MolToSmiles(_read(s)) for s in expected}


# Mixed formulas in both spaces.  The default space adds charge-separated N-oxides and nitro
# groups and hypervalent S, which is why C3H7NO2, C2H6OS and C2H6O2S are run without --all.
MIXED = [
    ("C3H6O", True),
    ("CH3NO", True),
    ("C4H5N", True),
    ("C2H4N2O", True),
    ("C4H8Cl2", True),
    ("C3H4BrF", True),
    ("C3H5NOS", True),
    ("C6H6", True),
    ("C3H7NO2", False),
    ("C2H3NO2", False),
    ("C2H6OS", False),
    ("C2H6O2S", False),
]
MIXED_IDS = [f"{f}-{'all' if c else 'default'}" for f, c in MIXED]


@pytest.mark.parametrize(("formula", "complete"), MIXED, ids=MIXED_IDS)
def test_every_structure_has_the_input_formula_and_comes_once(formula, complete):
    smiles = [iso.smiles for iso in IsomerStream(formula, complete=complete)]
    assert smiles
    formulas = Counter(rdMolDescriptors.CalcMolFormula(_read(s)) for s in smiles)
    assert formulas == Counter({formula: len(smiles)})
    canonical = Counter(Chem.MolToSmiles(_read(s)) for s in smiles)
    assert [s for s, k in canonical.items() if k > 1] == []


# InChI with the fixed-H layer tells tautomers apart (standard InChI merges mobile-H
# tautomers such as formamide and formimidic acid).  InChI keeps no bond orders in its
# connection table (InChI Technical Manual, from memory), so bond-shift isomers of
# antiaromatic four-membered rings, e.g. CC1=CC=N1 and CC1=NC=C1 in C4H5N, or the C6H6
# pairs, share a key; formulas with such pairs are left out of this check.
INCHI_DISTINCT = [m for m in MIXED if m[0] not in ("C4H5N", "C6H6")]


@pytest.mark.parametrize(
    ("formula", "complete"), INCHI_DISTINCT, ids=[i for m, i in zip(MIXED, MIXED_IDS) if m in INCHI_DISTINCT]
)
def test_inchikeys_of_the_stream_are_distinct(formula, complete):
    keys = Counter(
        Chem.MolToInchiKey(_read(iso.smiles), options="/FixedH")
        for iso in IsomerStream(formula, complete=complete)
    )
    assert "" not in keys
    assert [k for k, n in keys.items() if n > 1] == []
