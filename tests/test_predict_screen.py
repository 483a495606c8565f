"""The table screen and the atom data read once: they change how much is searched, never what is found.

Outside reference: RDKit's own substructure search (``GetSubstructMatches``) and atom accessors, on real
compounds of the open data set (``benchmarks/data/open-spectra.tsv``, derived from NMRShiftDB2) and on a
few charged and unusual structures.
"""

from __future__ import annotations

from pathlib import Path

import pytest
from rdkit import Chem

from rank.bench import read_cases
from rank.predict import carbon
from rank.predict.environment import EnvironmentGraph
from rank.predict.perceive import perceive
from rank.predict.screen import Screen
from rank.predict.shifts import shift_tables

DATA = Path(__file__).resolve().parent.parent / "benchmarks" / "data" / "open-spectra.tsv"
UNUSUAL = ["C[N+](C)(C)C", "CC(=O)[O-]", "O=[N+]([O-])c1ccccc1", "C1CC2CCC1C2", "c1ccc2ccccc2c1",
           "CS(C)=O", "C#CC=C=C", "OC1=CC=CN1", "c1ccsc1", "Cn1ccnc1", "CC1(C)OC1(C)C", "FC(F)(F)C(Cl)Br"]


@pytest.fixture(scope="module")
def molecules() -> list[Chem.Mol]:
    cases = read_cases(str(DATA), "all")
    smiles = [case.smiles for case in cases[::12]] + UNUSUAL
    return [m for m in map(Chem.MolFromSmiles, smiles) if m is not None]


def _carbon_rows() -> list:
    rows = []
    for table in carbon._tables()[:8]:
        rows += table if isinstance(table, list) else [r for kind in table.values() for r in kind]
    return [r for r in rows if r.query is not None]


@pytest.mark.parametrize("kind", ["1H", "13C"])
def test_a_screened_out_pattern_has_no_match_and_simple_patterns_match_as_rdkit(molecules, kind):
    if kind == "1H":
        tables = shift_tables()
        screen, queries = tables.screen, [r.query for t in tables[:6] for r in t]
    else:
        screen, queries = carbon._tables().screen, [r.query for r in _carbon_rows()]
    searched = skipped = 0
    for mol in molecules:
        m = carbon._Molecule(Chem.RemoveHs(mol))
        features = screen.features(m.mol, m.z, m.aromatic, m.nh, m.charge, m.bond_types, m.rings)
        for query in queries:
            found = m.mol.GetSubstructMatches(query, uniquify=False, maxMatches=100_000)
            if not screen.passes(query, features.present):
                assert not found, Chem.MolToSmarts(query)
                skipped += 1
                continue
            searched += 1
            simple = screen.matches(query, features)
            if simple is not None:
                assert sorted(simple) == sorted(found), (Chem.MolToSmiles(mol), Chem.MolToSmarts(query))
    assert skipped > searched   # the screen is worth having: most rows cannot match a given molecule


def test_a_pattern_the_screen_was_not_given_is_left_to_rdkit():
    screen = Screen([Chem.MolFromSmarts("[CX4]-F")])
    assert screen.matches(Chem.MolFromSmarts("[CX4]-F"), carbon._Molecule(Chem.MolFromSmiles("CF")).features) is None


def test_atoms_read_once_agree_with_rdkit(molecules):
    for mol in molecules:
        heavy = Chem.RemoveHs(mol)
        m = carbon._Molecule(heavy)
        graph = perceive(heavy).graph
        assert m.z == graph.z == [a.GetAtomicNum() for a in heavy.GetAtoms()]
        assert m.nh == graph.nh and m.aromatic == graph.aromatic and m.charge == graph.charge
        assert m.heavy == [[n.GetIdx() for n in a.GetNeighbors()] for a in heavy.GetAtoms()]
        assert graph.saturated == [a.GetAtomicNum() == 6 and not a.GetIsAromatic()
                                   and all(b.GetBondType() == Chem.BondType.SINGLE for b in a.GetBonds())
                                   for a in heavy.GetAtoms()]


def test_environment_graph_from_atoms_gives_the_same_codes(molecules):
    for mol in molecules[:60]:
        heavy = Chem.RemoveHs(mol)
        m = carbon._Molecule(heavy)
        symbols = [a.GetSymbol() for a in heavy.GetAtoms()]
        read = EnvironmentGraph.from_atoms(symbols, m.aromatic, m.nh, m.charge, m.bonded, m.rings)
        direct = EnvironmentGraph(heavy)
        assert all(read.codes(a, 4) == direct.codes(a, 4) for a in range(heavy.GetNumAtoms()))
