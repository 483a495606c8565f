"""The ``identify`` and ``bench`` commands: terminal table, JSON and CSV in the form of the working
guide's command-line contract, refusing to overwrite files, and bad input.

Run in-process through ``rank.cli.main`` and as ``python -m rank`` in a subprocess.  Peak lists are
rows of ``benchmarks/known.tsv`` (typical CDCl3 literature values from the solvent-impurity tables,
H. E. Gottlieb, V. Kotlyar, A. Nudelman, J. Org. Chem. 1997, 62, 7512, doi:10.1021/jo971176v;
from memory).  InChIKeys are checked against RDKit as the reference library.
"""

from __future__ import annotations

import csv
import json
import re
from pathlib import Path

import pandas as pd
import pytest
from clitools import one_line_error, run_cli, run_module
from rdkit import Chem

from rank.shortlist import Identifier

KNOWN = Path(__file__).resolve().parent.parent / "benchmarks" / "known.tsv"


def _known_rows() -> dict[str, dict[str, str]]:
    lines = [ln for ln in KNOWN.read_text(encoding="utf-8").splitlines() if ln.strip() and not ln.startswith("#")]
    return {r["id"]: r for r in csv.DictReader(lines, delimiter="\t", quoting=csv.QUOTE_NONE)}


ROWS = _known_rows()
ETHYL_ACETATE = ROWS["ethyl_acetate"]  # 4.12 (q, 2H), 2.05 (s, 3H), 1.26 (t, 3H)
BASE = ["identify", "--formula", ETHYL_ACETATE["formula"], "--peaks", ETHYL_ACETATE["peaks"], "--top", "5"]








# -------------------------------------------------------------- terminal ----


def test_terminal_table_lists_rank_smiles_misfit_and_confidence(capsys):
    code, out, err = run_cli(BASE, capsys)
    assert code == 0, err
    assert "Traceback" not in err
    expected = Identifier(top=5).identify(ETHYL_ACETATE["formula"], ETHYL_ACETATE["peaks"])
    lines = out.splitlines()
    header = next(i for i, ln in enumerate(lines) if ln.split()[:3] == ["rank", "SMILES", "misfit"])
    assert "conf" in lines[header]
    rows = [ln.split() for ln in lines[header + 1: header + 1 + len(expected.candidates)]]
    for cells, c in zip(rows, expected.candidates):
        assert cells[0].rstrip("=") == str(c.rank)
        assert cells[1] == c.smiles
        assert float(cells[2]) == pytest.approx(c.misfit, abs=5e-4)
        assert float(cells[3].rstrip("%")) == pytest.approx(100 * c.confidence, abs=0.05)
    assert rows[0][1] == "CCOC(C)=O"


def test_terminal_output_carries_the_caution(capsys):
    _, out, _ = run_cli(BASE, capsys)
    assert "hypothesis, not an identification" in out
    assert "reference standard" in out
    assert "hazardous" in out


def test_terminal_output_explains_the_best_candidate_signal_by_signal(capsys):
    _, out, _ = run_cli(BASE, capsys)
    best = Identifier(top=5).identify(ETHYL_ACETATE["formula"], ETHYL_ACETATE["peaks"]).candidates[0]
    assert f"assignment of rank 1, {best.smiles}" in out
    # each predicted signal of the best candidate is shown with the increment arithmetic of its shift
    for signal in best.scored.signals:
        assert signal.explanation in out


def test_python_m_rank_prints_the_same_table(capsys):
    _, inproc, _ = run_cli(BASE, capsys)
    proc = run_module(*BASE)
    assert proc.returncode == 0, proc.stderr
    assert "Traceback" not in proc.stderr
    assert proc.stdout == inproc


# ------------------------------------------------------------------ JSON ----


def _check_json_document(doc: dict, formula: str) -> None:
    # keys of the identify contract in ../shared/GUIDE.md
    assert doc["formula"] == formula
    assert isinstance(doc["explored"], int) and doc["explored"] >= len(doc["candidates"]) > 0
    assert doc["complete"] is True
    # beyond the contract: the generated space's estimate and the share searched (None for a candidates file)
    assert doc["coverage"] in (1.0, None) and (doc["estimated"] is None or doc["estimated"] > 0)
    misfits = [c["misfit"] for c in doc["candidates"]]
    assert misfits == sorted(misfits)
    for c in doc["candidates"]:
        assert {"rank", "smiles", "inchikey", "misfit", "confidence", "assignment"} <= set(c)
        assert isinstance(c["rank"], int) and c["rank"] >= 1
        mol = Chem.MolFromSmiles(c["smiles"])
        assert mol is not None
        assert c["inchikey"] == Chem.MolToInchiKey(mol)
        assert 0.0 <= c["confidence"] <= 1.0
        assert isinstance(c["assignment"], list) and c["assignment"]
    ranks = [c["rank"] for c in doc["candidates"]]
    assert ranks == [1 + sum(1 for m in misfits if m < x) for x in misfits]


def test_json_to_stdout_is_valid_json_and_nothing_else():
    proc = run_module(*BASE, "--json", "-")
    assert proc.returncode == 0, proc.stderr
    assert proc.stderr == ""
    doc = json.loads(proc.stdout)
    _check_json_document(doc, "C4H8O2")
    assert doc["candidates"][0]["smiles"] == "CCOC(C)=O"


def test_json_to_stdout_in_process_matches_the_api(capsys):
    code, out, err = run_cli([*BASE, "--json", "-"], capsys)
    assert code == 0, err
    doc = json.loads(out)
    expected = Identifier(top=5).identify(ETHYL_ACETATE["formula"], ETHYL_ACETATE["peaks"])
    assert [(c["smiles"], c["rank"]) for c in doc["candidates"]] == [(c.smiles, c.rank) for c in expected.candidates]
    assert [c["misfit"] for c in doc["candidates"]] == pytest.approx([c.misfit for c in expected.candidates])
    assert doc["explored"] == expected.explored


def test_json_file_is_written_and_the_table_still_printed(tmp_path, capsys):
    target = tmp_path / "short.json"
    code, out, err = run_cli([*BASE, "--json", str(target)], capsys)
    assert code == 0, err
    _check_json_document(json.loads(target.read_text(encoding="utf-8")), "C4H8O2")
    assert "CCOC(C)=O" in out and "misfit" in out


# ------------------------------------------------------------------- CSV ----


def test_csv_file_has_one_row_per_candidate(tmp_path, capsys):
    target = tmp_path / "short.csv"
    code, _, err = run_cli([*BASE, "--csv", str(target)], capsys)
    assert code == 0, err
    frame = pd.read_csv(target)
    assert {"rank", "smiles", "inchikey", "misfit", "confidence"} <= set(frame.columns)
    code, out, _ = run_cli([*BASE, "--json", "-"], capsys)
    doc = json.loads(out)
    assert list(frame["smiles"]) == [c["smiles"] for c in doc["candidates"]]
    assert list(frame["rank"]) == [c["rank"] for c in doc["candidates"]]
    assert list(frame["misfit"]) == pytest.approx([c["misfit"] for c in doc["candidates"]], abs=1e-6)
    assert list(frame["inchikey"]) == [c["inchikey"] for c in doc["candidates"]]


# ------------------------------------------------------- existing output ----


@pytest.mark.parametrize("option", ["--json", "--csv"])
def test_existing_output_file_is_not_replaced_without_force(option, tmp_path, capsys):
    target = tmp_path / ("out.json" if option == "--json" else "out.csv")
    target.write_text("keep me\n", encoding="utf-8")
    code, out, err = run_cli([*BASE, option, str(target)], capsys)
    one_line_error(code, out, err)
    assert "--force" in err
    assert target.read_text(encoding="utf-8") == "keep me\n"


@pytest.mark.parametrize("option", ["--json", "--csv"])
def test_force_replaces_an_existing_output_file(option, tmp_path, capsys):
    target = tmp_path / ("out.json" if option == "--json" else "out.csv")
    target.write_text("keep me\n", encoding="utf-8")
    code, _, err = run_cli([*BASE, option, str(target), "--force"], capsys)
    assert code == 0, err
    text = target.read_text(encoding="utf-8")
    assert text != "keep me\n"
    if option == "--json":
        _check_json_document(json.loads(text), "C4H8O2")
    else:
        assert pd.read_csv(target)["smiles"].iloc[0] == "CCOC(C)=O"


def test_existing_output_file_refused_from_python_m_rank(tmp_path):
    target = tmp_path / "out.json"
    target.write_text("keep me\n", encoding="utf-8")
    proc = run_module(*BASE, "--json", str(target))
    one_line_error(proc.returncode, proc.stdout, proc.stderr)
    assert target.read_text(encoding="utf-8") == "keep me\n"


# ------------------------------------------------------------- bad input ----

GOOD_PEAKS = ETHYL_ACETATE["peaks"]


def _bad_files(tmp: Path) -> dict[str, Path]:
    files = {
        "bad.csv": b"\xff\xfe\x00\x81 not text\n",
        "bad.txt": b"\xff\xfe\x00\x81 not text\n",
        "bad.json": b'{"peaks": [1, 2',
    }
    for name, data in files.items():
        (tmp / name).write_bytes(data)
    return {name: tmp / name for name in files}


BAD_INPUT = {
    "unclosed parenthesis": ["--formula", "C4H8O2", "--peaks", "4.12 (q, J = 7.1 Hz, 2H), 2.05 (s, 3H"],
    "word among peaks": ["--formula", "C4H8O2", "--peaks", "4.12 (q, 2H), banana, 1.26 (t, 3H)"],
    "unknown multiplicity": ["--formula", "C4H8O2", "--peaks", "4.12 (x, 2H), 2.05 (s, 3H), 1.26 (t, 3H)"],
    # four equal integrals cannot be whole numbers summing to benzene's 6 H
    "integrals cannot fit": ["--formula", "C6H6", "--peaks", "7.3 (m, 1H), 7.2 (m, 1H), 7.1 (m, 1H), 7.0 (m, 1H)"],
    "more peaks than H": ["--formula", "CH2Cl2", "--peaks", "5.3 (s, 1H), 5.2 (s, 1H), 5.1 (s, 1H)"],
    "shift above 16": ["--formula", "C4H8O2", "--peaks", "17.2 (q, 2H), 2.05 (s, 3H), 1.26 (t, 3H)"],
    "shift below -1": ["--formula", "C4H8O2", "--peaks", "4.12 (q, 2H), 2.05 (s, 3H), -1.5 (t, 3H)"],
    "zero H": ["--formula", "C4H8O2", "--peaks", "4.12 (q, 0H), 2.05 (s, 3H), 1.26 (t, 3H)"],
    "negative H": ["--formula", "C4H8O2", "--peaks", "4.12 (q, -2H), 2.05 (s, 3H), 1.26 (t, 3H)"],
    "empty list": ["--formula", "C4H8O2", "--peaks", ""],
    "header only": ["--formula", "C4H8O2", "--peaks", "1H NMR (400 MHz, CDCl3) δ"],
    "missing peak file": ["--formula", "C4H8O2", "--peaks", "{tmp}/missing.csv"],
    "csv not text": ["--formula", "C4H8O2", "--peaks", "{tmp}/bad.csv"],
    "txt not text": ["--formula", "C4H8O2", "--peaks", "{tmp}/bad.txt"],
    "json cut short": ["--formula", "C4H8O2", "--peaks", "{tmp}/bad.json"],
    "invalid require SMARTS": ["--formula", "C4H8O2", "--peaks", GOOD_PEAKS, "--require", "[C"],
    "invalid forbid SMARTS": ["--formula", "C4H8O2", "--peaks", GOOD_PEAKS, "--forbid", "C(("],
    "unknown solvent": ["--formula", "C4H8O2", "--peaks", GOOD_PEAKS, "--solvent", "CCl4"],
    "top 0": ["--formula", "C4H8O2", "--peaks", GOOD_PEAKS, "--top", "0"],
    "top negative": ["--formula", "C4H8O2", "--peaks", GOOD_PEAKS, "--top", "-3"],
    "missing candidates file": ["--formula", "C4H8O2", "--peaks", GOOD_PEAKS, "--candidates", "{tmp}/none.smi"],
    "unknown element": ["--formula", "C4H8Q2", "--peaks", GOOD_PEAKS],
    "workers 0": ["--formula", "C4H8O2", "--peaks", GOOD_PEAKS, "--workers", "0"],
}


def _argv(case: str, tmp: Path) -> list[str]:
    _bad_files(tmp)
    return ["identify", *(a.replace("{tmp}", str(tmp)) for a in BAD_INPUT[case])]


@pytest.mark.parametrize("case", sorted(BAD_INPUT))
def test_bad_input_gives_one_line_and_exit_2(case, tmp_path, capsys):
    code, out, err = run_cli(_argv(case, tmp_path), capsys)
    one_line_error(code, out, err)


@pytest.mark.parametrize("case", ["unclosed parenthesis", "integrals cannot fit", "txt not text",
                                  "invalid require SMARTS", "top 0", "missing candidates file"])
def test_bad_input_from_python_m_rank_gives_one_line_and_exit_2(case, tmp_path):
    proc = run_module(*_argv(case, tmp_path))
    one_line_error(proc.returncode, proc.stdout, proc.stderr)


# ---------------------------------------------------------------- bench ----


def _known_answer_file(tmp: Path, ids: list[str]) -> Path:
    lines = KNOWN.read_text(encoding="utf-8").splitlines()
    header = next(ln for ln in lines if ln.startswith("id\t"))
    rows = [ln for ln in lines if ln.split("\t", 1)[0] in ids]
    path = tmp / "known.tsv"
    path.write_text("# three rows of benchmarks/known.tsv\n" + "\n".join([header, *rows]) + "\n", encoding="utf-8")
    return path


BENCH_IDS = ["ethyl_acetate", "butanone", "o_xylene"]


def _check_bench_output(out: str) -> None:
    # per-compound lines: id, rank of the truth, candidates scored, seconds, name
    table = out.split("\n\n", 1)[0].splitlines()
    assert table[0].split()[:2] == ["id", "rank"]
    ranks = {}
    for ln in table[1:]:
        cells = ln.split()
        ranks[cells[0]] = None if cells[1] == "-" else int(cells[1])
    assert set(ranks) == set(BENCH_IDS)
    m = re.search(r"cases (\d+): top-1 ([\d.]+)%, top-3 ([\d.]+)%, top-10 ([\d.]+)%, MRR ([\d.]+)", out)
    assert m, out
    values = [r for r in ranks.values()]

    def within(k: int) -> float:
        return 100 * sum(1 for r in values if r is not None and r <= k) / len(values)

    assert int(m.group(1)) == 3
    assert float(m.group(2)) == pytest.approx(within(1), abs=0.05)
    assert float(m.group(3)) == pytest.approx(within(3), abs=0.05)
    assert float(m.group(4)) == pytest.approx(within(10), abs=0.05)
    assert float(m.group(5)) == pytest.approx(sum(1 / r for r in values if r) / 3, abs=5e-4)
    assert re.search(r"time per compound median [\d.]+ s, max [\d.]+ s", out)


def test_bench_prints_top_k_and_mrr(tmp_path, capsys):
    path = _known_answer_file(tmp_path, BENCH_IDS)
    code, out, err = run_cli(["bench", str(path)], capsys)
    assert code == 0, err
    _check_bench_output(out)


def test_bench_from_python_m_rank(tmp_path):
    path = _known_answer_file(tmp_path, BENCH_IDS)
    proc = run_module("bench", str(path))
    assert proc.returncode == 0, proc.stderr
    _check_bench_output(proc.stdout)


@pytest.mark.parametrize("content", [
    "id\tname\tformula\nacetone\tacetone\tC3H6O\n",                                      # columns missing
    ("id\tname\tformula\tsmiles\tsolvent\tpeaks\tsource\n"
     "acetone\tacetone\tC3H6O\tC(C(\tCDCl3\t2.17 (s, 6H)\tGottlieb et al. 1997\n"),    # SMILES unreadable
    "",                                                                                   # empty file
], ids=["missing columns", "bad smiles", "empty"])
def test_malformed_bench_file_exits_2(content, tmp_path, capsys):
    path = tmp_path / "bad.tsv"
    path.write_text(content, encoding="utf-8")
    code, out, err = run_cli(["bench", str(path)], capsys)
    one_line_error(code, out, err)


def test_missing_bench_file_exits_2(tmp_path, capsys):
    code, out, err = run_cli(["bench", str(tmp_path / "none.tsv")], capsys)
    one_line_error(code, out, err)


def test_peaks_prints_a_file_in_the_style_peaks_accepts_and_it_reads_back(tmp_path, capsys):
    # ethyl acetate (Gottlieb et al. 1997, from memory) as a CSV file
    from rank.spectra import parse_peak_text, read_peaks

    path = tmp_path / "ea.csv"
    path.write_text("shift,n_h,multiplicity,j,label\n4.12,2,q,7.1,OCH2\n2.05,3,s,,\n1.26,3,t,7.1,\n",
                    encoding="utf-8")
    code, out, err = run_cli(["peaks", str(path)], capsys)
    assert (code, err) == (0, "")
    assert out.strip() == "1H NMR δ 4.12 (q, J = 7.1 Hz, 2H, OCH2), 2.05 (s, 3H), 1.26 (t, J = 7.1 Hz, 3H)"
    assert parse_peak_text(out).peaks == read_peaks(str(path)).peaks


def test_peaks_json_to_stdout_holds_only_json(tmp_path, capsys):
    path = tmp_path / "ea.txt"
    path.write_text("1H NMR (400 MHz, CDCl3) δ 4.12 (q, 2H), 2.05 (s, 3H)\n", encoding="utf-8")
    code, out, _ = run_cli(["peaks", str(path), "--json", "-"], capsys)
    doc = json.loads(out)
    assert code == 0 and (doc["solvent"], doc["field_mhz"]) == ("CDCl3", 400.0)
    assert [p["shift"] for p in doc["peaks"]] == [4.12, 2.05]
