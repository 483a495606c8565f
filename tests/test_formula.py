"""Formula parsing, Hill order and the degree of unsaturation.

Hill order: carbon first, hydrogen second, then the other elements alphabetically; without
carbon, every element alphabetically (E. A. Hill, J. Am. Chem. Soc. 1900, 22, 478,
doi:10.1021/ja02046a005).  The degree of unsaturation is
DBE = C - (H + X)/2 + N/2 + 1 (standard organic chemistry textbooks); every value below was
worked by hand from that formula.
"""

from __future__ import annotations

import pytest

from rank.errors import InputError
from rank.formula import parse_formula

# (text as typed, Hill formula, element counts, DBE worked by hand)
PARSED = [
    ("C4H8O2", "C4H8O2", {"C": 4, "H": 8, "O": 2}, 1),  # 4 - 8/2 + 1
    ("C2H5Cl", "C2H5Cl", {"C": 2, "H": 5, "Cl": 1}, 0),  # 2 - (5 + 1)/2 + 1
    ("CH3NO2", "CH3NO2", {"C": 1, "H": 3, "N": 1, "O": 2}, 1),  # 1 - 3/2 + 1/2 + 1
    ("C6H5Br", "C6H5Br", {"C": 6, "H": 5, "Br": 1}, 4),  # 6 - (5 + 1)/2 + 1
    ("C3H9N", "C3H9N", {"C": 3, "H": 9, "N": 1}, 0),  # 3 - 9/2 + 1/2 + 1
    ("ClC2H5", "C2H5Cl", {"C": 2, "H": 5, "Cl": 1}, 0),  # same molecule, halogen written first
    ("O2C4H8", "C4H8O2", {"C": 4, "H": 8, "O": 2}, 1),
    ("NO2CH3", "CH3NO2", {"C": 1, "H": 3, "N": 1, "O": 2}, 1),
    ("BrH5C6", "C6H5Br", {"C": 6, "H": 5, "Br": 1}, 4),
    ("C6H6", "C6H6", {"C": 6, "H": 6}, 4),  # benzene: 6 - 3 + 1
    ("C5H5N", "C5H5N", {"C": 5, "H": 5, "N": 1}, 4),  # pyridine: 5 - 5/2 + 1/2 + 1
    ("C2H6OS", "C2H6OS", {"C": 2, "H": 6, "O": 1, "S": 1}, 0),  # dimethyl sulfoxide
    ("C2HF3", "C2HF3", {"C": 2, "H": 1, "F": 3}, 1),  # trifluoroethene: 2 - (1 + 3)/2 + 1
    ("C8H10N4O2", "C8H10N4O2", {"C": 8, "H": 10, "N": 4, "O": 2}, 6),  # caffeine: 8 - 5 + 2 + 1
    ("CHClBrI", "CHBrClI", {"C": 1, "H": 1, "Br": 1, "Cl": 1, "I": 1}, 0),  # 1 - (1 + 3)/2 + 1
    ("NH3", "H3N", {"H": 3, "N": 1}, 0),  # no carbon: alphabetical, 0 - 3/2 + 1/2 + 1
    ("H2SO4", "H2O4S", {"H": 2, "O": 4, "S": 1}, 0),  # 0 - 2/2 + 1
]


@pytest.mark.parametrize(("text", "hill", "counts", "dbe"), PARSED, ids=[row[0] for row in PARSED])
def test_formula_in_any_order_gives_hill_formula_counts_and_dbe(text, hill, counts, dbe):
    f = parse_formula(text)
    assert f.hill == hill
    assert f.dbe == dbe
    for element, n in counts.items():
        assert f[element] == n
    assert f.heavy_atoms == sum(n for el, n in counts.items() if el != "H")


def test_element_order_does_not_change_the_formula():
    assert parse_formula("ClC2H5") == parse_formula("C2H5Cl") == parse_formula("H5ClC2")


REJECTED = [
    # unknown element
    ("C4H8Xe", "unknown element"),
    ("C2H5Q", "unknown element"),
    ("C6H6Fe", "unknown element"),
    # malformed text
    ("c4h8o2", "malformed"),
    ("4CH4", "malformed"),
    ("C4H8O2)", "malformed"),
    ("C4H8-O", "malformed"),
    ("C4 H8 O", "malformed"),
    ("C4H8O2!", "malformed"),
    # degree of unsaturation not a whole number: odd H + X - N
    ("C4H7O", "non-integer DBE"),  # 4 - 7/2 + 1 = 1.5
    ("C2H5", "non-integer DBE"),  # 2 - 5/2 + 1 = 0.5
    ("C3H8N", "non-integer DBE"),  # 3 - 4 + 1/2 + 1 = 0.5
    # negative degree of unsaturation: more H than a saturated molecule holds
    ("C2H8", "negative DBE"),  # 2 - 4 + 1 = -1
    ("CH5Cl", "negative DBE"),  # 1 - 3 + 1 = -1
    ("C3H11N", "negative DBE"),  # 3 - 5.5 + 0.5 + 1 = -1
    # no heavy atom
    ("H2", "no heavy atom"),
    ("H4", "no heavy atom"),
    # empty
    ("", "empty"),
    ("   ", "empty"),
]


@pytest.mark.parametrize(("text", "why"), REJECTED, ids=[f"{why}:{text!r}" for text, why in REJECTED])
def test_bad_formula_raises_input_error_with_one_line_reason(text, why):
    with pytest.raises(InputError) as info:
        parse_formula(text)
    message = str(info.value)
    assert message.strip(), "the reason must not be empty"
    assert "\n" not in message, "the reason must fit on one line"


def test_unknown_element_message_names_the_element():
    with pytest.raises(InputError, match="Xe"):
        parse_formula("C4H8Xe")


def test_taking_a_group_out_of_a_formula():
    # ethyl 4-aminobenzoate C9H11NO2 less an ethyl group C2H5 leaves C7H6NO2 (arithmetic)
    assert parse_formula("C9H11NO2").minus({"C": 2, "H": 5}).hill == "C7H6NO2"
    assert parse_formula("C5H5N").minus({"C": 6, "H": 5}) is None
