"""Careless input is refused before any long computation, on one line of stderr with exit status 2,
without a traceback and without writing anything; Ctrl-C stops every process at once with status 130.

The command-line contract is the working guide's (``../shared/GUIDE.md`` section 3).  Conventions
that are not peakrank's own are named beside their checks: ``-`` for standard output and refusing to
mix two outputs there, "did you mean" for a misspelled option, ``NAME --version`` printing the
installed version and exit status 130 after SIGINT (128 + 2) are common practice of command-line
tools.  Peak lists are rows of ``benchmarks/known.tsv`` (Gottlieb et al., J. Org. Chem. 1997, 62,
7512; from memory).
"""

from __future__ import annotations

import io
import json
import os
import signal
import subprocess
import sys
import time
from importlib.metadata import version
from pathlib import Path

import pandas as pd
import pytest
from clitools import one_line_error, run_cli, run_module

import rank.bench
import rank.demo
import rank.shortlist
from rank.errors import InputError
from rank.generate import IsomerStream, SpaceTooLarge, atom_states
from rank.predict import parse_smiles
from rank.shortlist import Identifier, available_cores, read_candidates
from rank.standardize import SUPPORTED, Unsupported, standardize

ROOT = Path(__file__).resolve().parent.parent
ETHYL_ACETATE_PEAKS = "4.12 (q, J = 7.1 Hz, 2H), 2.05 (s, 3H), 1.26 (t, J = 7.1 Hz, 3H)"  # known.tsv
IDENTIFY = ["identify", "--formula", "C4H8O2", "--peaks", ETHYL_ACETATE_PEAKS, "--top", "3"]
# 1-phenylethanol-like C8H10O list: without hints the whole default space (about 50,000 isomers) is
# scored, which takes long enough to interrupt
SLOW = ["identify", "--formula", "C8H10O", "--peaks", "7.2 (m, 5H), 3.8 (t, 2H), 2.8 (t, 2H), 1.6 (s, 1H)",
        "--no-hints", "--quiet"]








@pytest.fixture
def no_run(monkeypatch):
    """Fail the test if an identification starts: the check must come first."""
    def refuse(*_args, **_kwargs):
        raise AssertionError("the identification started before the outputs were checked")

    monkeypatch.setattr(rank.shortlist.Identifier, "identify", refuse)


# ------------------------------------------------------------ 1. output paths ----

OUTPUTS = ["--json", "--csv", "--report"]


@pytest.mark.parametrize("option", OUTPUTS)
def test_an_output_path_that_is_a_folder_is_refused_before_the_run(option, tmp_path, capsys, no_run):
    line = one_line_error(*run_cli([*IDENTIFY, option, str(tmp_path)], capsys))
    assert "is a folder" in line and option in line
    assert list(tmp_path.iterdir()) == []


@pytest.mark.parametrize("option", OUTPUTS)
def test_an_output_path_in_a_missing_folder_is_refused_before_the_run(option, tmp_path, capsys, no_run):
    line = one_line_error(*run_cli([*IDENTIFY, option, str(tmp_path / "missing" / "out.txt")], capsys))
    assert "does not exist" in line
    assert list(tmp_path.iterdir()) == []


@pytest.mark.parametrize("option", OUTPUTS)
def test_an_existing_output_file_is_refused_before_the_run_without_force(option, tmp_path, capsys, no_run):
    target = tmp_path / "out.txt"
    target.write_text("keep me\n", encoding="utf-8")
    line = one_line_error(*run_cli([*IDENTIFY, option, str(target)], capsys))
    assert "--force" in line
    assert target.read_text(encoding="utf-8") == "keep me\n"


@pytest.mark.parametrize(("first", "second"), [("--json", "--csv"), ("--csv", "--report"), ("--json", "--report")])
def test_two_outputs_to_standard_output_are_refused(first, second, capsys, no_run):
    # common practice: '-' is standard output, and two documents there would be mixed
    line = one_line_error(*run_cli([*IDENTIFY, first, "-", second, "-"], capsys))
    assert "standard output" in line


def test_two_outputs_naming_the_same_file_are_refused(tmp_path, capsys, no_run):
    same = str(tmp_path / "out.txt")
    line = one_line_error(*run_cli([*IDENTIFY, "--json", same, "--csv", same], capsys))
    assert "--json and --csv" in line
    assert list(tmp_path.iterdir()) == []


def test_csv_to_standard_output_is_the_csv_and_nothing_else(capsys):
    # common practice: '-' is standard output
    code, out, err = run_cli([*IDENTIFY, "--csv", "-"], capsys)
    assert code == 0, err
    frame = pd.read_csv(io.StringIO(out))
    assert list(frame.columns[:3]) == ["rank", "smiles", "inchikey"]
    assert frame["smiles"].iloc[0] == "CCOC(C)=O"
    assert not Path("-").exists()


def test_report_to_standard_output_is_the_html_and_nothing_else(capsys):
    code, out, err = run_cli([*IDENTIFY, "--report", "-"], capsys)
    assert code == 0, err
    assert out.lstrip().lower().startswith("<!doctype html")


def test_a_failed_write_leaves_neither_the_file_nor_a_part_file(tmp_path, capsys, monkeypatch):
    def interrupted(*_args):
        raise KeyboardInterrupt

    monkeypatch.setattr(os, "replace", interrupted)
    code, _, err = run_cli([*IDENTIFY, "--json", str(tmp_path / "short.json")], capsys)
    assert code == 130
    assert err == "peakrank: interrupted\n"
    assert list(tmp_path.iterdir()) == []


def test_outputs_are_written_whole(tmp_path, capsys):
    paths = {option: tmp_path / f"out{option[2:]}" for option in OUTPUTS}
    code, _, err = run_cli([*IDENTIFY, *(a for o, p in paths.items() for a in (o, str(p)))], capsys)
    assert code == 0, err
    assert json.loads(paths["--json"].read_text(encoding="utf-8"))["candidates"][0]["smiles"] == "CCOC(C)=O"
    assert pd.read_csv(paths["--csv"])["smiles"].iloc[0] == "CCOC(C)=O"
    assert paths["--report"].read_text(encoding="utf-8").rstrip().endswith("</html>")
    assert sorted(p.name for p in tmp_path.iterdir()) == sorted(p.name for p in paths.values())


@pytest.mark.parametrize("case", ["folder", "missing folder", "existing file"])
def test_predict_json_path_is_checked_like_identify(case, tmp_path, capsys):
    existing = tmp_path / "signals.json"
    existing.write_text("keep me\n", encoding="utf-8")
    path = {"folder": tmp_path, "missing folder": tmp_path / "missing" / "s.json", "existing file": existing}[case]
    one_line_error(*run_cli(["predict", "CCO", "--json", str(path)], capsys))
    assert existing.read_text(encoding="utf-8") == "keep me\n"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["signals.json"]


# ------------------------------------------------- 2. salts, elements, radicals ----


def test_supported_elements_are_those_of_the_valence_table():
    assert set(SUPPORTED) == {s.element for s in atom_states()} | {"H"}


def test_predict_takes_the_largest_organic_component_of_a_salt_and_says_so(capsys):
    # sodium acetate: acetate is taken in its neutral form, acetic acid (common practice for
    # additive shift rules written for neutral molecules)
    code, out, err = run_cli(["predict", "CC(=O)[O-].[Na+]", "--json", "-"], capsys)
    assert code == 0, err
    doc = json.loads(out)
    assert doc["smiles"] == "CC(=O)O"
    assert doc["input"] == "CC(=O)[O-].[Na+]"
    assert {s["family"] for s in doc["signals"]} == {"CH3", "COOH"}
    lines = err.splitlines()
    assert len(lines) == 1 and "salt or mixture" in lines[0] and "'CC(=O)O'" in lines[0]


def test_predict_of_a_mixture_indexes_atoms_in_the_printed_smiles():
    notes: list[str] = []
    mol = parse_smiles("O.CCOC(C)=O", notes)
    assert [a.GetSymbol() for a in mol.GetAtoms()] == ["C", "C", "O", "C", "C", "O"]
    assert notes and "largest organic component 'CCOC(C)=O'" in notes[0]


@pytest.mark.parametrize(("smiles", "element"), [("C[Si](C)(C)C", "Si"), ("OB(O)c1ccccc1", "B"),
                                                 ("c1cc[se]c1", "Se"), ("C[Hg]Cl", "Hg")])
def test_predict_refuses_other_elements_naming_the_supported_ones(smiles, element, capsys):
    line = one_line_error(*run_cli(["predict", smiles], capsys))
    assert f"contains {element}" in line
    assert "C, H, N, O, S, P, F, Cl, Br and I" in line


def test_predict_refuses_a_radical_and_suggests_the_closed_shell_molecule(capsys):
    # [CH3] is the methyl radical in SMILES (OpenSMILES: bracket atoms carry their H count)
    line = one_line_error(*run_cli(["predict", "C[CH2]"], capsys))
    assert "radical" in line and "'CC'" in line


def test_predict_refuses_a_salt_without_carbon(capsys):
    line = one_line_error(*run_cli(["predict", "[Na+].[Cl-]"], capsys))
    assert "no organic component" in line


def test_predict_keeps_charge_separated_groups_as_drawn(capsys):
    # nitrobenzene as chemists draw it: N+ and O- balance inside the molecule
    code, out, err = run_cli(["predict", "O=[N+]([O-])c1ccccc1"], capsys)
    assert code == 0 and err == ""
    assert out.startswith("O=[N+]([O-])c1ccccc1")


def test_predict_takes_an_onium_ion_as_written_and_says_so(capsys):
    # trimethylsulfonium has no H that could cancel its charge
    code, out, err = run_cli(["predict", "C[S+](C)C"], capsys)
    assert code == 0
    assert "charge +1" in err and len(err.splitlines()) == 1
    assert out.startswith("C[S+](C)C")


def test_standardize_names_the_reason_of_a_refusal():
    from rdkit import Chem

    with pytest.raises(Unsupported) as info:
        standardize(Chem.MolFromSmiles("C[Si](C)(C)C"), "TMS")
    assert info.value.kind == "elements" and info.value.elements == ("Si",)


SUSPECT_LINES = (
    "CCOC(C)=O ethyl acetate",
    "CCC(=O)OC methyl propanoate",
    "CCCC(=O)[O-].[Na+] sodium butanoate",     # salt: butanoic acid, C4H8O2
    "CCCC(=O)O.O butanoic acid with water",    # mixture
    "C[Si](C)(C)OC=O trimethylsilyl formate",  # Si
    "CC[Se]C=O",                               # Se
    "[CH2]COC(C)=O a radical",
    "not_a_smiles",
)


def _suspects_file(tmp_path: Path) -> Path:
    path = tmp_path / "suspects.smi"
    path.write_text("\n".join(SUSPECT_LINES) + "\n", encoding="utf-8")
    return path


def test_candidates_file_counts_salts_other_elements_and_radicals(tmp_path):
    listed = read_candidates(str(_suspects_file(tmp_path)))
    assert listed.unreadable == 1
    assert listed.mixtures == 2 and listed.neutralised == 1
    assert listed.unsupported == {"elements": 2, "radical": 1}
    assert listed.elements == ("Se", "Si")
    result = Identifier(top=5).identify("C4H8O2", ETHYL_ACETATE_PEAKS, str(_suspects_file(tmp_path)))
    assert {c.smiles for c in result.candidates} == {"CCOC(C)=O", "CCC(=O)OC", "CCCC(=O)O"}
    assert result.candidates[0].smiles == "CCOC(C)=O"
    assert (result.mixtures, result.neutralised, result.unsupported) == (2, 1, {"elements": 2, "radical": 1})


def test_candidates_file_changes_are_reported_once_on_stderr(tmp_path, capsys):
    code, out, err = run_cli([*IDENTIFY, "--candidates", str(_suspects_file(tmp_path)), "--json", "-"], capsys)
    assert code == 0, err
    json.loads(out)
    lines = err.splitlines()
    assert len(lines) == 1, err
    assert "2 salts or mixtures" in lines[0] and "Se, Si" in lines[0] and "1 radical" in lines[0]


# --------------------------------------------------------- 3. spaces too large ----

# the number of constitutional isomers of C40H82 alone is 62,481,801,147,341
# (OEIS A000602, alkane isomer counts); C30H50N2O5's space is larger still
HOPELESS = {"C40H82": "1.25 (m, 76H), 0.88 (t, J = 7.0 Hz, 6H)",
            "C30H50N2O5": "7.2 (m, 2H), 3.5 (m, 10H), 1.25 (m, 32H), 0.88 (t, J = 7.0 Hz, 6H)"}


@pytest.mark.parametrize("formula", HOPELESS)
def test_a_hopeless_space_is_refused_within_seconds_pointing_to_a_list_of_suspects(formula):
    start = time.monotonic()
    proc = run_module("isomers", formula, timeout=60)
    elapsed = time.monotonic() - start
    line = one_line_error(proc.returncode, proc.stdout, proc.stderr)
    assert "structures to build" in line and "--candidates" in line
    assert "pass --ceiling 0" not in line
    assert elapsed < 10


@pytest.mark.parametrize("formula", HOPELESS)
def test_identify_refuses_a_hopeless_space_within_seconds_pointing_to_candidates(formula, capsys):
    start = time.monotonic()
    line = one_line_error(*run_cli(["identify", "--formula", formula, "--peaks", HOPELESS[formula]], capsys))
    assert time.monotonic() - start < 10
    assert "--candidates FILE" in line and "pass --ceiling 0" not in line


def test_a_space_just_above_the_ceiling_still_offers_to_lift_it(capsys):
    line = one_line_error(*run_cli(["isomers", "C12H20O2"], capsys))
    assert "above the limit of 2,000,000" in line and "--ceiling 0" in line


def test_ceiling_0_still_starts_a_large_run(capsys):
    code, out, err = run_cli(["isomers", "C12H20O2", "--ceiling", "0", "--budget", "0.5"], capsys)
    assert code == 0
    assert out.splitlines()
    assert "incomplete" in err


@pytest.mark.parametrize("formula", ["C6H12O", "C7H8O", "C5H9NO"])
def test_the_early_stop_refuses_exactly_when_the_whole_estimate_passes_the_ceiling(formula):
    whole = IsomerStream(formula).estimate()
    IsomerStream(formula, ceiling=int(whole) + 1).check_ceiling()
    with pytest.raises(SpaceTooLarge) as info:
        IsomerStream(formula, ceiling=int(whole) - 1).check_ceiling()
    assert info.value.estimate == pytest.approx(whole, rel=1e-9) and not info.value.at_least


# ------------------------------------------------------ 4. nothing left to rank ----


def test_a_required_group_no_isomer_has_exits_2_naming_it(capsys):
    # C4H10O is saturated: no isomer has a C=O group (DBE 0)
    line = one_line_error(*run_cli(["identify", "--formula", "C4H10O", "--peaks", "3.4 (q, 4H), 1.2 (t, 6H)",
                                  "--require", "C=O", "--no-hints"], capsys))
    assert "no structure of C4H10O matches --require 'C=O'" in line


def test_a_forbidden_atom_every_isomer_has_exits_2_naming_it(capsys):
    line = one_line_error(*run_cli(["identify", "--formula", "C4H10O", "--peaks", "3.4 (q, 4H), 1.2 (t, 6H)",
                                  "--forbid", "[#8]", "--no-hints"], capsys))
    assert "every structure of C4H10O matches --forbid '[#8]'" in line


def test_a_pattern_no_atom_of_the_formula_can_match_exits_2_naming_it(capsys):
    line = one_line_error(*run_cli(["identify", "--formula", "C4H10O", "--peaks", "3.4 (q, 4H), 1.2 (t, 6H)",
                                  "--require", "[#7]", "--no-hints"], capsys))
    assert "--require '[#7]'" in line


def test_a_candidates_file_without_the_formula_exits_2_saying_so(tmp_path, capsys):
    path = tmp_path / "other.smi"
    path.write_text("CCO\nCC(C)=O\n", encoding="utf-8")
    line = one_line_error(*run_cli([*IDENTIFY, "--candidates", str(path)], capsys))
    assert "no structure in the candidates file has formula C4H8O2" in line


def test_the_api_raises_when_nothing_is_left():
    with pytest.raises(InputError, match="C=O"):
        Identifier(use_hints=False, require=["C=O"]).identify("C4H10O", "3.4 (q, 4H), 1.2 (t, 6H)")


# ------------------------------------------------------ 5. misspellings, version ----


@pytest.mark.parametrize(("argv", "meant"), [
    (["identify", "--formla", "C4H8O2", "--peaks", ETHYL_ACETATE_PEAKS], "--formula"),
    ([*IDENTIFY, "--wrokers", "2"], "--workers"),
    (["isomers", "C4H8O", "--cout"], "--count"),
    (["isomerz", "C4H8O"], "isomers"),
    (["identfy", "--formula", "C4H8O2"], "identify"),
])
def test_a_misspelled_option_or_command_suggests_the_closest(argv, meant, capsys):
    # common practice: "did you mean ...?"
    line = one_line_error(*run_cli(argv, capsys))
    assert f"did you mean {meant}?" in line


def test_version_prints_the_installed_version():
    # common practice: NAME --version prints "NAME X.Y.Z" and exits 0
    proc = run_module("--version")
    assert proc.returncode == 0
    assert proc.stdout == f"peakrank {version('peakrank')}\n"


# -------------------------------------------------------------------- 6. Ctrl-C ----


def _children(pid: int) -> list[int]:
    kids = []
    for entry in Path("/proc").iterdir():
        if entry.name.isdigit():
            try:
                stat = (entry / "stat").read_text()
            except OSError:
                continue
            if int(stat.rsplit(")", 1)[1].split()[1]) == pid:
                kids.append(int(entry.name))
    return kids


@pytest.mark.skipif(not Path("/proc/self/stat").exists(), reason="reads worker processes from /proc")
def test_ctrl_c_with_workers_stops_at_once_with_130_and_writes_nothing(tmp_path):
    # a terminal's Ctrl-C sends SIGINT to the whole foreground process group; 130 = 128 + SIGINT
    # (common practice)
    proc = subprocess.Popen([sys.executable, "-m", "rank", *SLOW, "--workers", "2", "--json", "out.json",
                             "--csv", "out.csv", "--report", "out.html"],
                            cwd=tmp_path, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True,
                            start_new_session=True)
    time.sleep(3)
    workers = _children(proc.pid)
    assert proc.poll() is None, proc.communicate()
    start = time.monotonic()
    os.killpg(proc.pid, signal.SIGINT)
    out, err = proc.communicate(timeout=30)
    assert time.monotonic() - start < 5
    assert proc.returncode == 130
    assert err == "peakrank: interrupted\n"
    assert out == ""
    assert list(tmp_path.iterdir()) == []
    assert workers
    for pid in workers:
        assert not Path(f"/proc/{pid}").exists() or "Z" in Path(f"/proc/{pid}/stat").read_text().split()[2]


# ------------------------------------------------------------ 7. default workers ----


def test_default_workers_are_the_cores_this_process_may_use(capsys, monkeypatch):
    expected = len(os.sched_getaffinity(0)) if hasattr(os, "sched_getaffinity") else os.cpu_count()
    assert available_cores() == expected
    seen = {}

    def identify(self, *_args, **_kwargs):
        seen["identify"] = self.workers
        raise InputError("stop here")

    def run_case(_case, **options):
        seen["bench"] = options["workers"]
        raise InputError("stop here")

    def run_demo(_out, workers, echo):
        seen["demo"] = workers

    monkeypatch.setattr(rank.shortlist.Identifier, "identify", identify)
    monkeypatch.setattr(rank.bench, "run_case", run_case)
    monkeypatch.setattr(rank.demo, "run_demo", run_demo)
    run_cli(IDENTIFY, capsys)
    run_cli(["bench", str(ROOT / "benchmarks" / "known.tsv"), "--only", "ethyl_acetate"], capsys)
    run_cli(["demo", "--out", "unused"], capsys)
    assert seen == {"identify": expected, "bench": expected, "demo": expected}
