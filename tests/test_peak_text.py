"""Peak lists as journals, theses and supporting information print them.

Outside references:
- the styles are those of experimental sections in organic chemistry journals and theses
  (common practice); each line below is written in one such style;
- shifts and couplings are typical literature values for the named compounds in CDCl3 unless
  stated (Silverstein-Webster-Kiemle and Pretsch handbooks; from memory);
- residual solvent and water names: H. E. Gottlieb, V. Kotlyar, A. Nudelman, J. Org. Chem. 1997,
  62, 7512, Table 1 (from memory).
"""

from __future__ import annotations

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from rank.errors import InputError
from rank.formula import parse_formula
from rank.spectra import (
    Peak,
    drop_labelled_peaks,
    format_peaks,
    normalise,
    parse_peak_text,
)
from rank.tables import read_table

ETHYL_ACETATE = "4.12 (q, J = 7.1 Hz, 2H), 2.05 (s, 3H), 1.26 (t, J = 7.1 Hz, 3H)"


def _read(text: str) -> list[tuple]:
    return [(p.shift, p.integral, p.multiplicity, p.j) for p in parse_peak_text(text).peaks]


# --------------------------------------------------------------- headers ----


@pytest.mark.parametrize(
    ("header", "field", "solvent"),
    [
        ("1H NMR (400 MHz, CDCl3) δ", 400.0, "CDCl3"),
        ("δH (400 MHz; CDCl3)", 400.0, "CDCl3"),
        ("1H NMR (CDCl3, 400 MHz): δ =", 400.0, "CDCl3"),
        ("1H-NMR (400 MHz, CDCl3) δ (ppm):", 400.0, "CDCl3"),
        ("1H NMR (CDCl3, 500 MHz, J in Hz) δ", 500.0, "CDCl3"),
        ("¹H NMR (600 MHz, DMSO-d6): δ", 600.0, "DMSO-d6"),
        ("1H NMR (300 MHz, CDCl3, rt) δ", 300.0, "CDCl3"),
        ("δ (CDCl3)", None, "CDCl3"),
        ("δ", None, None),
    ],
)
def test_common_header_forms_give_field_and_solvent(header, field, solvent):
    spec = parse_peak_text(f"{header} {ETHYL_ACETATE}")
    assert (spec.field_mhz, spec.solvent) == (field, solvent)
    assert [(p.shift, p.integral, p.multiplicity, p.j) for p in spec.peaks] == _read(ETHYL_ACETATE)


@pytest.mark.parametrize("ending", [" ppm", " ppm.", ".", " ppm. "])
def test_trailing_ppm_or_full_stop_is_ignored(ending):
    assert [p.shift for p in parse_peak_text(ETHYL_ACETATE + ending).peaks] == [4.12, 2.05, 1.26]


def test_ppm_after_each_shift_is_ignored():
    # ethyl acetate written "δ = 4.12 ppm (q, …)" (common practice in some journals)
    text = "δ = 4.12 ppm (q, J = 7.1 Hz, 2H), 2.05 ppm (s, 3H), 1.26 ppm (t, J = 7.1 Hz, 3H)"
    assert _read(text) == _read(ETHYL_ACETATE)


@pytest.mark.parametrize("header", ["13C NMR (101 MHz, CDCl3) δ", "13C{1H} NMR (126 MHz, CDCl3) δ",
                                    "¹³C NMR (CDCl3, 100 MHz): δ =", "δC (CDCl3)"])
def test_a_13c_header_is_refused_as_a_1h_list(header):
    # ethyl acetate's 13C list (typical CDCl3 values; from memory): rank.spectra.parse_carbon_text reads it
    with pytest.raises(InputError, match="13C"):
        parse_peak_text(f"{header} 170.9, 60.4, 21.0, 14.2")


# ------------------------------------------------------------- H counts ----


@pytest.mark.parametrize("text", ["4.12 (2H, q)", "4.12 (q, 2H)", "4.12 (q, 2 H)", "4.12 (2 H, q)"])
def test_h_count_before_or_after_the_multiplicity_with_or_without_space(text):
    (p,) = parse_peak_text(text).peaks
    assert (p.integral, p.multiplicity, p.counted) == (2.0, "q", True)


def test_decimal_integrals_are_relative_not_counted():
    (p,) = parse_peak_text("4.12 (q, 1.98H)").peaks
    assert (p.integral, p.counted) == (1.98, False)


# ------------------------------------------------------------------- J ----


@pytest.mark.parametrize(
    "written",
    ["J = 8.9 Hz", "J 8.9", "J=8.9Hz", "3J = 8.9 Hz", "³J = 8.9 Hz", "JHH = 8.9 Hz", "J(H,H) = 8.9 Hz",
     "3JHH = 8.9", "J = 8.9"],
)
def test_j_in_every_usual_spelling(written):
    # 4-nitroanisole H-3/H-5 (typical literature value, from memory)
    (p,) = parse_peak_text(f"6.95 (d, {written}, 2H)").peaks
    assert (p.multiplicity, p.j, p.integral) == ("d", (8.9,), 2.0)


@pytest.mark.parametrize(
    "written",
    ["J = 8.4, 2.1 Hz", "J = 8.4 and 2.1 Hz", "J = 8.4 Hz, 2.1 Hz", "J1 = 8.4 Hz, J2 = 2.1 Hz", "J 8.4, 2.1",
     "J = 8.4/2.1 Hz", "JHH = 8.4, 2.1"],
)
def test_several_j_values_in_one_peak(written):
    # 3,4-disubstituted benzene H-6 dd (ortho and meta coupling; typical values, from memory)
    (p,) = parse_peak_text(f"7.02 (dd, {written}, 1H)").peaks
    assert (p.multiplicity, p.j, p.integral) == ("dd", (8.4, 2.1), 1.0)


# ---------------------------------------------------------------- labels ----


@pytest.mark.parametrize(
    ("text", "label"),
    [
        ("7.26 (d, J = 8.6 Hz, 2H, ArH)", "ArH"),
        ("3.80 (s, 3H, OCH3)", "OCH3"),
        ("7.95 (d, J = 8.8 Hz, 2H, H-2, H-6)", "H-2, H-6"),
        ("11.2 (br s, 1H, COOH)", "COOH"),
        ("5.90 (br s, 1H, NH)", "NH"),
        ("2.05 (CH3, s, 3H)", "CH3"),
    ],
)
def test_assignment_labels_are_kept_as_the_peak_label(text, label):
    (p,) = parse_peak_text(text).peaks
    assert p.label == label
    assert p.integral is not None and p.multiplicity is not None


@pytest.mark.parametrize(
    ("text", "kind"),
    [
        ("7.26 (s, CHCl3)", "solvent"),
        ("1.56 (H2O)", "water"),
        ("2.50 (DMSO)", "solvent"),
        ("3.33 (br s, H2O)", "water"),
        ("3.31 (CHD2OD)", "solvent"),
        ("0.00 (s, TMS)", "reference"),
        ("7.16 (s, residual C6D5H)", "solvent"),
        ("2.05 (acetone-d5)", "solvent"),
        ("4.79 (HDO)", "water"),
    ],
)
def test_peaks_labelled_as_solvent_water_or_reference_are_dropped_and_reported(text, kind):
    peaks = parse_peak_text(f"{text}, 2.10 (s, 3H)").peaks
    kept, dropped = drop_labelled_peaks(peaks)
    assert [p.shift for p in kept] == [2.10]
    assert len(dropped) == 1 and kind in dropped[0].reason


@pytest.mark.parametrize("label", ["OCH3", "CH2Cl", "D2O exchangeable", "ArH", "OH, D2O exch."])
def test_labels_naming_the_compound_own_groups_are_kept(label):
    # near misses of rules/peak_labels.tsv: a group or an exchange note is the compound's own peak
    kept, dropped = drop_labelled_peaks(parse_peak_text(f"3.50 (s, 3H, {label})").peaks)
    assert len(kept) == 1 and dropped == ()


def test_every_label_row_of_the_table_drops_its_peak():
    # rules/peak_labels.tsv: each row fires on a peak carrying its label
    for row in read_table("peak_labels"):
        peaks = parse_peak_text(f"2.00 (s, {row['label']}), 3.00 (s, 3H)").peaks
        kept, dropped = drop_labelled_peaks(peaks)
        assert [p.shift for p in kept] == [3.00], row["label"]
        assert row["kind"] in dropped[0].reason


# --------------------------------------------------------- multiplicities ----


@pytest.mark.parametrize(
    ("written", "read"),
    [("app t", "t"), ("app. t", "t"), ("apparent t", "t"), ("app sext", "sext"), ("app q", "q"),
     ("pseudo-t", "t"), ("br s", "br s"), ("br. s", "br s"), ("brs", "br s"), ("bs", "br s"),
     ("broad s", "br s"), ("dd", "dd"), ("ddd", "ddd"), ("dt", "dt"), ("td", "td"), ("qd", "qd"),
     ("dq", "dq"), ("tt", "tt"), ("sext", "sext"), ("sept", "sept"), ("hept", "sept"), ("quint", "quint"),
     ("p", "quint"), ("m", "m"), ("br d", "d"), ("bd", "d")],
)
def test_multiplicity_words_and_abbreviations(written, read):
    (p,) = parse_peak_text(f"1.60 ({written}, 2H)").peaks
    assert p.multiplicity == read


def test_unreported_multiplicity_is_unknown_not_m():
    # a database list: shift and H count only
    peaks = parse_peak_text("2.14 (3H), 1.10 (6H)").peaks
    assert [p.multiplicity for p in peaks] == [None, None]


def test_a_slip_in_a_multiplicity_is_refused_not_taken_as_a_label():
    with pytest.raises(InputError, match="multiplicity 'sx'"):
        parse_peak_text("2.05 (sx, 3H)")


# ---------------------------------------------------------- separators ----


@pytest.mark.parametrize(
    "text",
    ["7.36-7.27 (m, 5H)", "7.36–7.27 (m, 5H)", "7.36—7.27 (m, 5H)", "7.36 - 7.27 (m, 5H)",
     "7.36 – 7.27 (m, 5H)", "7.27–7.36 (m, 5H)"],
)
def test_ranges_with_hyphen_en_or_em_dash_with_or_without_spaces(text):
    (p,) = parse_peak_text(text).peaks
    assert (p.low, p.high, p.integral) == (7.27, 7.36, 5.0)


@pytest.mark.parametrize("sep", [", ", "; ", ",", ";"])
def test_comma_or_semicolon_between_peaks(sep):
    text = sep.join(["4.12 (q, J = 7.1 Hz, 2H)", "2.05 (s, 3H)", "1.26 (t, J = 7.1 Hz, 3H)"])
    assert _read(text) == _read(ETHYL_ACETATE)


# -------------------------------------------------------- decimal commas ----


def test_decimal_commas_throughout_are_read_as_decimal_points():
    # ethyl acetate as a continental European thesis writes it (common practice)
    text = "4,12 (q, J = 7,1 Hz, 2H); 2,05 (s, 3H); 1,26 (t, J = 7,1 Hz, 3H)"
    assert _read(text) == _read(ETHYL_ACETATE)


def test_a_decimal_comma_beside_decimal_points_is_refused_with_the_fix():
    with pytest.raises(InputError, match="decimal comma.*write 2.14"):
        parse_peak_text("2,14 (s, 3H), 1.25 (t, J = 7.1 Hz, 3H)")


def test_a_decimal_comma_never_gives_two_peaks():
    # the careless input that once read as peaks at 2 and 14 ppm
    peaks = parse_peak_text("2,14 (s)").peaks
    assert [p.shift for p in peaks] == [2.14]


# ---------------------------------------------------- integrals as written ----


def test_written_h_counts_are_absolute_with_unreported_nh2():
    # C3H5N3S with one CH3 singlet written (3H) and its NH2 not reported: read as 3 H, not scaled to 5
    formula = parse_formula("C3H5N3S")
    (norm,) = normalise(parse_peak_text("2.44 (3H)").peaks, formula["H"], max_missing=5)
    assert (norm.counts, norm.missing, norm.written) == ((3,), 2, True)


def test_written_h_counts_beyond_the_formula_name_both_numbers():
    # ethyl acetate C4H8O2 has 8 H; the list claims 9
    with pytest.raises(InputError, match="add up to 9 H but the formula has 8 H"):
        normalise(parse_peak_text("4.12 (q, 2H), 2.05 (s, 3H), 1.26 (t, 4H)").peaks, 8, max_missing=2)


def test_relative_integrals_are_still_scaled():
    # ethyl acetate integrated as areas 20.1 : 30.3 : 29.8 (relative)
    peaks = parse_peak_text("4.12 (q, 20.1H), 2.05 (s, 30.3H), 1.26 (t, 29.8H)").peaks
    best = normalise(peaks, 8, max_missing=0)[0]
    assert (best.counts, best.written) == ((2, 3, 3), False)


# ------------------------------------------------------------ properties ----


@settings(max_examples=300, deadline=None)
@given(st.text(max_size=80))
def test_any_text_gives_peaks_or_the_input_error(text):
    try:
        spectrum = parse_peak_text(text)
    except InputError as err:
        assert "\n" not in str(err)
    else:
        assert all(-1.0 <= p.low <= p.high <= 16.0 for p in spectrum.peaks)


_ALPHABET = "0123456789.,;()-–HJzsdtqmbr =δ"


@settings(max_examples=300, deadline=None)
@given(st.text(alphabet=_ALPHABET, max_size=60))
def test_peak_like_text_gives_peaks_or_the_input_error(text):
    try:
        parse_peak_text(text)
    except InputError as err:
        assert "\n" not in str(err)


@settings(max_examples=300, deadline=None)
@given(st.text(max_size=30))
def test_any_formula_text_gives_a_formula_or_the_input_error(text):
    try:
        formula = parse_formula(text)
    except InputError as err:
        assert "\n" not in str(err)
    else:
        assert formula.heavy_atoms >= 1


_MULTIPLICITIES = st.sampled_from([None, "s", "d", "t", "q", "quint", "sext", "sept", "m", "br s", "dd", "dt",
                                   "td", "ddd", "qd", "dq", "tt"])
_LABELS = st.sampled_from(["", "ArH", "OCH3", "H-2, H-6", "NH", "COOH", "CH2"])
_SHIFTS = st.integers(min_value=-100, max_value=1600).map(lambda x: x / 100)


@st.composite
def _peaks(draw) -> Peak:
    a, b = draw(_SHIFTS), draw(st.one_of(st.none(), _SHIFTS))
    low, high = (a, a) if b is None else (min(a, b), max(a, b))
    counted = draw(st.booleans())
    integral = draw(st.one_of(
        st.none(),
        st.integers(1, 12).map(float) if counted else st.integers(1, 5000).map(lambda x: x / 100)))
    js = draw(st.lists(st.integers(1, 400).map(lambda x: x / 10), max_size=3))
    return Peak(round((low + high) / 2, 4), low, high, integral, draw(_MULTIPLICITIES), tuple(js),
                draw(_LABELS), counted and integral is not None)


@settings(max_examples=300, deadline=None)
@given(st.lists(_peaks(), min_size=1, max_size=8))
def test_a_printed_peak_list_reads_back_equal(peaks):
    assert list(parse_peak_text(format_peaks(peaks)).peaks) == peaks


# ------------------------------------------------------ labels in reports ----


def test_labels_and_labelled_drops_are_shown_in_json_terminal_and_html():
    from rank.report import report_html, terminal_text, to_json
    from rank.shortlist import Identifier

    # ethyl acetate with its groups labelled and the CHCl3 residual labelled (Gottlieb et al. 1997, from memory)
    text = "4.12 (q, J = 7.1 Hz, 2H, OCH2), 2.05 (s, 3H, COCH3), 1.26 (t, J = 7.1 Hz, 3H, CH3), 7.26 (s, CHCl3)"
    result = Identifier(top=3).identify("C4H8O2", text)
    doc = to_json(result)
    assert [p["label"] for p in doc["peaks_used"]] == ["OCH2", "COCH3", "CH3"]
    assert doc["peaks_dropped"][0]["label"] == "CHCl3" and "solvent" in doc["peaks_dropped"][0]["reason"]
    assert doc["candidates"][0]["smiles"] == "CCOC(C)=O"
    assert {row["observed_label"] for row in doc["candidates"][0]["assignment"]} == {"OCH2", "COCH3", "CH3"}
    assert "[OCH2]" in terminal_text(result) and "labelled 'CHCl3'" in terminal_text(result)
    assert "COCH3" in report_html(result)


# ------------------------------------------------------- rules/observe.tsv ----


def test_tms_window_drops_a_singlet_at_zero_and_keeps_one_just_outside():
    from rank.spectra import drop_solvent_signals, find_solvent, observation_rule

    assert observation_rule("tms_tolerance") == 0.02  # common practice
    kept, dropped = drop_solvent_signals(parse_peak_text("0.01 (s), 0.05 (s, 9H)").peaks, find_solvent("CDCl3"))
    assert [p.shift for p in kept] == [0.05] and dropped[0].reason == "TMS reference"


def test_a_narrow_range_counts_as_one_line_and_a_wide_one_never_as_solvent():
    from rank.spectra import drop_solvent_signals, find_solvent

    # CHCl3 7.26 (Gottlieb et al. 1997, from memory) written as a 0.04 ppm range, then as a 0.10 ppm range
    kept, _ = drop_solvent_signals(parse_peak_text("7.28-7.24 (s)").peaks, find_solvent("CDCl3"))
    assert kept == ()
    kept, _ = drop_solvent_signals(parse_peak_text("7.31-7.21 (s)").peaks, find_solvent("CDCl3"))
    assert len(kept) == 1


@pytest.mark.parametrize(
    ("formula", "text", "fits"),
    [
        ("C2H7N", "2.74 (q, 2H), 1.11 (t, 3H)", True),     # ethylamine, NH2 unreported (from memory)
        ("C2H6O", "3.69 (q, 2H)", False),                   # ethanol: 3 CH3 H cannot be exchangeable
        ("C2H6S", "2.57 (q, 2H), 1.31 (t, 3H)", True),     # ethanethiol, SH unreported (from memory)
    ],
)
def test_exchangeable_h_bound_per_heteroatom(formula, text, fits):
    from rank.spectra import exchangeable_bound

    f = parse_formula(formula)
    bound = exchangeable_bound(f["N"], f["O"], f["S"], f["H"])
    peaks = parse_peak_text(text).peaks
    if fits:
        assert normalise(peaks, f["H"], bound)[0].missing == f["H"] - sum(p.integral for p in peaks)
    else:
        with pytest.raises(InputError, match="exchangeable"):
            normalise(peaks, f["H"], bound)
