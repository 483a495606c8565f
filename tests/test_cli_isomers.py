"""The ``isomers`` command: output format, --require/--forbid, refusals and bad input.

Run both in-process through ``rank.cli.main`` and as ``python -m rank`` in a subprocess.
Expected structures are checked with RDKit as the reference library.
"""

from __future__ import annotations

import time

import pytest
from clitools import run_cli, run_module
from rdkit import Chem, RDLogger
from rdkit.Chem import rdMolDescriptors

RDLogger.DisableLog("rdApp.*")

# the seven C4H10O isomers: four butanols, three ethers (from memory)
C4H10O = {"CCCCO", "CCC(C)O", "CC(C)CO", "CC(C)(C)O", "CCOCC", "CCCOC", "COC(C)C"}
# the C4H8O carbonyl compounds: butanal, 2-methylpropanal, butan-2-one (from memory)
C4H8O_CARBONYLS = {"CCCC=O", "CC(C)C=O", "CCC(C)=O"}


def _canonical(smiles: str) -> str:
    mol = Chem.MolFromSmiles(smiles)
    assert mol is not None, f"RDKit cannot read {smiles!r}"
    return Chem.MolToSmiles(mol)






def _lines(text: str) -> list[str]:
    return [ln for ln in text.splitlines() if ln.strip()]


# ------------------------------------------------------------------- normal output ----


@pytest.mark.parametrize("extra", [["--all"], []], ids=["all", "default"])
def test_count_of_c4h10o_is_seven(extra, capsys):
    code, out, err = run_cli(["isomers", "C4H10O", "--count", *extra], capsys)
    assert code == 0
    assert "Traceback" not in err
    assert out.strip() == "7"  # textbook count (from memory)


def test_count_of_c4h10o_is_seven_from_python_m_rank():
    proc = run_module("isomers", "C4H10O", "--count", "--all")
    assert proc.returncode == 0, proc.stderr
    assert proc.stdout.strip() == "7"


def test_isomers_prints_one_smiles_per_line(capsys):
    code, out, _ = run_cli(["isomers", "C4H10O", "--all"], capsys)
    assert code == 0
    lines = out.splitlines()
    assert len(lines) == 7
    assert all(ln == ln.strip() and " " not in ln for ln in lines)
    for ln in lines:
        assert rdMolDescriptors.CalcMolFormula(Chem.MolFromSmiles(ln)) == "C4H10O"
    assert {_canonical(s) for s in lines} == {_canonical(s) for s in C4H10O}


def test_isomers_from_python_m_rank_match_in_process_run(capsys):
    proc = run_module("isomers", "C3H6O", "--all")
    assert proc.returncode == 0, proc.stderr
    code, out, _ = run_cli(["isomers", "C3H6O", "--all"], capsys)
    assert code == 0
    assert sorted(proc.stdout.splitlines()) == sorted(out.splitlines())
    assert len(proc.stdout.splitlines()) == 9  # textbook count (from memory)


@pytest.mark.parametrize("extra", [["--all"], []], ids=["all", "default"])
def test_require_carbonyl_leaves_butanal_methylpropanal_butanone(extra, capsys):
    code, out, _ = run_cli(["isomers", "C4H8O", "--require", "C=O", *extra], capsys)
    assert code == 0
    got = {_canonical(s) for s in _lines(out)}
    assert got == {_canonical(s) for s in C4H8O_CARBONYLS}
    pattern = Chem.MolFromSmarts("C=O")
    assert all(Chem.MolFromSmiles(s).HasSubstructMatch(pattern) for s in got)


def test_require_is_repeatable_and_all_patterns_must_match(capsys):
    # of the three carbonyls only 2-methylpropanal has no CH2
    code, out, _ = run_cli(["isomers", "C4H8O", "--all", "--require", "C=O", "--require", "[CH2]"], capsys)
    assert code == 0
    assert {_canonical(s) for s in _lines(out)} == {_canonical("CCCC=O"), _canonical("CCC(C)=O")}


def test_forbid_removes_matching_structures_only(capsys):
    _, everything, _ = run_cli(["isomers", "C4H8O", "--all"], capsys)
    code, out, _ = run_cli(["isomers", "C4H8O", "--all", "--forbid", "C=O"], capsys)
    assert code == 0
    every = {_canonical(s) for s in _lines(everything)}
    kept = {_canonical(s) for s in _lines(out)}
    assert every - kept == {_canonical(s) for s in C4H8O_CARBONYLS}


def test_forbid_is_repeatable(capsys):
    # ethers of C4H10O without a CH: diethyl ether and methyl propyl ether
    code, out, _ = run_cli(["isomers", "C4H10O", "--all", "--forbid", "[OX2H1]", "--forbid", "[CH1]"], capsys)
    assert code == 0
    assert {_canonical(s) for s in _lines(out)} == {_canonical("CCOCC"), _canonical("CCCOC")}


def test_count_with_require_counts_the_narrowed_stream(capsys):
    code, out, _ = run_cli(["isomers", "C4H8O", "--all", "--count", "--require", "C=O"], capsys)
    assert code == 0
    assert out.strip() == "3"


# ----------------------------------------------------------------------- bad input ----

BAD = [
    (["isomers", "C4H8X"], "unknown element"),
    (["isomers", "C4H8O2)"], "malformed formula"),
    (["isomers", "C4H7O"], "non-integer DBE"),
    (["isomers", "C2H8"], "negative DBE"),
    (["isomers", "H2"], "no heavy atom"),
    (["isomers", ""], "empty formula"),
    (["isomers", "C4H8O", "--require", "C(=O"], "bad SMARTS in --require"),
    (["isomers", "C4H8O", "--forbid", "[C"], "bad SMARTS in --forbid"),
    (["isomers", "C4H8O", "--bogus"], "unknown option"),
    (["isomers", "C4H8O", "--ceiling", "-1"], "negative ceiling"),
    (["isomers", "C4H8O", "--ceiling", "many"], "ceiling not a number"),
    (["isomers", "C4H8O", "--budget", "0"], "zero budget"),
    (["isomers", "C4H8O", "--budget", "soon"], "budget not a number"),
    (["isomers"], "formula missing"),
    (["isomerz", "C4H8O"], "unknown command"),
]


@pytest.mark.parametrize(("argv", "why"), BAD, ids=[why for _, why in BAD])
def test_bad_input_gives_exit_2_and_one_line_on_stderr(argv, why, capsys):
    code, out, err = run_cli(argv, capsys)
    assert code == 2
    assert out == ""
    assert len(err.splitlines()) == 1, err
    assert err.strip()
    assert "Traceback" not in err


@pytest.mark.parametrize(
    "argv",
    [
        ["isomers", "C4H8Xe"],
        ["isomers", "C4H8O", "--require", "C(=O"],
        ["isomers", "C4H8O", "--ceiling", "-5"],
    ],
    ids=["unknown element", "bad SMARTS", "negative ceiling"],
)
def test_bad_input_from_python_m_rank_gives_exit_2_and_one_line(argv):
    proc = run_module(*argv)
    assert proc.returncode == 2
    assert proc.stdout == ""
    assert len(proc.stderr.splitlines()) == 1, proc.stderr
    assert "Traceback" not in proc.stderr


# ------------------------------------------------------------- refusals and budget ----


@pytest.mark.parametrize("extra", [[], ["--all"]], ids=["default", "all"])
def test_huge_formula_is_refused_quickly_pointing_to_a_list_of_suspects(extra):
    # far beyond any run: lifting the ceiling is no advice, a list of suspects is
    start = time.monotonic()
    proc = run_module("isomers", "C20H20O4", *extra)
    elapsed = time.monotonic() - start
    assert proc.returncode == 2
    assert proc.stdout == ""
    assert len(proc.stderr.splitlines()) == 1, proc.stderr
    assert "--candidates" in proc.stderr
    assert "pass --ceiling 0" not in proc.stderr
    assert "Traceback" not in proc.stderr
    assert elapsed < 15


@pytest.mark.parametrize("extra", [[], ["--all"]], ids=["default", "all"])
def test_formula_just_above_the_ceiling_is_refused_naming_the_ceiling_flag(extra, capsys):
    code, out, err = run_cli(["isomers", "C11H16O", *extra], capsys)
    assert code == 2
    assert out == ""
    assert len(err.splitlines()) == 1, err
    assert "above the limit of 2,000,000" in err
    assert "--ceiling 0" in err


def test_budget_stops_a_long_run_and_says_it_is_incomplete(capsys):
    code, out, err = run_cli(["isomers", "C8H10O", "--all", "--ceiling", "0", "--budget", "0.3"], capsys)
    assert code == 0
    assert "incomplete" in err
    lines = _lines(out)
    assert lines
    for s in lines[:200]:
        assert rdMolDescriptors.CalcMolFormula(Chem.MolFromSmiles(s)) == "C8H10O"


def test_run_within_its_budget_has_no_incomplete_note(capsys):
    code, out, err = run_cli(["isomers", "C4H10O", "--all", "--budget", "60"], capsys)
    assert code == 0
    assert len(_lines(out)) == 7
    assert "incomplete" not in err
