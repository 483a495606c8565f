"""The generator's parts: the planner counts nothing, the core's bond bans and type order,
the acceptor's reasons, one streaming loop for iteration and count, and RDKit's log.

References are the stream itself (a plan must agree with what iteration tallies) and RDKit
for the structures; the type order is the one the canonical forms were built on.
"""

from __future__ import annotations

import subprocess
import sys

import pytest
from rdkit import Chem

from rank.formula import parse_formula
from rank.generate import Hint, IsomerStream, _enum, atom_states
from rank.generate.accept import Acceptor, Isomer, Rejection, Why
from rank.generate.atoms import AtomState, AtomType
from rank.generate.core import BondBan, EnumeratorFactory
from rank.generate.fragment import Fragment, FragmentType
from rank.generate.plan import RunPlanner

STATE = {s.id: s for s in atom_states()}
ETHYL = Hint("ethyl group", "test", fragments=("CC*",))
METHYLS = Hint("methyl groups", "test", hydrogens=3, min_atoms=2)
ALKENE_CH = Hint("alkene CH", "test", hydrogens=1, min_atoms=2, double_bond=True)
HYDROXY = Hint("hydroxy", "test", smarts="[OX2H]")


def _stream(**options) -> IsomerStream:
    return IsomerStream("C6H12O", ceiling=0, **options)


# ------------------------------------------------------------------------ planning ----


def test_runs_and_estimates_count_nothing_and_repeat_exactly():
    stream = _stream(hints=[ETHYL, METHYLS], require=["[CH3]"])
    first, second = list(stream.runs()), list(stream.runs())
    estimate = stream.estimate()
    assert first == second and first
    assert stream.estimate() == estimate
    assert not stream.hinted and not stream.pruned and stream.explored == 0


@pytest.mark.parametrize("options", [
    {"hints": [ETHYL, METHYLS]},
    {"hints": [ALKENE_CH], "require": ["[CH3]"]},
    {"require": ["[NH2]"]},
    {"forbid": ["[OH]"], "hints": [METHYLS]},
], ids=["group and count", "double bond and require", "require prunes all", "forbid and count"])
def test_plan_holds_the_tallies_iteration_counts_before_building(options):
    plan = _stream(**options).plan()
    stream = _stream(**options)
    built = list(stream)
    assert plan.pruned == stream.pruned
    assert plan.hinted == stream.hinted  # none of these hints has a SMARTS to test on structures
    assert sum(1 for types in plan.runs for _ in stream.stream_run(types)) == len(built)


def test_plan_of_a_pattern_no_distribution_can_meet_has_no_runs():
    plan = _stream(require=["[NH2]"]).plan()
    assert plan.runs == []
    assert plan.pruned["--require '[NH2]'"] > 0


def test_a_hint_smarts_is_counted_on_the_structures_not_in_the_plan():
    plan = _stream(hints=[HYDROXY]).plan()
    stream = _stream(hints=[HYDROXY])
    kept = [iso.smiles for iso in stream]
    assert not plan.hinted
    assert stream.hinted["hydroxy"] + len(kept) + sum(stream.removed.values()) == stream.explored


def test_planner_contracts_the_first_groups_only_when_asked():
    planner = RunPlanner(parse_formula("C8H10"), False, [ETHYL, Hint("ring", "t", fragments=("*c1ccccc1",))])
    plain = list(planner.runs(0))
    both = list(planner.runs())
    assert not any(isinstance(t, FragmentType) for run in plain for t, _ in run)
    assert all(sum(isinstance(t, FragmentType) for t, _ in run) == 2 for run in both)
    assert set(planner.group_removals) == {"ethyl group", "ring"}


# ---------------------------------------------------------------- the core's inputs ----


def test_bond_bans_are_the_constants_of_the_compiled_core():
    assert BondBan.DOUBLE == _enum.BAN_DOUBLE == 1 << 2
    assert BondBan.TRIPLE == _enum.BAN_TRIPLE == 1 << 3


def test_a_forbidden_cn_triple_bond_and_a_group_s_single_bonds_are_banned():
    carbon, nitrogen = AtomType(STATE["C"], 0), AtomType(STATE["N"], 0)
    ethyl = FragmentType(Fragment("CC*"), (Fragment("CC*"),))
    run = [(ethyl, 1), (carbon, 1), (nitrogen, 1)]
    bans = EnumeratorFactory([Chem.MolFromSmarts("[#6]#[#7]")]).bans(run)
    single_only = BondBan.DOUBLE | BondBan.TRIPLE
    assert bans == bytes([single_only, single_only, single_only,
                          single_only, 0, BondBan.TRIPLE,
                          single_only, BondBan.TRIPLE, 0])
    assert EnumeratorFactory().bans([(carbon, 1), (nitrogen, 1)]) == bytes(4)


def test_an_atom_hinted_without_double_bond_may_take_no_double_bond():
    ch2 = AtomType(STATE["C"], 2, double_bond=False)
    assert EnumeratorFactory().bans([(ch2, 2)]) == bytes([BondBan.DOUBLE])


# The enumeration order and the canonical forms rest on this order (highest first).
def test_type_order_degree_first_then_groups_then_valence_hydrogens_state():
    c, o, n_plus = STATE["C"], STATE["O"], STATE["N+"]
    ethyl = FragmentType(Fragment("CC*"), (Fragment("CC*"),))
    ring = FragmentType(Fragment("*c1ccc(*)cc1"), (Fragment("*c1ccc(*)cc1"),))
    types = [AtomType(c, 3), ethyl, AtomType(c, 2), ring, AtomType(o, 1), AtomType(n_plus, 3),
             AtomType(c, 1, True), AtomType(c, 1), AtomType(c, 1, False)]
    order = sorted(types, key=lambda t: t.key, reverse=True)
    assert order == [AtomType(c, 1, True), AtomType(c, 1), AtomType(c, 1, False), ring, AtomType(c, 2),
                     ethyl, AtomType(n_plus, 3), AtomType(c, 3), AtomType(o, 1)]


# ------------------------------------------------------------------------ acceptor ----

# vinyl alcohol C=C-O: types CH2, CH, OH; bonds 0=1, 1-2; no alternating cycle
VINYL_ALCOHOL = bytes([0, 1, 2, 2, 0, 1, 0])
VINYL_KINDS = [AtomType(STATE["C"], 2), AtomType(STATE["C"], 1), AtomType(STATE["O"], 1)]


def test_acceptor_returns_the_structure_or_why_it_is_left_out():
    oh = ("[OH]", Chem.MolFromSmarts("[OH]"))
    kept = Acceptor(complete=True)(VINYL_KINDS, VINYL_ALCOHOL)
    assert isinstance(kept, Isomer) and kept.smiles == "C=CO"
    assert Acceptor(complete=False)(VINYL_KINDS, VINYL_ALCOHOL) == Rejection(Why.FILTER, "enol")
    assert Acceptor(True, forbid=[oh])(VINYL_KINDS, VINYL_ALCOHOL) == Rejection(Why.PATTERN, "--forbid '[OH]'")
    ether = Hint("ether", "test", smarts="[OX2]([#6])[#6]")
    assert Acceptor(True, hints=[ether])(VINYL_KINDS, VINYL_ALCOHOL) == Rejection(Why.HINT, "ether")


def test_acceptor_refuses_a_valence_rdkit_does_not_accept():
    five = AtomType(AtomState("C5", "C", 5, 0, False), 5)
    assert Acceptor(complete=True)([five], bytes([0, 0])) == Rejection(Why.INVALID)


# ------------------------------------------------------------------------ streaming ----


@pytest.mark.parametrize(("formula", "complete", "options"), [
    ("C6H6", True, {}),
    ("C5H8O", True, {}),
    ("C5H10O", False, {}),
    ("C6H12O", False, {"hints": [ETHYL]}),
    ("C5H10O", True, {"require": ["C=O"]}),
])
def test_count_and_iteration_walk_the_same_structures(formula, complete, options):
    counted = IsomerStream(formula, complete=complete, **options)
    listed = IsomerStream(formula, complete=complete, **options)
    n = counted.count()
    assert n == len(list(listed))
    assert counted.explored == listed.explored
    assert counted.complete_run and listed.complete_run
    assert (counted.removed, counted.rejected, counted.hinted) == (listed.removed, listed.rejected, listed.hinted)


def _quiet_run(code: str) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=False, timeout=120)


def test_generation_and_a_bad_pattern_print_nothing_from_rdkit():
    proc = _quiet_run(
        "from rank.generate import IsomerStream, compile_smarts\n"
        "from rank.generate.accept import Acceptor\n"
        "from rank.generate.atoms import AtomState, AtomType\n"
        "from rank.errors import InputError\n"
        "for f in ('C5H5N', 'C2H6O2S', 'C6H6'):\n"
        "    sum(1 for _ in IsomerStream(f, ceiling=0))\n"
        "Acceptor(True)([AtomType(AtomState('C5', 'C', 5, 0, False), 5)], bytes([0, 0]))\n"
        "try:\n"
        "    compile_smarts('C(=O', '--require')\n"
        "except InputError:\n"
        "    pass\n"
    )
    assert proc.returncode == 0, proc.stderr
    assert proc.stderr == ""


def test_importing_the_generator_leaves_rdkit_s_log_to_the_caller():
    proc = _quiet_run("import rank.generate\nfrom rdkit import Chem\nChem.MolFromSmiles('c1cccc1')\n")
    assert "kekulize" in proc.stderr.lower()
