"""13C peak lists as journals, theses, supporting information and the open data print them.

Outside references:
- the styles are those of experimental sections in organic chemistry journals and theses
  (common practice); each test below writes one such style;
- ethyl acetate in CDCl3: 170.9 (C=O), 60.4 (OCH2), 21.0 (CH3C=O), 14.2 (CH3), typical literature
  values (Pretsch and Silverstein-Webster-Kiemle handbooks; from memory);
- fluorobenzene C-F couplings, 1J = 245 Hz, 2J = 21 Hz, 3J = 8 Hz, 4J = 3 Hz: handbook values
  (Pretsch; from memory);
- solvent 13C signals: G. R. Fulmer et al., Organometallics 2010, 29, 2176, Table 2 (from memory);
- open data rows: benchmarks/data/open-spectra.tsv (derived from NMRShiftDB2), the c13 column:
  1,3-diiodopropane (nmrshiftdb2 10008323) and iodomethane (nmrshiftdb2 20028919).
"""

from __future__ import annotations

import json

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from rank.errors import InputError
from rank.spectra import (
    CarbonPeak,
    CarbonSpectrum,
    drop_carbon_solvent_signals,
    find_solvent,
    format_carbon_peaks,
    parse_carbon_text,
    parse_peak_text,
    read_carbon_peaks,
)

ETHYL_ACETATE = [170.9, 60.4, 21.0, 14.2]


def _types(text: str) -> list[tuple[float, str | None]]:
    return [(p.shift, p.dept) for p in parse_carbon_text(text).peaks]


# --------------------------------------------------------------- headers ----


@pytest.mark.parametrize(
    ("header", "field", "solvent"),
    [
        ("13C NMR (101 MHz, CDCl3) δ", 101.0, "CDCl3"),
        ("13C{1H} NMR (126 MHz, CDCl3) δ", 126.0, "CDCl3"),
        ("¹³C NMR (CDCl3, 100 MHz): δ =", 100.0, "CDCl3"),
        ("13C-NMR (75 MHz, DMSO-d6) δ (ppm):", 75.0, "DMSO-d6"),
        ("13C NMR (CDCl3, 100 MHz, proton decoupled) δ", 100.0, "CDCl3"),
        ("δC (CDCl3)", None, "CDCl3"),
        ("δC (100 MHz; CD3OD)", 100.0, "CD3OD"),
        ("", None, None),
    ],
)
def test_common_13c_headers_give_field_and_solvent(header, field, solvent):
    spec = parse_carbon_text(f"{header} 170.9, 60.4, 21.0, 14.2")
    assert (spec.field_mhz, spec.solvent) == (field, solvent)
    assert [p.shift for p in spec.peaks] == ETHYL_ACETATE
    assert all(p.n_h is None for p in spec.peaks)


def test_a_1h_header_is_refused_by_the_carbon_reader():
    with pytest.raises(InputError, match="names 1H"):
        parse_carbon_text("1H NMR (400 MHz, CDCl3) δ 4.12 (q, J = 7.1 Hz, 2H), 2.05 (s, 3H)")


def test_a_13c_header_is_refused_by_the_1h_reader():
    with pytest.raises(InputError, match="13C"):
        parse_peak_text("13C{1H} NMR (101 MHz, CDCl3) δ 170.9, 60.4, 21.0, 14.2")


def test_a_1h_list_without_header_is_refused_by_its_h_counts():
    with pytest.raises(InputError, match="H count"):
        parse_carbon_text("4.12 (q, J = 7.1 Hz, 2H), 2.05 (s, 3H), 1.26 (t, J = 7.1 Hz, 3H)")


# ----------------------------------------------------------- carbon types ----


def test_dept_types_as_words():
    assert _types("δC (CDCl3) 170.9 (C), 60.4 (CH2), 21.0 (CH3), 14.2 (CH3)") == [
        (170.9, "C"), (60.4, "CH2"), (21.0, "CH3"), (14.2, "CH3")]


@pytest.mark.parametrize("word", ["C", "Cq", "Cquat", "quaternary", "quaternary C", "C_q"])
def test_quaternary_carbon_spellings(word):
    assert _types(f"170.9 ({word}), 60.4 (CH2)")[0] == (170.9, "C")


def test_subscript_digits_in_types():
    assert _types("60.4 (CH₂), 14.2 (CH₃)") == [(60.4, "CH2"), (14.2, "CH3")]


def test_off_resonance_letters_give_the_h_on_each_carbon():
    # an off-resonance decoupled list: a carbon with n H shows n + 1 lines
    spec = parse_carbon_text("13C NMR (CDCl3) δ 170.9 (s), 60.4 (t), 21.0 (q), 14.2 (q)")
    assert [p.n_h for p in spec.peaks] == [0, 2, 3, 3]


def test_a_lone_q_among_type_words_is_a_quaternary_carbon():
    # "q" for quaternary beside CH/CH2/CH3 words (common shorthand), not an off-resonance quartet
    assert _types("138.2 (q), 128.4 (CH), 21.1 (CH3)") == [(138.2, "C"), (128.4, "CH"), (21.1, "CH3")]


def test_letters_with_j_in_a_decoupled_list_are_couplings_to_fluorine():
    # fluorobenzene, 13C{1H}: the doublets come from 19F, not from H
    spec = parse_carbon_text("13C{1H} NMR (101 MHz, CDCl3) δ 162.9 (d, 1JCF = 245.3 Hz, C-F), "
                             "130.0 (d, J = 7.8 Hz), 124.2 (d, J(C,F) = 3.2 Hz), 115.4 (d, JC-F = 21.0 Hz)")
    assert [(p.n_h, p.multiplicity, p.j) for p in spec.peaks] == [
        (None, "d", (245.3,)), (None, "d", (7.8,)), (None, "d", (3.2,)), (None, "d", (21.0,))]
    assert spec.peaks[0].label == "C-F"


def test_type_and_coupling_together():
    (p,) = parse_carbon_text("115.4 (d, J = 21.0 Hz, CH)").peaks
    assert (p.dept, p.multiplicity, p.j) == ("CH", "d", (21.0,))


def test_letters_without_j_in_a_decoupled_list_stay_splittings():
    (p,) = parse_carbon_text("13C{1H} NMR (CDCl3) δ 124.1 (q)").peaks
    assert (p.n_h, p.multiplicity) == (None, "q")


def test_two_carbon_types_for_one_line_is_refused():
    with pytest.raises(InputError, match="two carbon types"):
        parse_carbon_text("129.0 (CH, C), 21.0 (CH3)")


# ------------------------------------------------------- counts and labels ----


@pytest.mark.parametrize("inside", ["2C, CH", "CH, 2C", "2 C, CH", "2 × CH", "2xCH", "CH × 2"])
def test_two_carbons_in_one_line(inside):
    (p,) = parse_carbon_text(f"128.5 ({inside})").peaks
    assert (p.carbons, p.dept) == (2, "CH")


def test_a_count_alone_is_not_a_type():
    (p,) = parse_carbon_text("128.5 (2C)").peaks
    assert (p.carbons, p.dept) == (2, None)


@pytest.mark.parametrize(("text", "label"), [
    ("170.9 (C=O)", "C=O"), ("60.4 (OCH2)", "OCH2"), ("52.1 (OCH3)", "OCH3"), ("128.5 (C-2)", "C-2"),
    ("130.0 (C-2, C-6)", "C-2, C-6"), ("33.8 (NCH3)", "NCH3"),
])
def test_assignment_labels_are_kept(text, label):
    (p,) = parse_carbon_text(text).peaks
    assert (p.label, p.n_h) == (label, None)


def test_label_and_type_together():
    (p,) = parse_carbon_text("170.9 (C, C=O)").peaks
    assert (p.dept, p.label) == ("C", "C=O")


# -------------------------------------------------------------- open data ----


def test_the_open_data_column_reads():
    # 1,3-diiodopropane, nmrshiftdb2 10008323 (benchmarks/data/open-spectra.tsv)
    spec = parse_carbon_text("36.9 (CH2), 10.2 (CH2)")
    assert [(p.shift, p.n_h) for p in spec.peaks] == [(36.9, 2), (10.2, 2)]


def test_iodomethane_below_zero_is_accepted():
    # iodomethane, nmrshiftdb2 20028919: the heavy-atom effect puts its carbon at -24.0
    assert _types("-24.0 (CH3)") == [(-24.0, "CH3")]


def test_silyl_methyls_with_a_typographic_minus():
    assert [p.shift for p in parse_carbon_text("25.9, 18.3, −4.6, −5.3").peaks] == [25.9, 18.3, -4.6, -5.3]


# ---------------------------------------------------------- number forms ----


@pytest.mark.parametrize("text", ["170,9; 60,4; 21,0; 14,2", "170,9, 60,4, 21,0, 14,2"])
def test_decimal_commas(text):
    assert [p.shift for p in parse_carbon_text(text).peaks] == ETHYL_ACETATE


def test_trailing_ppm_and_full_stop():
    assert [p.shift for p in parse_carbon_text("170.9, 60.4, 21.0, 14.2 ppm.").peaks] == ETHYL_ACETATE


# ------------------------------------------------------------ bad input ----


@pytest.mark.parametrize(("text", "says"), [
    ("", "empty"),
    ("13C NMR (CDCl3) δ", "empty"),
    ("170.9, 260.4", "outside"),
    ("170.9, -45.0", "outside"),
    ("129.0-128.5 (CH)", "range"),
    ("170.9 (C), sixty", "cannot read"),
    ("170.9 (C), 60.4 (CH2) (CH3)", "cannot read"),
    ("13C NMR (101 MHz, CDCl4) δ 170.9", "unknown solvent"),
    ("128.5 (0C, CH)", "at least 1"),
    ("170,9, 60.4", "decimal comma"),
])
def test_bad_input_gives_one_clear_line(text, says):
    with pytest.raises(InputError, match=says) as caught:
        parse_carbon_text(text)
    assert "\n" not in str(caught.value)


# ------------------------------------------------------------------ files ----


def test_csv_file_with_type_count_and_label(tmp_path):
    path = tmp_path / "c13.csv"
    path.write_text("shift,type,carbons,label\n170.9,C,,C=O\n128.5,CH,2,\n60.4,CH2,,OCH2\n14.2,3,,\n")
    spec = read_carbon_peaks(str(path))
    assert [(p.shift, p.dept, p.carbons, p.label) for p in spec.peaks] == [
        (170.9, "C", None, "C=O"), (128.5, "CH", 2, ""), (60.4, "CH2", None, "OCH2"), (14.2, "CH3", None, "")]


def test_tsv_file_with_n_h_column(tmp_path):
    path = tmp_path / "c13.tsv"
    path.write_text("ppm\tn_h\n36.9\t2\n10.2\t2\n")
    assert [(p.shift, p.n_h) for p in read_carbon_peaks(str(path)).peaks] == [(36.9, 2), (10.2, 2)]


def test_json_file(tmp_path):
    path = tmp_path / "c13.json"
    path.write_text(json.dumps({"solvent": "chloroform-d", "field_mhz": 101,
                                "peaks": [{"shift": 170.9, "type": "C", "label": "C=O"}, {"shift": 60.4, "n_h": 2}]}))
    spec = read_carbon_peaks(str(path))
    assert (spec.solvent, spec.field_mhz) == ("CDCl3", 101.0)
    assert [(p.shift, p.dept, p.label) for p in spec.peaks] == [(170.9, "C", "C=O"), (60.4, "CH2", "")]


def test_text_file_and_inline_text_read_alike(tmp_path):
    text = "13C NMR (101 MHz, CDCl3) δ 170.9 (C), 60.4 (CH2), 21.0 (CH3), 14.2 (CH3)"
    path = tmp_path / "c13.txt"
    path.write_text(text + "\n")
    assert read_carbon_peaks(str(path)) == read_carbon_peaks(text) == parse_carbon_text(text)


def test_jcamp_peak_table(tmp_path):
    path = tmp_path / "c13.jdx"
    path.write_text("##TITLE=ethyl acetate 13C\n##JCAMP-DX=5.01\n##DATA TYPE=NMR PEAK TABLE\n"
                    "##.OBSERVE FREQUENCY=100.6\n##.OBSERVE NUCLEUS=^13C\n##.SOLVENT NAME=CDCl3\n##XUNITS=PPM\n"
                    "##YUNITS=ARBITRARY UNITS\n##PEAK TABLE=(XY..XY)\n170.9, 20\n60.4, 80\n21.0, 70\n14.2, 75\n"
                    "##END=\n")
    spec = read_carbon_peaks(str(path))
    assert [p.shift for p in spec.peaks] == ETHYL_ACETATE
    assert (spec.solvent, spec.field_mhz) == ("CDCl3", 100.6)


def test_table_without_shift_column_is_refused(tmp_path):
    path = tmp_path / "c13.csv"
    path.write_text("value,type\n170.9,C\n")
    with pytest.raises(InputError, match="no shift column"):
        read_carbon_peaks(str(path))


def test_missing_file_is_refused():
    with pytest.raises(InputError, match="not found"):
        read_carbon_peaks("no-such-file.csv")


# ------------------------------------------------------- solvent signals ----


def test_cdcl3_centre_line_is_dropped_and_typed_lines_kept():
    spec = parse_carbon_text("13C NMR (101 MHz, CDCl3) δ 170.9 (C), 77.16, 60.4 (CH2), 21.0 (CH3), 14.2 (CH3)")
    kept, dropped = drop_carbon_solvent_signals(spec, None)
    assert [p.shift for p in kept.peaks] == ETHYL_ACETATE
    assert [(d.peak.shift, d.reason) for d in dropped] == [(77.16, "residual CDCl3")]
    assert (kept.solvent, kept.field_mhz) == ("CDCl3", 101.0)


def test_the_three_lines_of_the_cdcl3_triplet_are_dropped():
    # J(C,D) = 32 Hz: at 100.6 MHz the lines stand 0.32 ppm apart
    spec = parse_carbon_text("13C NMR (100.6 MHz, CDCl3) δ 170.9, 77.48, 77.16, 76.84, 60.4, 21.0, 14.2")
    kept, dropped = drop_carbon_solvent_signals(spec, "CDCl3")
    assert [p.shift for p in kept.peaks] == ETHYL_ACETATE
    assert [d.peak.shift for d in dropped] == [77.48, 77.16, 76.84]


def test_cdcl3_referenced_at_77_0_is_dropped_too():
    kept, dropped = drop_carbon_solvent_signals(parse_carbon_text("170.9, 77.0, 60.4"), "CDCl3")
    assert [p.shift for p in kept.peaks] == [170.9, 60.4] and len(dropped) == 1


def test_a_typed_or_labelled_line_near_the_solvent_is_the_compounds_own():
    # an alkyne or CH-O carbon near 77 written with its type or assignment stays
    spec = parse_carbon_text("77.2 (CH), 77.1 (C≡C), 77.0 (2C)")
    kept, dropped = drop_carbon_solvent_signals(spec, "CDCl3")
    assert len(kept.peaks) == 3 and dropped == ()


def test_a_written_solvent_pattern_is_dropped():
    spec = parse_carbon_text("13C NMR (DMSO-d6) δ 167.5 (C), 39.5 (sept), 21.0 (CH3)")
    kept, dropped = drop_carbon_solvent_signals(spec, None)
    assert [p.shift for p in kept.peaks] == [167.5, 21.0]
    assert dropped[0].reason == "residual DMSO-d6"


def test_both_acetone_signals_are_dropped():
    spec = parse_carbon_text("206.26, 170.9 (C), 29.84, 21.0 (CH3)")
    kept, dropped = drop_carbon_solvent_signals(spec, find_solvent("acetone-d6"))
    assert [p.shift for p in kept.peaks] == [170.9, 21.0]
    assert [d.peak.shift for d in dropped] == [206.26, 29.84]


def test_labelled_solvent_and_tms_lines_are_dropped_with_their_labels():
    spec = parse_carbon_text("170.9 (C), 77.2 (CDCl3), 60.4 (CH2), 0.0 (TMS)")
    kept, dropped = drop_carbon_solvent_signals(spec, "CDCl3")
    assert [p.shift for p in kept.peaks] == [170.9, 60.4]
    assert [d.reason for d in dropped] == ["labelled 'CDCl3' (solvent)", "labelled 'TMS' (reference)"]


def test_bare_tms_line_is_dropped():
    _, dropped = drop_carbon_solvent_signals(parse_carbon_text("170.9, 60.4, 0.00"), "CDCl3")
    assert [d.reason for d in dropped] == ["TMS reference"]


def test_d2o_has_no_carbon_signal():
    spec = parse_carbon_text("49.0, 21.0")
    kept, dropped = drop_carbon_solvent_signals(spec, "D2O")
    assert kept.peaks == spec.peaks and dropped == ()


def test_dropped_lines_have_a_caption_like_1h_peaks():
    _, dropped = drop_carbon_solvent_signals(parse_carbon_text("77.16, 60.4 (CH2)"), "CDCl3")
    assert dropped[0].peak.caption == "77.2"
    assert CarbonPeak(60.4, 2).caption == "60.4 (CH2)"


# ------------------------------------------------------------ round trip ----

_LABELS = st.sampled_from(["", "C=O", "OCH3", "C-2", "NCH2", "C-3, C-5"])


@st.composite
def _carbon_peaks(draw):
    shift = draw(st.integers(-300, 2400)) / 10
    if draw(st.booleans()):
        # a splitting by another nucleus, always with its J (without J the letters are read as H counts)
        mult = draw(st.sampled_from(["d", "t", "q", "dd"]))
        j = tuple(draw(st.lists(st.integers(1, 3000).map(lambda x: x / 10), min_size=1, max_size=2)))
    else:
        mult, j = None, ()
    return CarbonPeak(shift, draw(st.none() | st.integers(0, 3)), draw(_LABELS),
                      draw(st.none() | st.integers(1, 6)), mult, j)


@settings(max_examples=200, deadline=None)
@given(st.lists(_carbon_peaks(), min_size=1, max_size=12))
def test_format_carbon_peaks_reads_back_equal(peaks):
    assert parse_carbon_text(format_carbon_peaks(peaks)).peaks == tuple(peaks)


def test_off_resonance_letters_read_back_with_their_type():
    spec = parse_carbon_text("170.9 (s), 60.4 (t), 14.2 (q)")
    assert parse_carbon_text(format_carbon_peaks(spec.peaks)) == CarbonSpectrum(spec.peaks)
