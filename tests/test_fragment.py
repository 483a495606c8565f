"""Group hints inside the generator (``rank/generate/fragment.py``): contracting one copy of a group to a
vertex and expanding it again gives exactly the structures that contain the group.

The reference is the generator's own full default space filtered afterwards with RDKit SMARTS written
by hand, and on alkanes the OEIS counts (A000602: 9 heptanes, 18 octanes).
"""

from __future__ import annotations

import pytest
from rdkit import Chem

from rank.formula import parse_formula
from rank.generate import Hint, IsomerStream
from rank.generate.fragment import Fragment

ETHYL = "[CH3][CH2]-*"
ISOPROPYL = "[CH3][CH1]([CH3])-*"
TERT_BUTYL = "[CH3][CH0]([CH3])([CH3])-*"
PHENYL = "*-c1[cH][cH][cH][cH][cH]1"
PARA_PHENYLENE = "*-c1[cH][cH]c(-*)[cH][cH]1"
PYRIDIN_4_YL = "*-c1[cH][cH]n[cH][cH]1"
FORMYL = "[CH1](=O)-*"
PROPYL = "[CH3][CH2][CH2]-*"
ORTHO = "*-c1[cH][cH][cH][cH]c1-*"
META = "*-c1[cH]c(-*)[cH][cH][cH]1"
PYRIDIN_2_YL = "*-c1[cH][cH][cH][cH]n1"
PYRIDIN_3_YL = "*-c1[cH][cH][cH]n[cH]1"


def _group(*smiles: str) -> Hint:
    return Hint("group", "test", fragments=smiles)


def _filtered(formula: str, *patterns: list[str]) -> set[str]:
    """The default space, keeping structures that match one SMARTS of every list."""
    compiled = [[Chem.MolFromSmarts(s) for s in group] for group in patterns]
    return {iso.smiles for iso in IsomerStream(formula)
            if all(any(iso.mol.HasSubstructMatch(p) for p in group) for group in compiled)}


@pytest.mark.parametrize(("formula", "fragments", "reference", "total"), [
    ("C7H16", ("CC*",), [ETHYL], 9),               # OEIS A000602: 9 heptanes
    ("C8H18", ("CC*",), [ETHYL], 18),              # OEIS A000602: 18 octanes; many hold two ethyls
    ("C7H16", ("CC(C)*",), [ISOPROPYL], 9),        # 2,4-dimethylpentane holds two isopropyls
    ("C8H18", ("CCC*",), [PROPYL], 18),            # octane and 4-methylheptane hold two propyls
    ("C6H12O", ("CCC*",), [PROPYL], None),
    ("C6H12O", ("CC(C)(C)*",), [TERT_BUTYL], None),
    ("C5H10O", ("CC*",), [ETHYL], None),
    ("C5H10O", ("O=C*",), [FORMYL], None),          # aldehydes, formates and formamides alike
    ("C4H7NO", ("O=C*",), [FORMYL], None),
    ("C7H8O", ("*c1ccccc1",), [PHENYL], None),
    ("C8H10", ("*c1ccc(*)cc1",), [PARA_PHENYLENE], None),
    ("C6H7N", ("*c1ccc(*)cc1", "*c1ccncc1"), [PARA_PHENYLENE, PYRIDIN_4_YL], None),
    ("C8H10", ("*c1ccccc1*", "*c1cccc(*)c1", "*c1ccc(*)cc1"), [ORTHO, META, PARA_PHENYLENE], None),
    ("C7H8O", ("*c1ccccc1*", "*c1cccc(*)c1", "*c1ccc(*)cc1"), [ORTHO, META, PARA_PHENYLENE], None),
    ("C6H7N", ("*c1ccccn1", "*c1cccnc1", "*c1ccncc1"), [PYRIDIN_2_YL, PYRIDIN_3_YL, PYRIDIN_4_YL], None),
])
def test_contracting_a_group_equals_filtering_afterwards(formula, fragments, reference, total):
    contracted = IsomerStream(formula, hints=[_group(*fragments)])
    made = [iso.smiles for iso in contracted]
    assert len(made) == len(set(made)), "a structure was made twice"
    assert set(made) == _filtered(formula, reference)
    if total is not None:
        assert sum(1 for _ in IsomerStream(formula)) == total


def test_two_group_hints_together_equal_both_filters():
    both = IsomerStream("C8H18", hints=[_group("CC*"), Hint("iso", "test", fragments=("CC(C)*",))])
    made = [iso.smiles for iso in both]
    assert len(made) == len(set(made))
    assert set(made) == _filtered("C8H18", [ETHYL], [ISOPROPYL])
    assert made  # e.g. 2-methylheptane


def test_a_second_benzene_ring_outside_the_group_is_made_once():
    # C12H10 with a phenyl group: the rest has its own Kekule forms, merged as one compound
    stream = IsomerStream("C12H10", hints=[_group("*c1ccccc1")], ceiling=0)
    made = [iso.smiles for iso in stream]
    keys = [Chem.MolToInchiKey(Chem.MolFromSmiles(s)) for s in made]
    assert len(keys) == len(set(keys))
    assert made.count("c1ccc(-c2ccccc2)cc1") == 1  # biphenyl
    phenyl = Chem.MolFromSmarts(PHENYL)
    assert all(Chem.MolFromSmiles(s).HasSubstructMatch(phenyl) for s in made)


def test_a_group_hint_builds_far_fewer_structures():
    plain = IsomerStream("C8H10O")
    hinted = IsomerStream("C8H10O", hints=[_group("CC*"), Hint("ring", "t", fragments=("*c1ccccc1",))])
    made = {iso.smiles for iso in hinted}
    assert "CCOc1ccccc1" in made  # phenetole
    assert "CCc1ccccc1O" not in made  # 2-ethylphenol: its ring is not monosubstituted
    assert hinted.estimate() * 100 < plain.estimate()
    assert hinted.hinted["group"] > 0 and hinted.hinted["ring"] > 0


def test_a_group_the_formula_cannot_hold_leaves_the_hint_out():
    ring = Hint("ring", "test", fragments=("*c1ccccc1",))
    assert not ring.fits(parse_formula("C5H5N"))  # pyridine: no six carbons
    assert ring.fits(parse_formula("C7H8"))


@pytest.mark.parametrize("smiles", ["*CC(*)C", "*=CC", "CC", "C1C"])
def test_a_fragment_must_have_equivalent_single_bond_ports(smiles):
    with pytest.raises(ValueError):
        assert Fragment(smiles).ports is None


def test_fragment_counts_its_atoms_and_hydrogens():
    # para-phenylene C6H4 with four CH on double bonds (Kekule form); ethyl C2H5 with one CH3
    ring, ethyl = Fragment("*c1ccc(*)cc1"), Fragment("CC*")
    assert (ring.ports, ring.formula_counts()["C"], ring.formula_counts()["H"]) == (2, 6, 4)
    assert ring.carbons(1, double_bond=True) == 4
    assert (ethyl.ports, ethyl.carbons(3), ethyl.formula_counts()["H"]) == (1, 1, 5)


def _copies_at_least(formula: str, smarts: str, k: int) -> set[str]:
    pattern = Chem.MolFromSmarts(smarts)
    return {iso.smiles for iso in IsomerStream(formula) if len(iso.mol.GetSubstructMatches(pattern)) >= k}


@pytest.mark.parametrize(("formula", "fragment", "reference", "copies", "total"), [
    ("C8H18", "CC*", ETHYL, 2, 18),          # OEIS A000602: 18 octanes
    ("C9H20", "CC*", ETHYL, 3, 35),          # OEIS A000602: 35 nonanes; 3,3-diethylpentane holds four
    ("C7H16", "CC(C)*", ISOPROPYL, 2, 9),    # 2,4-dimethylpentane
    ("C9H20", "CCC*", PROPYL, 2, 35),        # nonane, 4-ethylheptane, 4,4-dimethylheptane, ...
    ("C6H14O", "CC*", ETHYL, 2, None),       # diethyl-substituted ethers and alcohols
])
def test_contracting_several_copies_equals_counting_them_afterwards(formula, fragment, reference, copies, total):
    stream = IsomerStream(formula, hints=[Hint("group", "test", fragments=(fragment,), copies=copies)])
    made = [iso.smiles for iso in stream]
    assert len(made) == len(set(made))
    assert set(made) == _copies_at_least(formula, reference, copies)
    assert made
    if total is not None:
        assert sum(1 for _ in IsomerStream(formula)) == total


def _disjoint(formula: str, first: str, second: str) -> set[str]:
    """The default space, keeping structures with a copy of each group that share no atom."""
    a, b = Chem.MolFromSmarts(first), Chem.MolFromSmarts(second)
    kept = set()
    for iso in IsomerStream(formula):
        ones = [set(m[:-1]) for m in iso.mol.GetSubstructMatches(a)]   # the port atom is not the group's
        twos = [set(m[:-1]) for m in iso.mol.GetSubstructMatches(b)]
        if any(not (x & y) for x in ones for y in twos):
            kept.add(iso.smiles)
    return kept


@pytest.mark.parametrize("formula", ["C6H14O", "C6H12O2"])
def test_a_group_inside_another_hint_s_group_is_not_placed_twice(formula):
    # an ethyl group is part of every propyl chain: with both hints, the structure needs an ethyl
    # and a propyl that share no atom (their peaks are different H)
    stream = IsomerStream(formula, hints=[_group("CC*"), Hint("propyl", "test", fragments=("CCC*",))])
    made = [iso.smiles for iso in stream]
    assert len(made) == len(set(made))
    assert set(made) == _disjoint(formula, ETHYL, PROPYL)
    assert made
