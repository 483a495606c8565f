"""Reading observed peak lists, dropping solvent signals and normalising integrals.

Outside references:
- residual solvent and water shifts: H. E. Gottlieb, V. Kotlyar, A. Nudelman, J. Org. Chem. 1997,
  62, 7512 (doi:10.1021/jo971176v), Table 1 (from memory); they are written out again here, apart
  from ``rules/solvents.tsv``, so that a wrong table value fails;
- compound peak lists: typical CDCl3 literature values as in ``benchmarks/known.tsv``
  (Silverstein-Webster-Kiemle and Pretsch handbooks, the impurity tables above; from memory);
- JCAMP-DX peak tables: R. S. McDonald, P. A. Wilks, Appl. Spectrosc. 1988, 42, 151 and the NMR
  extension, A. N. Davies, P. Lampen, Appl. Spectrosc. 1993, 47, 1093 (labels from memory);
- the inline format is the one journals ask for in experimental sections (common practice).
"""

from __future__ import annotations

import csv
import json
from pathlib import Path

import pytest
from rdkit import Chem
from rdkit.Chem import rdMolDescriptors

from rank.errors import InputError
from rank.formula import parse_formula
from rank.spectra import (
    coupling_groups,
    drop_solvent_signals,
    find_solvent,
    normalise,
    normalise_multiplicity,
    parse_peak_text,
    read_peaks,
    with_counts,
)

KNOWN = Path(__file__).resolve().parent.parent / "benchmarks" / "known.tsv"


def _peaks(text: str):
    return parse_peak_text(text).peaks


def _kept_and_dropped(text: str, solvent: str):
    kept, dropped = drop_solvent_signals(_peaks(text), find_solvent(solvent))
    return [p.shift for p in kept], [(d.peak.shift, d.reason) for d in dropped]


# ------------------------------------------------------------ inline text ----


def test_paper_header_gives_field_and_solvent():
    # ethyl acetate in CDCl3 (Gottlieb et al. 1997, from memory)
    spec = parse_peak_text(
        "1H NMR (400 MHz, CDCl3) δ 4.12 (q, J = 7.1 Hz, 2H), 2.05 (s, 3H), 1.26 (t, J = 7.1 Hz, 3H)"
    )
    assert spec.field_mhz == 400.0
    assert spec.solvent == "CDCl3"
    assert [p.shift for p in spec.peaks] == [4.12, 2.05, 1.26]
    assert [p.integral for p in spec.peaks] == [2.0, 3.0, 3.0]
    assert [p.multiplicity for p in spec.peaks] == ["q", "s", "t"]
    assert [p.j for p in spec.peaks] == [(7.1,), (), (7.1,)]


@pytest.mark.parametrize(
    ("header", "field", "solvent"),
    [
        ("1H NMR (CDCl3, 300 MHz): δ", 300.0, "CDCl3"),
        ("1H NMR (500 MHz, DMSO-d6) δ", 500.0, "DMSO-d6"),
        ("¹H NMR (600 MHz, chloroform-d): δ (ppm)", 600.0, "CDCl3"),
        ("1H-NMR (400MHz, CD3OD):", 400.0, "CD3OD"),
        ("1H NMR (400 MHz, CDCl3, 298 K) δ", 400.0, "CDCl3"),
        ("1H NMR (400 MHz, CDCl3, 25 °C) δ", 400.0, "CDCl3"),
        ("1H NMR (C6D6) δ", None, "C6D6"),
    ],
)
def test_header_variants_give_field_and_solvent(header, field, solvent):
    spec = parse_peak_text(f"{header} 2.05 (s, 3H)")
    assert (spec.field_mhz, spec.solvent) == (field, solvent)
    assert [p.shift for p in spec.peaks] == [2.05]


def test_list_without_header_has_no_field_or_solvent():
    spec = parse_peak_text("2.17 (s, 6H)")  # acetone (Gottlieb et al. 1997, from memory)
    assert (spec.field_mhz, spec.solvent) == (None, None)


def test_delta_prefix_and_final_full_stop_are_ignored():
    spec = parse_peak_text("δ 3.22 (s, 3H), 1.19 (s, 9H).")  # tert-butyl methyl ether (from memory)
    assert [(p.shift, p.integral) for p in spec.peaks] == [(3.22, 3.0), (1.19, 9.0)]


@pytest.mark.parametrize("text", ["7.36-7.27 (m, 5H)", "7.36–7.27 (m, 5H)", "7.27 – 7.36 (m, 5H)", "7.36—7.27 (m, 5H)"])
def test_range_with_hyphen_or_dash_gives_low_high_and_centre(text):
    (p,) = _peaks(text)
    assert (p.low, p.high) == (7.27, 7.36)
    assert p.shift == pytest.approx(7.315)
    assert (p.integral, p.multiplicity) == (5.0, "m")


def test_semicolons_separate_peaks_like_commas():
    peaks = _peaks("4.12 (q, J = 7.1 Hz, 2H); 2.05 (s, 3H); 1.26 (t, J = 7.1 Hz, 3H)")
    assert [p.shift for p in peaks] == [4.12, 2.05, 1.26]


def test_h_count_and_multiplicity_in_either_order():
    a, b = _peaks("4.12 (2H, q, J = 7.1 Hz), 2.05 (3H, s)")
    assert (a.integral, a.multiplicity, a.j) == (2.0, "q", (7.1,))
    assert (b.integral, b.multiplicity) == (3.0, "s")


def test_h_count_with_space_before_h():
    (p,) = _peaks("2.05 (s, 3 H)")
    assert p.integral == 3.0


def test_peak_without_parentheses_has_no_integral_and_an_unknown_multiplicity():
    (p,) = _peaks("2.05")
    assert (p.shift, p.integral, p.multiplicity) == (2.05, None, None)


def test_unicode_minus_gives_negative_shift():
    (p,) = _peaks("−0.10 (s, 9H)")
    assert p.shift == -0.10


@pytest.mark.parametrize(
    ("written", "read"),
    [
        ("s", "s"), ("d", "d"), ("t", "t"), ("q", "q"), ("m", "m"),
        ("br s", "br s"), ("bs", "br s"), ("brs", "br s"), ("br. s", "br s"), ("br", "br"),
        ("quint", "quint"), ("p", "quint"), ("pent", "quint"), ("quintet", "quint"),
        ("sext", "sext"), ("sextet", "sext"),
        ("sept", "sept"), ("hept", "sept"), ("septet", "sept"), ("heptet", "sept"),
        ("dd", "dd"), ("dt", "dt"), ("td", "td"), ("ddd", "ddd"), ("dq", "dq"), ("qd", "qd"),
        ("ddt", "ddt"), ("tt", "tt"), ("dddd", "dddd"),
        ("br d", "d"), ("br dd", "dd"), ("br t", "t"),
        ("Singlet", "s"), ("DD", "dd"),
    ],
)
def test_multiplicity_spellings_are_normalised(written, read):
    assert normalise_multiplicity(written) == read
    (p,) = _peaks(f"3.00 ({written}, 1H)")
    assert p.multiplicity == read


@pytest.mark.parametrize(
    ("multiplicity", "groups"),
    # n+1 rule: a multiplet with n equivalent neighbours has n+1 lines (first-order spectra)
    [("s", ()), ("br s", ()), ("d", (1,)), ("t", (2,)), ("q", (3,)), ("quint", (4,)), ("sext", (5,)),
     ("sept", (6,)), ("dd", (1, 1)), ("dt", (1, 2)), ("td", (2, 1)), ("qd", (3, 1)), ("dq", (1, 3)),
     ("ddd", (1, 1, 1)), ("m", None), ("br", None)],
)
def test_coupling_groups_follow_the_n_plus_one_rule(multiplicity, groups):
    assert coupling_groups(multiplicity) == groups


def test_several_j_values_are_kept_in_order():
    # 1-hexene CH= (typical literature value, from memory)
    (p,) = _peaks("5.81 (ddt, J = 17.0, 10.2, 6.7 Hz, 1H)")
    assert (p.multiplicity, p.j, p.integral) == ("ddt", (17.0, 10.2, 6.7), 1.0)


@pytest.mark.parametrize(
    ("text", "mult", "j"),
    [
        # ethyl (E)-crotonate (from memory)
        ("6.97 (dq, J = 15.6, 6.9 Hz, 1H)", "dq", (15.6, 6.9)),
        ("1.87 (dd, J = 6.9, 1.7 Hz, 3H)", "dd", (6.9, 1.7)),
        # butanal CH2CHO (from memory)
        ("2.42 (td, J = 7.3, 1.7 Hz, 2H)", "td", (7.3, 1.7)),
        # methyl salicylate H4 (from memory)
        ("7.45 (ddd, J = 8.6, 7.2, 1.7 Hz, 1H)", "ddd", (8.6, 7.2, 1.7)),
        ("3.00 (qd, J = 7.0, 1.2 Hz, 1H)", "qd", (7.0, 1.2)),
        ("2.90 (sept, J = 6.9 Hz, 1H)", "sept", (6.9,)),
        ("1.85 (quint, J = 7.0 Hz, 2H)", "quint", (7.0,)),
        ("1.67 (sext, J = 7.4 Hz, 2H)", "sext", (7.4,)),
        ("4.12 (q, J=7.1Hz, 2H)", "q", (7.1,)),
        ("7.02 (dd, J = 8.4 and 2.1 Hz, 1H)", "dd", (8.4, 2.1)),
        ("3.50 (dd, J (H,H) = 10.0, 5.0 Hz, 1H)", "dd", (10.0, 5.0)),
    ],
)
def test_j_values_are_read_with_their_multiplicity(text, mult, j):
    (p,) = _peaks(text)
    assert (p.multiplicity, p.j) == (mult, j)
    assert p.integral is not None


def test_j_list_without_hz_leaves_the_h_count_alone():
    (p,) = _peaks("4.12 (q, J = 7.1, 2H)")
    assert (p.j, p.integral) == ((7.1,), 2.0)
    (p,) = _peaks("4.12 (q, J = 7.1, 12H)")
    assert (p.j, p.integral) == ((7.1,), 12.0)


def test_read_peaks_passes_inline_text_through():
    spec = read_peaks("1H NMR (400 MHz, CDCl3) δ 2.17 (s, 6H)")
    assert (spec.field_mhz, spec.solvent, len(spec.peaks)) == (400.0, "CDCl3", 1)


def test_literature_peak_lists_of_the_known_set_parse_and_add_up():
    # every row of benchmarks/known.tsv: literature CDCl3 lists (from memory); formulas against RDKit
    lines = [ln for ln in KNOWN.read_text(encoding="utf-8").splitlines() if not ln.startswith("#")]
    rows = list(csv.DictReader(lines, delimiter="\t", quoting=csv.QUOTE_NONE))
    assert len(rows) >= 60
    for row in rows:
        mol = Chem.MolFromSmiles(row["smiles"])
        assert rdMolDescriptors.CalcMolFormula(mol) == row["formula"], row["id"]
        spec = parse_peak_text(row["peaks"])
        kept, dropped = drop_solvent_signals(spec.peaks, find_solvent(row["solvent"]))
        # only the signals added on purpose (written without an H count) are solvent
        assert [d.peak for d in dropped] == [p for p in spec.peaks if p.integral is None], row["id"]
        hydrogens = parse_formula(row["formula"])["H"]
        given = tuple(int(p.integral) for p in kept)
        unreported = hydrogens - sum(given)
        assert unreported == 0 or (unreported == 1 and "not reported" in row["source"]), row["id"]
        options = normalise(kept, hydrogens, max_missing=1)
        if len(kept) > 1:
            assert (options[0].counts, options[0].missing) == (given, unreported), row["id"]
        else:  # one peak fits any total equally well; the reported count must still be offered
            assert (given, unreported) in [(o.counts, o.missing) for o in options], row["id"]


# ------------------------------------------------------------------ files ----


def test_csv_with_relative_integrals_normalises_to_formula(tmp_path):
    # 4-nitrotoluene C7H7NO2: 8.11 (d, 2H), 7.31 (d, 2H), 2.46 (s, 3H) (typical literature value, from memory)
    path = tmp_path / "nitrotoluene.csv"
    path.write_text("shift,integral,multiplicity,j\n8.11,27.1,d,8.6\n7.31,26.9,d,8.6\n2.46,40.5,s,\n",
                    encoding="utf-8")
    spec = read_peaks(str(path))
    assert [p.shift for p in spec.peaks] == [8.11, 7.31, 2.46]
    assert [p.multiplicity for p in spec.peaks] == ["d", "d", "s"]
    assert spec.peaks[0].j == (8.6,)
    (best, *_) = normalise(spec.peaks, hydrogens=7, max_missing=0)
    assert best.counts == (2, 2, 3)
    assert best.missing == 0
    assert [p.integral for p in with_counts(spec.peaks, best)] == [2.0, 2.0, 3.0]


def test_csv_range_and_missing_columns(tmp_path):
    # benzyl acetate: 7.39-7.29 (m, 5H), 5.10 (s, 2H), 2.10 (s, 3H) (from memory); no J column
    path = tmp_path / "benzyl_acetate.csv"
    path.write_text("# integrals from the spectrometer\nppm,area\n7.39-7.29,51.0\n5.10,20.3\n2.10,30.2\n",
                    encoding="utf-8")
    spec = read_peaks(str(path))
    assert (spec.peaks[0].low, spec.peaks[0].high) == (7.29, 7.39)
    assert all(p.multiplicity is None and p.j == () for p in spec.peaks)
    assert normalise(spec.peaks, hydrogens=10, max_missing=0)[0].counts == (5, 2, 3)


def test_tsv_with_other_column_names(tmp_path):
    # ethyl acetate (Gottlieb et al. 1997, from memory)
    path = tmp_path / "ethyl_acetate.tsv"
    path.write_text("delta\tnH\tmult\tJ_Hz\n4.12\t2H\tq\t7.1\n2.05\t3H\ts\t\n1.26\t3H\tt\t7.1\n",
                    encoding="utf-8")
    spec = read_peaks(str(path))
    assert [(p.shift, p.integral, p.multiplicity, p.j) for p in spec.peaks] == [
        (4.12, 2.0, "q", (7.1,)), (2.05, 3.0, "s", ()), (1.26, 3.0, "t", (7.1,))]


def test_relative_integrals_are_scaled_to_the_formula_h_count():
    # p-xylene C8H10: 7.05 (s, 4H), 2.31 (s, 6H) (from memory); a 2:3 ratio means 4 + 6 H
    peaks = _peaks("7.05 (s, 1.00H), 2.31 (s, 1.52H)")
    assert normalise(peaks, hydrogens=10, max_missing=0)[0].counts == (4, 6)


def test_json_object_with_solvent_field_and_ranges(tmp_path):
    # ethylbenzene (typical literature value, from memory)
    path = tmp_path / "ethylbenzene.json"
    path.write_text(json.dumps({
        "solvent": "chloroform-d", "field_mhz": 400,
        "peaks": [{"range": [7.32, 7.15], "integral": 5, "multiplicity": "m"},
                  {"shift": 2.65, "n_h": 2, "multiplicity": "q", "j": [7.6]},
                  {"shift": "1.24", "integral": 3, "multiplicity": "t", "j": "7.6"}],
    }), encoding="utf-8")
    spec = read_peaks(str(path))
    assert (spec.solvent, spec.field_mhz) == ("CDCl3", 400.0)
    assert [(p.low, p.high) for p in spec.peaks] == [(7.15, 7.32), (2.65, 2.65), (1.24, 1.24)]
    assert [p.integral for p in spec.peaks] == [5.0, 2.0, 3.0]
    assert [p.j for p in spec.peaks] == [(), (7.6,), (7.6,)]


def test_json_list_of_peaks(tmp_path):
    path = tmp_path / "acetone.json"
    path.write_text('[{"shift": 2.17, "integral": 6, "multiplicity": "s"}]', encoding="utf-8")
    spec = read_peaks(str(path))
    assert (spec.solvent, spec.field_mhz, [p.shift for p in spec.peaks]) == (None, None, [2.17])


def test_txt_file_holds_inline_text(tmp_path):
    path = tmp_path / "peaks.txt"
    path.write_text("1H NMR (300 MHz, CDCl3) δ 3.48 (q, J = 7.0 Hz, 4H), 1.21 (t, J = 7.0 Hz, 6H)\n",
                    encoding="utf-8")
    spec = read_peaks(str(path))  # diethyl ether (Gottlieb et al. 1997, from memory)
    assert (spec.field_mhz, spec.solvent, [p.shift for p in spec.peaks]) == (300.0, "CDCl3", [3.48, 1.21])


_JCAMP_HEAD = """##TITLE= ethyl acetate
##JCAMP-DX= 5.01
##DATA TYPE= NMR PEAK TABLE
##DATA CLASS= PEAK TABLE
##.OBSERVE FREQUENCY= 400.13
##.OBSERVE NUCLEUS= ^1H
##.SOLVENT NAME= CDCl3
##XUNITS= {xunits}
##YUNITS= ARBITRARY UNITS
##NPOINTS= 3
"""


def _jcamp(tmp_path: Path, body: str, xunits: str = "PPM", name: str = "peaks.jdx") -> Path:
    path = tmp_path / name
    path.write_text(_JCAMP_HEAD.format(xunits=xunits) + body + "##END=\n", encoding="utf-8")
    return path


def test_jcamp_peak_table_with_assignments(tmp_path):
    # ethyl acetate, Y as relative areas; (XYMA): X, Y, multiplicity, <assignment> (JCAMP-DX, from memory)
    path = _jcamp(tmp_path, "##PEAK TABLE= (XY..XY)\n4.12, 20.1; 2.05, 30.3\n1.26, 29.8\n"
                            "##PEAK ASSIGNMENTS= (XYMA)\n(4.12, 20.1, Q, <OCH2>)\n"
                            "(2.05, 30.3, S, <C(O)CH3>)\n(1.26, 29.8, T, <CH2CH3>)\n")
    spec = read_peaks(str(path))
    assert spec.field_mhz == pytest.approx(400.13)
    assert spec.solvent == "CDCl3"
    assert [p.shift for p in spec.peaks] == [4.12, 2.05, 1.26]
    assert [p.multiplicity for p in spec.peaks] == ["q", "s", "t"]
    assert normalise(spec.peaks, hydrogens=8, max_missing=0)[0].counts == (2, 3, 3)


def test_jcamp_assignment_with_empty_y_still_gives_multiplicity(tmp_path):
    path = _jcamp(tmp_path, "##PEAK TABLE= (XY..XY)\n4.12, 2; 2.05, 3; 1.26, 3\n"
                            "##PEAK ASSIGNMENTS= (XYMA)\n(4.12, , Q, <2>)\n(1.26, , T, <1>)\n")
    spec = read_peaks(str(path))
    assert [p.multiplicity for p in spec.peaks] == ["q", None, "t"]


def test_jcamp_multiplicity_in_angle_brackets_and_commas_inside_assignments(tmp_path):
    path = _jcamp(tmp_path, "##PEAK TABLE= (XY..XY)\n4.12, 2; 2.05, 3; 1.26, 3\n"
                            "##PEAK ASSIGNMENTS= (XYMA)\n(4.12, 2, <q>, <>)\n(2.05, 3, S, <1,2>)\n"
                            "(1.26, 3, t, <H-3, H-4>)\n")
    assert [p.multiplicity for p in read_peaks(str(path)).peaks] == ["q", "s", "t"]


def test_jcamp_assignments_without_m_field_give_no_multiplicity(tmp_path):
    path = _jcamp(tmp_path, "##PEAK TABLE= (XY..XY)\n4.12, 2; 2.05, 3; 1.26, 3\n"
                            "##PEAK ASSIGNMENTS= (XYA)\n(4.12, 2, <OCH2>)\n")
    assert [p.multiplicity for p in read_peaks(str(path)).peaks] == [None, None, None]


def test_jcamp_peak_table_with_widths(tmp_path):
    path = _jcamp(tmp_path, "##PEAK TABLE= (XYW..XYW)\n4.12, 2.0, 1.1; 2.05, 3.0, 0.9\n1.26, 3.0, 1.0\n")
    spec = read_peaks(str(path))
    assert [(p.shift, p.integral) for p in spec.peaks] == [(4.12, 2.0), (2.05, 3.0), (1.26, 3.0)]


def test_jcamp_shifts_in_hz_are_divided_by_the_observe_frequency(tmp_path):
    hz = [4.12 * 400.13, 2.05 * 400.13, 1.26 * 400.13]
    rows = "; ".join(f"{x:.2f}, {y}" for x, y in zip(hz, (2, 3, 3)))
    path = _jcamp(tmp_path, f"##PEAK TABLE= (XY..XY)\n{rows}\n", xunits="HZ")
    spec = read_peaks(str(path))
    assert [p.shift for p in spec.peaks] == pytest.approx([4.12, 2.05, 1.26], abs=1e-4)


def test_jcamp_shifts_in_hz_without_frequency_are_refused(tmp_path):
    path = tmp_path / "nofreq.jdx"
    path.write_text("##TITLE= x\n##JCAMP-DX= 5.01\n##DATA TYPE= NMR PEAK TABLE\n##XUNITS= HZ\n"
                    "##PEAK TABLE= (XY..XY)\n1648.5, 2\n##END=\n", encoding="utf-8")
    with pytest.raises(InputError, match="OBSERVE FREQUENCY"):
        read_peaks(str(path))


# -------------------------------------------------------- solvent signals ----

# (solvent, residual, water) from Gottlieb et al. 1997, Table 1 (from memory)
PUBLISHED = [
    ("CDCl3", 7.26, 1.56),
    ("DMSO-d6", 2.50, 3.33),
    ("CD3OD", 3.31, 4.87),
    ("acetone-d6", 2.05, 2.84),
    ("C6D6", 7.16, 0.40),
    ("CD3CN", 1.94, 2.13),
    ("CD2Cl2", 5.32, 1.52),
]


@pytest.mark.parametrize(("solvent", "residual", "water"), PUBLISHED)
def test_residual_and_water_singlets_at_published_values_are_dropped(solvent, residual, water):
    kept, dropped = _kept_and_dropped(f"{residual:.2f} (s), {water:.2f} (s), 9.50 (s, 1H)", solvent)
    assert kept == [9.50]
    assert [reason for _, reason in dropped] == [f"residual {solvent}", f"water in {solvent}"]
    # written with H counts they are taken only within the narrow window, which pins the table values
    kept, dropped = _kept_and_dropped(f"{residual:.2f} (s, 1H), {water:.2f} (s, 2H), 9.50 (s, 1H)", solvent)
    assert kept == [9.50]
    assert len(dropped) == 2


def test_cdcl3_residual_water_and_tms_dropped_with_reasons():
    # benzyl acetate in CDCl3 with CHCl3 7.26, water 1.56 and TMS 0.00 (Gottlieb et al. 1997, from memory)
    kept, dropped = _kept_and_dropped(
        "7.39-7.29 (m, 5H), 7.26 (s), 5.10 (s, 2H), 2.10 (s, 3H), 1.56 (s), 0.00 (s)", "CDCl3")
    assert kept == [pytest.approx(7.34), 5.10, 2.10]
    assert dropped == [(7.26, "residual CDCl3"), (1.56, "water in CDCl3"), (0.00, "TMS reference")]


def test_dmso_residual_quintet_and_water_dropped():
    # Gottlieb et al. 1997: DMSO-d5 2.50 (quint), H2O/HDO 3.33 (from memory)
    kept, dropped = _kept_and_dropped("12.1 (br s, 1H), 2.50 (quint), 3.33 (br s), 2.30 (s, 3H)", "DMSO-d6")
    assert kept == [12.1, 2.30]
    assert dropped == [(2.50, "residual DMSO-d6"), (3.33, "water in DMSO-d6")]


def test_multiplet_range_covering_the_residual_is_kept():
    # toluene-type 5H aromatic multiplet across 7.26 (common practice: it holds the compound's own H)
    kept, dropped = _kept_and_dropped("7.36-7.20 (m, 5H), 2.36 (s, 3H)", "CDCl3")
    assert kept == [pytest.approx(7.28), 2.36]
    assert dropped == []


def test_doublet_next_to_the_residual_is_kept_and_residual_singlet_dropped():
    # 4-methylacetophenone 7.25 (d, J = 8.0 Hz, 2H) beside CHCl3 7.26 (from memory)
    kept, dropped = _kept_and_dropped("7.86 (d, J = 8.2 Hz, 2H), 7.26 (s), 7.25 (d, J = 8.0 Hz, 2H)", "CDCl3")
    assert kept == [7.86, 7.25]
    assert dropped == [(7.26, "residual CDCl3")]


def test_single_value_multiplet_on_the_residual_is_kept():
    # toluene meta H 7.25 (m) and vinyl acetate =CH-O 7.27 (dd) in CDCl3 (Gottlieb et al. 1997; from memory)
    kept, dropped = _kept_and_dropped("7.25 (m, 2H), 7.27 (dd, J = 14.0, 6.3 Hz, 1H)", "CDCl3")
    assert kept == [7.25, 7.27]
    assert dropped == []


@pytest.mark.parametrize(
    ("text", "solvent"),
    [
        ("1.43 (s, 12H)", "CDCl3"),  # cyclohexane in CDCl3 (Gottlieb et al. 1997, from memory)
        ("1.97 (s, 3H), 1.46 (s, 9H)", "CDCl3"),  # tert-butyl acetate (from memory)
        ("1.62 (s, 9H)", "CDCl3"),  # tert-butyl chloride (from memory)
        ("3.43 (s, 4H), 3.24 (s, 6H)", "DMSO-d6"),  # 1,2-dimethoxyethane in DMSO-d6 (Gottlieb et al. 1997, from memory)
    ],
)
def test_integrated_sharp_singlets_near_the_water_value_are_kept(text, solvent):
    kept, dropped = _kept_and_dropped(text, solvent)
    assert dropped == []
    assert len(kept) == len(_peaks(text))


def test_broad_or_unintegrated_singlet_in_the_water_window_is_water():
    # water moves with temperature and concentration (Gottlieb et al. 1997); window from rules/solvents.tsv
    kept, dropped = _kept_and_dropped("4.68 (s, 2H), 1.66 (br s, 1H)", "CDCl3")
    assert (kept, dropped) == ([4.68], [(1.66, "water in CDCl3")])
    kept, dropped = _kept_and_dropped("1.48 (s), 1.26 (m, 8H)", "CDCl3")
    assert (kept, dropped) == ([1.26], [(1.48, "water in CDCl3")])


def test_singlet_outside_the_water_window_is_kept_even_without_integral():
    kept, dropped = _kept_and_dropped("1.28 (s)", "CDCl3")  # tert-butyl alcohol CH3 (from memory)
    assert (kept, dropped) == ([1.28], [])


@pytest.mark.parametrize("name", ["CDCl3", "chloroform-d", "cdcl3", " Chloroform "])
def test_solvent_aliases_find_the_same_solvent(name):
    assert find_solvent(name).id == "CDCl3"


# ---------------------------------------------------------- normalisation ----


def test_missing_exchangeable_h_is_offered_first_when_it_fits_best():
    # benzyl alcohol C7H8O without its OH: 7.39-7.27 (m, 5H), 4.68 (s, 2H) (from memory)
    peaks = _peaks("7.39-7.27 (m, 50.3H), 4.68 (s, 20.0H)")
    options = normalise(peaks, hydrogens=8, max_missing=1)
    assert (options[0].counts, options[0].missing) == ((5, 2), 1)
    assert "1 H not observed" in options[0].text
    assert all(o.missing <= 1 for o in options)


def test_all_hydrogens_observed_gives_no_missing():
    # benzyl alcohol with OH 1.95 (br s, 1H) (from memory)
    peaks = _peaks("7.39-7.27 (m, 50.3H), 4.68 (s, 20.0H), 1.95 (br s, 10.2H)")
    best = normalise(peaks, hydrogens=8, max_missing=1)[0]
    assert (best.counts, best.missing) == ((5, 2, 1), 0)


def test_without_labile_h_no_hydrogen_may_be_missing():
    peaks = _peaks("7.39-7.27 (m, 5.0H), 4.68 (s, 2.0H)")
    options = normalise(peaks, hydrogens=8, max_missing=0)
    assert all(o.missing == 0 and sum(o.counts) == 8 for o in options)


def test_written_h_counts_short_of_the_formula_without_labile_h_are_refused_naming_both():
    # benzyl chloride C7H7Cl has no exchangeable H, so 7 of its 7 H must be written (common practice)
    with pytest.raises(InputError, match="add up to 6 H but the formula has 7 H"):
        normalise(_peaks("7.39-7.27 (m, 5H), 4.58 (s, 1H)"), hydrogens=7, max_missing=0)


@pytest.mark.parametrize(
    ("text", "hydrogens", "missing"),
    [
        ("2.00 (s, 1H), 1.00 (s, 1H)", 3, 0),  # 1:1 cannot make 3 H
        ("3.00 (s, 1H), 2.00 (s, 1H), 1.00 (s, 1H)", 4, 0),  # 1:1:1 cannot make 4 H
        ("3.00 (s, 1H), 2.00 (s, 1H), 1.00 (s, 1H)", 2, 0),  # more peaks than H
    ],
)
def test_integrals_that_cannot_fit_the_formula_are_refused(text, hydrogens, missing):
    with pytest.raises(InputError) as err:
        normalise(_peaks(text), hydrogens=hydrogens, max_missing=missing)
    assert "\n" not in str(err.value)


def test_some_integrals_missing_is_refused():
    with pytest.raises(InputError, match="give all or none"):
        normalise(_peaks("2.00 (s, 3H), 1.00 (t)"), hydrogens=6, max_missing=0)


# -------------------------------------------------------------- bad input ----


@pytest.mark.parametrize(
    ("text", "message"),
    [
        ("hello", "cannot read"),
        ("2.05 (s, 3H) 1.26 (t, 3H)", "cannot read"),  # no separator
        ("2.05 ((s, 3H)", "cannot read"),
        ("2.05 (s, 3H), foo", "cannot read"),
        ("2.05 (s, 3H), ,", "cannot read"),
        ("abc (s, 1H)", "cannot read"),
        ("2.05 (x, 3H)", "multiplicity"),
        ("16.5 (s, 1H)", "outside"),
        ("-1.5 (s, 3H)", "outside"),
        ("17.0-15.0 (m, 1H)", "outside"),
        ("2.05 (s, 0H)", "positive"),
        ("2.05 (s, -1H)", "positive"),
        ("2.05 (d, J = 0 Hz, 3H)", "J values"),
        ("2.05 (d, J = 55 Hz, 3H)", "J values"),
        ("", "empty"),
        ("   ", "empty"),
        ("1H NMR (400 MHz, CDCl3) δ", "empty"),
        ("1H NMR (400 MHz, CDCl4) δ 2.05 (s, 3H)", "unknown solvent"),
    ],
)
def test_bad_peak_text_raises_one_line_input_error(text, message):
    with pytest.raises(InputError, match=message) as err:
        read_peaks(text) if text.strip() else parse_peak_text(text)
    assert "\n" not in str(err.value)


@pytest.mark.parametrize("shift", ["-1.00", "16.00"])
def test_shift_range_limits_are_accepted(shift):
    assert _peaks(f"{shift} (s, 1H)")[0].shift == float(shift)


def test_unknown_solvent_name_is_refused_with_the_known_ones():
    with pytest.raises(InputError, match="known are .*CDCl3"):
        find_solvent("heavy water")


@pytest.mark.parametrize(
    ("name", "content", "message"),
    [
        ("missing.csv", None, "not found"),
        ("missing.json", None, "not found"),
        ("missing.jdx", None, "not found"),
        ("binary.csv", b"\x00\x01\xff\xfe", "cannot read"),
        ("zero.csv", b"", "cannot read"),
        ("header_only.csv", b"shift,integral\n", "empty"),
        ("no_shift.csv", b"foo,bar\n1,2\n", "no shift column"),
        ("bad_shift.csv", b"shift,integral\nabc,1\n", "not a number"),
        ("bad_integral.csv", b"shift,integral\n2.0,xx\n", "not a number"),
        ("zero_integral.csv", b"shift,integral\n2.0,0\n", "positive"),
        ("negative_integral.tsv", b"shift\tintegral\n2.0\t-3\n", "positive"),
        ("far_shift.tsv", b"shift\tintegral\n22.0\t1\n", "outside"),
        ("broken.json", b"{bad json", "cannot read"),
        ("string.json", b'"peaks"', "expected a list"),
        ("no_shift.json", b'[{"x": 1}]', "needs a 'shift'"),
        ("empty.json", b'{"peaks": []}', "empty"),
        ("bad_field.json", b'{"field_mhz": "fast", "peaks": [{"shift": 2.0, "integral": 1}]}', "field_mhz"),
        ("bad_solvent.json", b'{"solvent": "CDCl4", "peaks": [{"shift": 2.0, "integral": 1}]}', "unknown solvent"),
        ("no_table.jdx", b"##TITLE= x\n##JCAMP-DX= 5.01\n##END=\n", "nor a peak list"),
        ("garbage.jdx", b"garbage\x00\xff", "not a JCAMP-DX file"),
        ("bad_mult.jdx", (b"##TITLE= x\n##JCAMP-DX= 5.01\n##XUNITS= PPM\n##PEAK TABLE= (XY..XY)\n2.0, 1\n"
                          b"##PEAK ASSIGNMENTS= (XYMA)\n(2.0, 1, X, <a>)\n##END=\n"), "multiplicity"),
        ("bad_solvent.jdx", (b"##TITLE= x\n##JCAMP-DX= 5.01\n##.SOLVENT NAME= CDCl4\n##XUNITS= PPM\n"
                             b"##PEAK TABLE= (XY..XY)\n2.0, 1\n##END=\n"), "unknown solvent"),
    ],
)
def test_bad_peak_files_raise_one_line_input_error(tmp_path, name, content, message):
    path = tmp_path / name
    if content is not None:
        path.write_bytes(content)
    with pytest.raises(InputError, match=message) as err:
        read_peaks(str(path))
    assert "\n" not in str(err.value)
