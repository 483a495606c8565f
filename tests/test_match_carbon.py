"""The 13C matcher: predicted carbon classes of real structures against observed 13C lines.

The rules are checked with stand-in predictions: a small NamedTuple per symmetry class of carbon
whose shift is the compound's own handbook value (a predictor at its best), with a σ as a predictor of
additive increments would give (2 ppm for sp3 carbons, 3 ppm for sp2 and C=O).  The last tests use the
real predictions of ``rank.predict.carbon`` (increments only, no fitted environment correction) and
are skipped while that module is absent; they check orderings only, not values.

Outside references (CDCl3, typical literature values; Pretsch, Bühlmann, Badertscher, Structure
Determination of Organic Compounds, 4th ed., 13C tables, and Silverstein-Webster-Kiemle, 7th ed., ch. 4;
from memory):
- ethyl acetate: 171.1 (C=O), 60.5 (OCH2), 21.0 (CH3C=O), 14.2 (CH3);
- methyl propanoate: 174.8 (C=O), 51.5 (OCH3), 27.5 (CH2), 9.2 (CH3);
- 1,4-dimethoxybenzene: 153.7 (C), 114.7 (CH), 55.7 (OCH3): 3 lines for 8 carbons;
- 1,2-dimethoxybenzene: 149.1 (C), 120.9 (CH), 111.9 (CH), 55.9 (OCH3): 4 lines for 8 carbons;
- quaternary carbons give weak lines (slow relaxation, no NOE) and may be missing from lists.
- the open data row of 1,3-diiodopropane, nmrshiftdb2 10008323 (benchmarks/data/open-spectra.tsv):
  36.9 (CH2), 10.2 (CH2).
The assignment is the optimum of a linear assignment problem (H. W. Kuhn, Naval Res. Logist. Q. 1955,
2, 83, doi:10.1002/nav.3800020109), checked here against brute force over every assignment.
"""

from __future__ import annotations

import itertools
import math
import random
from dataclasses import replace
from typing import NamedTuple

import pytest

from rank.match import DEFAULT_CARBON_SETTINGS, CarbonMatch, CarbonSettings, match_carbons
from rank.spectra import CarbonPeak, drop_carbon_solvent_signals, parse_carbon_text


class Carbon(NamedTuple):
    """Stand-in for rank.predict.carbon.CarbonSignal."""

    shift: float
    n_h: int
    sigma: float
    atoms: tuple[int, ...]


ETHYL_ACETATE = (Carbon(171.1, 0, 3.0, (1,)), Carbon(60.5, 2, 2.0, (3,)), Carbon(21.0, 3, 2.0, (0,)),
                 Carbon(14.2, 3, 2.0, (4,)))
METHYL_PROPANOATE = (Carbon(174.8, 0, 3.0, (2,)), Carbon(51.5, 3, 2.0, (4,)), Carbon(27.5, 2, 2.0, (1,)),
                     Carbon(9.2, 3, 2.0, (0,)))
PARA_DIMETHOXY = (Carbon(153.7, 0, 3.0, (0, 3)), Carbon(114.7, 1, 3.0, (1, 2, 4, 5)), Carbon(55.7, 3, 2.0, (6, 7)))
ORTHO_DIMETHOXY = (Carbon(149.1, 0, 3.0, (0, 1)), Carbon(120.9, 1, 3.0, (2, 5)), Carbon(111.9, 1, 3.0, (3, 4)),
                   Carbon(55.9, 3, 2.0, (6, 7)))

ETHYL_ACETATE_TYPED = "13C NMR (101 MHz, CDCl3) δ 171.1 (C), 60.5 (CH2), 21.0 (CH3), 14.2 (CH3)"
ETHYL_ACETATE_PLAIN = "13C NMR (101 MHz, CDCl3) δ 171.1, 60.5, 21.0, 14.2"


def _lines(text: str) -> tuple[CarbonPeak, ...]:
    return parse_carbon_text(text).peaks


# ------------------------------------------------------- real candidates ----


@pytest.mark.parametrize("text", [ETHYL_ACETATE_TYPED, ETHYL_ACETATE_PLAIN])
def test_ethyl_acetate_beats_methyl_propanoate(text):
    right = match_carbons(ETHYL_ACETATE, _lines(text))
    wrong = match_carbons(METHYL_PROPANOATE, _lines(text))
    assert right.misfit < 0.01
    assert wrong.misfit > right.misfit + 1.0
    assert right.pairs == ((0, 0), (1, 1), (2, 2), (3, 3))


def test_typed_lines_keep_each_class_on_its_own_type():
    # methyl propanoate's CH2 (27.5) must take the CH2 line at 60.5 although a CH3 line (21.0) is nearer
    wrong = match_carbons(METHYL_PROPANOATE, _lines(ETHYL_ACETATE_TYPED))
    lines = _lines(ETHYL_ACETATE_TYPED)
    for i, p in wrong.pairs:
        assert p is None or lines[p].n_h == METHYL_PROPANOATE[i].n_h
    assert dict(wrong.pairs)[2] in (1, None)
    assert wrong.parts.type == 0.0


def test_para_isomer_fits_its_three_lines_and_the_ortho_isomer_does_not():
    para_list = _lines("δC (CDCl3) 153.7 (C), 114.7 (CH), 55.7 (CH3)")
    para, ortho = match_carbons(PARA_DIMETHOXY, para_list), match_carbons(ORTHO_DIMETHOXY, para_list)
    assert para.misfit < 0.01
    # four classes for three lines: one CH shares a line or stays unplaced
    assert ortho.parts.overlap + ortho.parts.unplaced > 0
    assert ortho.misfit > para.misfit + 0.3


def test_ortho_isomer_fits_its_four_lines_and_the_para_isomer_leaves_one_empty():
    ortho_list = _lines("δC (CDCl3) 149.1 (C), 120.9 (CH), 111.9 (CH), 55.9 (CH3)")
    para, ortho = match_carbons(PARA_DIMETHOXY, ortho_list), match_carbons(ORTHO_DIMETHOXY, ortho_list)
    assert ortho.misfit < 0.01
    assert para.parts.empty == DEFAULT_CARBON_SETTINGS.empty_line / 3   # parts are per class
    assert para.misfit > ortho.misfit + 1.0


def test_the_number_of_distinct_signals_counts_even_with_untyped_lines():
    para_list = _lines("153.7, 114.7, 55.7")
    ortho_list = _lines("149.1, 120.9, 111.9, 55.9")
    assert match_carbons(PARA_DIMETHOXY, para_list).misfit < match_carbons(ORTHO_DIMETHOXY, para_list).misfit
    assert match_carbons(ORTHO_DIMETHOXY, ortho_list).misfit < match_carbons(PARA_DIMETHOXY, ortho_list).misfit


def test_open_data_types_leave_classes_of_other_types_unplaced():
    # 1,3-diiodopropane, open data: two CH2 lines. 1,2-diiodopropane (CH3, CH, CH2; rough stand-in shifts)
    # can place only its CH2.
    lines = _lines("36.9 (CH2), 10.2 (CH2)")
    right = (Carbon(36.9, 2, 3.0, (1,)), Carbon(10.2, 2, 3.0, (0, 2)))
    wrong = (Carbon(25.0, 3, 3.0, (0,)), Carbon(22.0, 1, 3.0, (1,)), Carbon(15.0, 2, 3.0, (2,)))
    m = match_carbons(wrong, lines)
    assert m.pairs[0][1] is None and m.pairs[1][1] is None
    assert m.parts.unplaced == 2 * DEFAULT_CARBON_SETTINGS.unplaced_protonated / 3
    assert match_carbons(right, lines).misfit < m.misfit


def test_reader_solvent_and_matcher_together():
    spec, dropped = drop_carbon_solvent_signals(
        parse_carbon_text("13C NMR (101 MHz, CDCl3) δ 171.1, 77.48, 77.16, 76.84, 60.5, 21.0, 14.2"), None)
    assert len(dropped) == 3
    assert match_carbons(ETHYL_ACETATE, spec.peaks).parts.empty == 0.0


# ------------------------------------------------------------------ rules ----


def test_a_class_never_crosses_a_written_type():
    # a CH3 class predicted exactly on a line typed CH2 stays unplaced and the line stays empty
    m = match_carbons([Carbon(60.4, 3, 2.0, (0,))], (CarbonPeak(60.4, 2),))
    assert m.pairs == ((0, None),)
    assert m.parts == (0.0, 0.0, 0.0, DEFAULT_CARBON_SETTINGS.unplaced_protonated, DEFAULT_CARBON_SETTINGS.empty_line)


def test_an_untyped_line_accepts_any_class():
    for n_h in range(4):
        assert match_carbons([Carbon(60.4, n_h, 2.0, (0,))], (CarbonPeak(60.4),)).pairs == ((0, 0),)


def test_a_finite_type_mismatch_lets_a_class_cross_and_shows_it():
    settings = replace(DEFAULT_CARBON_SETTINGS, type_mismatch=0.4)
    m = match_carbons([Carbon(60.4, 3, 2.0, (0,))], (CarbonPeak(60.4, 2),), settings)
    assert m.pairs == ((0, 0),) and m.parts.type == 0.4 and m.misfit == 0.4


def test_a_missing_quaternary_costs_less_than_a_missing_ch2():
    no_carbonyl = match_carbons(ETHYL_ACETATE, _lines("60.5 (CH2), 21.0 (CH3), 14.2 (CH3)"))
    no_ch2 = match_carbons(ETHYL_ACETATE, _lines("171.1 (C), 21.0 (CH3), 14.2 (CH3)"))
    assert no_carbonyl.parts.unplaced == DEFAULT_CARBON_SETTINGS.unplaced_quaternary / 4
    assert no_ch2.parts.unplaced == DEFAULT_CARBON_SETTINGS.unplaced_protonated / 4
    assert no_carbonyl.misfit < no_ch2.misfit


def test_two_classes_may_share_a_line_at_the_overlap_cost():
    classes = [Carbon(128.5, 1, 3.0, (0,)), Carbon(128.6, 1, 3.0, (1,))]
    m = match_carbons(classes, (CarbonPeak(128.5, 1),))
    assert m.pairs == ((0, 0), (1, 0))
    assert m.parts.overlap == DEFAULT_CARBON_SETTINGS.overlap / 2 and m.parts.unplaced == 0.0


def test_a_written_count_of_two_carbons_makes_sharing_free():
    classes = [Carbon(128.5, 1, 3.0, (0,)), Carbon(128.6, 1, 3.0, (1,))]
    m = match_carbons(classes, _lines("128.5 (2C, CH)"))
    assert m.pairs == ((0, 0), (1, 0)) and m.parts.overlap == 0.0


def test_a_line_holds_at_most_two_classes():
    classes = [Carbon(128.4, 1, 3.0, (0,)), Carbon(128.5, 1, 3.0, (1,)), Carbon(128.6, 1, 3.0, (2,))]
    m = match_carbons(classes, (CarbonPeak(128.5, 1),))
    assert sum(p is None for _, p in m.pairs) == 1


def test_sharing_is_preferred_to_a_far_line_only_when_shifts_agree():
    # two CH classes at 128.5 and 126.0 with lines at 128.5 and 126.0: one each, no overlap
    classes = [Carbon(128.5, 1, 3.0, (0,)), Carbon(126.0, 1, 3.0, (1,))]
    m = match_carbons(classes, _lines("128.5 (CH), 126.0 (CH)"))
    assert m.pairs == ((0, 0), (1, 1)) and m.parts.overlap == 0.0


def test_shift_residuals_are_capped_per_class():
    m = match_carbons([Carbon(200.0, 1, 3.0, (0,))], (CarbonPeak(20.0, 1),))
    assert m.parts.shift == DEFAULT_CARBON_SETTINGS.z_cap
    assert m.z == (-60.0,)


def test_a_far_quaternary_is_read_as_missing_beside_an_unexplained_line():
    # unplaced_quaternary + empty_line (8) is below a capped miss (9)
    m = match_carbons([Carbon(200.0, 0, 3.0, (0,))], (CarbonPeak(20.0, 0),))
    assert m.pairs == ((0, None),) and m.misfit == 8.0


def test_z_is_observed_minus_predicted_in_sigma():
    m = match_carbons([Carbon(60.0, 2, 2.0, (0,))], (CarbonPeak(61.0, 2),))
    assert m.z == (0.5,) and m.parts.shift == 0.25


def test_no_lines_leaves_every_class_unplaced_and_no_classes_leaves_every_line_empty():
    m = match_carbons(ETHYL_ACETATE, ())
    assert all(p is None for _, p in m.pairs)
    assert m.parts.unplaced == (DEFAULT_CARBON_SETTINGS.unplaced_quaternary
                                + 3 * DEFAULT_CARBON_SETTINGS.unplaced_protonated) / 4
    empty = match_carbons((), _lines(ETHYL_ACETATE_PLAIN))
    assert empty.parts.empty == 4 * DEFAULT_CARBON_SETTINGS.empty_line and empty.pairs == ()


def test_pure_and_deterministic():
    lines = _lines(ETHYL_ACETATE_TYPED)
    first = match_carbons(METHYL_PROPANOATE, lines)
    assert match_carbons(METHYL_PROPANOATE, lines) == first
    assert isinstance(first, CarbonMatch) and lines == _lines(ETHYL_ACETATE_TYPED)
    reordered = match_carbons(METHYL_PROPANOATE, tuple(reversed(lines)))
    assert reordered.misfit == first.misfit


def test_parts_add_up_to_the_misfit():
    m = match_carbons(ORTHO_DIMETHOXY, _lines("153.7 (C), 114.7 (CH), 55.7 (CH3)"))
    assert m.misfit == round(m.parts.total, 6)


# ----------------------------------------------------------- brute force ----


def _brute_force(classes, lines, settings: CarbonSettings) -> float:
    """The lowest misfit over every placement of classes in lines (at most two per line) or none."""
    n = len(classes)
    best = math.inf
    for choice in itertools.product([None, *range(len(lines))], repeat=n):
        held = [choice.count(p) for p in range(len(lines))]
        if any(h > 2 for h in held):
            continue
        total = 0.0
        for c, p in zip(classes, choice):
            if p is None:
                total += settings.unplaced_quaternary if c.n_h == 0 else settings.unplaced_protonated
                continue
            line = lines[p]
            total += min(((line.shift - c.shift) / c.sigma) ** 2, settings.z_cap)
            if line.n_h is not None and line.n_h != c.n_h:
                total += settings.type_mismatch
        total += sum(settings.overlap for p, h in enumerate(held) if h == 2 and (lines[p].carbons or 0) < 2)
        total += settings.empty_line * held.count(0)
        best = min(best, total / n)
    return best


@pytest.mark.parametrize("seed", range(40))
def test_the_assignment_is_the_cheapest_of_all(seed):
    rng = random.Random(seed)
    classes = [Carbon(rng.uniform(0, 200), rng.randint(0, 3), rng.choice([2.0, 3.0]), (i,))
               for i in range(rng.randint(1, 5))]
    lines = tuple(CarbonPeak(round(rng.uniform(0, 200), 1), rng.choice([None, 0, 1, 2, 3]), "",
                             rng.choice([None, None, 2])) for _ in range(rng.randint(0, 4)))
    # cluster some shifts so that sharing and capping both occur
    if lines and rng.random() < 0.5:
        classes = [c._replace(shift=lines[0].shift + rng.uniform(-2, 2)) if rng.random() < 0.5 else c
                   for c in classes]
    settings = rng.choice([DEFAULT_CARBON_SETTINGS, replace(DEFAULT_CARBON_SETTINGS, type_mismatch=1.5)])
    assert match_carbons(classes, lines, settings).misfit == pytest.approx(_brute_force(classes, lines, settings),
                                                                          abs=1e-6)


# ------------------------------------------------------ real predictions ----


def _predicted(smiles: str):
    carbon = pytest.importorskip("rank.predict.carbon")
    return carbon.predict_carbon_smiles(smiles, environment=False)


@pytest.mark.parametrize("wrong", ["CCC(=O)OC", "CCCOC=O", "CC(C)OC=O"])
def test_predicted_ethyl_acetate_beats_its_isomers_on_its_typed_list(wrong):
    # methyl propanoate, propyl formate, isopropyl formate: C4H8O2 esters
    lines = _lines(ETHYL_ACETATE_TYPED)
    assert match_carbons(_predicted("CCOC(C)=O"), lines).misfit < match_carbons(_predicted(wrong), lines).misfit


def test_types_widen_the_gap_to_a_formate():
    # propyl formate's HC=O (CH) cannot take the C line of a typed list
    typed = match_carbons(_predicted("CCCOC=O"), _lines(ETHYL_ACETATE_TYPED))
    plain = match_carbons(_predicted("CCCOC=O"), _lines(ETHYL_ACETATE_PLAIN))
    assert typed.misfit > plain.misfit
    assert typed.parts.unplaced > 0 and typed.parts.empty > 0


@pytest.mark.parametrize(("text", "right", "wrong"), [
    ("δC (CDCl3) 153.7 (C), 114.7 (CH), 55.7 (CH3)", "COc1ccc(OC)cc1", "COc1ccccc1OC"),
    ("δC (CDCl3) 149.1 (C), 120.9 (CH), 111.9 (CH), 55.9 (CH3)", "COc1ccccc1OC", "COc1ccc(OC)cc1"),
])
def test_predicted_dimethoxybenzenes_are_told_apart_by_their_line_counts(text, right, wrong):
    lines = _lines(text)
    assert match_carbons(_predicted(right), lines).misfit < match_carbons(_predicted(wrong), lines).misfit
