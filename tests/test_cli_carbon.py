"""``identify --carbon`` and ``predict`` with 13C: the 13C part shown beside the 1H part in the terminal,
JSON, CSV and HTML, and bad 13C input refused in one line.

Ethyl acetate: the 1H list is the row of ``benchmarks/known.tsv``; the 13C list (CDCl3, 171.1 C=O,
60.5 OCH2, 21.0 CH3C=O, 14.2 CH3) is the typical literature value, from memory.
"""

from __future__ import annotations

import csv
import io
import json

import pytest
from clitools import one_line_error, run_cli

ETHYL_ACETATE_H = "4.12 (q, J = 7.1 Hz, 2H), 2.05 (s, 3H), 1.26 (t, J = 7.1 Hz, 3H)"
ETHYL_ACETATE_C = "13C NMR (101 MHz, CDCl3) δ 171.1 (C), 77.16, 60.5 (CH2), 21.0 (CH3), 14.2 (CH3)"
BASE = ["identify", "--formula", "C4H8O2", "--peaks", ETHYL_ACETATE_H, "--carbon", ETHYL_ACETATE_C, "--top", "3"]


def test_json_carries_the_carbon_lines_parts_and_assignment(capsys):
    code, out, err = run_cli([*BASE, "--json", "-"], capsys)
    assert code == 0, err
    doc = json.loads(out)
    assert [p["shift"] for p in doc["carbon_peaks_used"]] == [171.1, 60.5, 21.0, 14.2]
    assert [p["type"] for p in doc["carbon_peaks_used"]] == ["C", "CH2", "CH3", "CH3"]
    assert [d["reason"] for d in doc["carbon_peaks_dropped"]] == ["residual CDCl3"]
    assert doc["peaks_dropped"] == []  # the 13C solvent line is not listed with the 1H peaks
    best = doc["candidates"][0]
    assert best["smiles"] == "CCOC(C)=O"
    # the misfit is the 1H part plus the weighted 13C part, each shown
    assert best["misfit"] == pytest.approx(best["proton_misfit"] + best["carbon_misfit"], abs=2e-6)
    assert best["carbon_misfit"] == pytest.approx(best["carbon_weight"] * sum(best["carbon_parts"].values()),
                                                  abs=1e-5)
    lines = {row["observed_shift"]: row for row in best["carbon_assignment"]}
    assert sorted(lines) == [14.2, 21.0, 60.5, 171.1]
    assert lines[60.5]["type"] == "CH2" and lines[171.1]["type"] == "C"
    assert all(row["explanation"].endswith(f"= {row['predicted_shift']:.2f}") for row in lines.values())


def test_json_without_a_carbon_list_has_empty_carbon_keys(capsys):
    code, out, err = run_cli(["identify", "--formula", "C4H8O2", "--peaks", ETHYL_ACETATE_H, "--json", "-"], capsys)
    assert code == 0, err
    doc = json.loads(out)
    assert doc["carbon_peaks_used"] == [] and doc["carbon_peaks_dropped"] == []
    assert doc["candidates"][0]["carbon_misfit"] is None and doc["candidates"][0]["carbon_assignment"] == []


def test_terminal_and_csv_show_the_carbon_part(capsys):
    code, out, err = run_cli(BASE, capsys)
    assert code == 0, err
    assert "13C lines used: 171.1 (C); 60.5 (CH2); 21.0 (CH3); 14.2 (CH3)" in out
    assert "dropped 13C: 77.2 (residual CDCl3)" in out
    assert "13C assignment:" in out
    assert any(line.startswith("limit: 13C: CH2: exactly 1") for line in out.splitlines())
    code, out, err = run_cli([*BASE, "--csv", "-"], capsys)
    assert code == 0, err
    rows = list(csv.DictReader(io.StringIO(out)))
    assert rows[0]["smiles"] == "CCOC(C)=O" and float(rows[0]["carbon"]) >= 0


def test_report_draws_the_carbon_stick_spectrum(capsys):
    code, out, err = run_cli([*BASE, "--report", "-"], capsys)
    assert code == 0, err
    assert 'aria-label="13C stick spectrum"' in out
    assert "δC / ppm" in out


@pytest.mark.parametrize(("carbon", "says"), [
    ("171.1, 60.5, 21.0, 14.2, 30.1", "holds 5 carbons but C4H8O2 has 4"),
    ("1H NMR (400 MHz, CDCl3) δ 4.12 (q, 2H)", "1H"),
    ("171.1 (C), 260.5 (CH2)", "260.5"),
])
def test_bad_carbon_lists_are_refused_in_one_line(capsys, carbon, says):
    code, out, err = run_cli(["identify", "--formula", "C4H8O2", "--peaks", ETHYL_ACETATE_H, "--carbon", carbon],
                             capsys)
    assert says in one_line_error(code, out, err)


def test_predict_prints_and_writes_the_carbon_signals(capsys):
    code, out, err = run_cli(["predict", "CCOC(C)=O"], capsys)
    assert code == 0, err
    assert "δC/ppm" in out
    code, out, err = run_cli(["predict", "CCOC(C)=O", "--json", "-"], capsys)
    doc = json.loads(out)
    assert [s["dept"] for s in doc["carbons"]] == ["C", "CH2", "CH3", "CH3"]
    # ethyl acetate in CDCl3: 171.1, 60.5, 21.0, 14.2 (from memory); within the predictor's sigma of each
    for s, observed in zip(doc["carbons"], (171.1, 60.5, 21.0, 14.2)):
        assert abs(s["shift"] - observed) <= 2 * s["sigma"]


def test_results_with_a_carbon_list_do_not_depend_on_the_number_of_workers():
    from rank.shortlist import Identifier

    # methyl butanoate in CDCl3: 1H 3.67 (s, 3H), 2.30 (t, 2H), 1.66 (sext, 2H), 0.95 (t, 3H); 13C 174.2, 51.5,
    # 36.0, 18.5, 13.7 (typical literature values, from memory)
    protons = "3.67 (s, 3H), 2.30 (t, J = 7.4 Hz, 2H), 1.66 (sext, J = 7.4 Hz, 2H), 0.95 (t, J = 7.4 Hz, 3H)"
    carbons = "174.2, 51.5, 36.0, 18.5, 13.7"
    runs = [Identifier(top=10, workers=n, use_hints=False).identify("C5H10O2", protons, carbon=carbons)
            for n in (1, 2)]
    assert [(c.smiles, c.misfit) for c in runs[0].candidates] == [(c.smiles, c.misfit) for c in runs[1].candidates]
    assert runs[0].explored == runs[1].explored
    assert runs[0].candidates[0].smiles == "CCCC(=O)OC"
