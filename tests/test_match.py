"""The matcher: predicted signals of real structures against observed peak lists.

Observed peak lists are rows of ``benchmarks/known.tsv`` (typical CDCl3 literature values from the
solvent-impurity tables, H. E. Gottlieb, V. Kotlyar, A. Nudelman, J. Org. Chem. 1997, 62, 7512,
doi:10.1021/jo971176v, and the Silverstein-Webster-Kiemle and Pretsch handbooks; from memory),
named by row id beside each check.  Predictions come from ``rank.predict.predict_smiles``.
The H counts are the row's own nH; hydrogens of the formula the row does not report are "missing".

Outside references for the expectations:
- first-order multiplets, n+1 rule; 3J(H,H) trans across C=C 12-18 Hz, cis 6-12 Hz (Silverstein,
  Webster, Kiemle, Spectrometric Identification of Organic Compounds, 7th ed., ch. 3; from memory);
- the assignment is the optimum of a linear assignment problem (H. W. Kuhn, Naval Res. Logist. Q.
  1955, 2, 83, doi:10.1002/nav.3800020109), checked here against brute force over every assignment.
"""

from __future__ import annotations

import csv
import itertools
from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest
from scipy.optimize import linear_sum_assignment

import rank.match as match_module
from rank.formula import parse_formula
from rank.match import DEFAULT_SETTINGS, coupling_penalty, match, multiplicity_penalty
from rank.predict import predict_smiles
from rank.spectra import parse_peak_text

KNOWN = Path(__file__).resolve().parent.parent / "benchmarks" / "known.tsv"


def _known_rows() -> dict[str, dict[str, str]]:
    lines = [ln for ln in KNOWN.read_text(encoding="utf-8").splitlines() if ln.strip() and not ln.startswith("#")]
    return {r["id"]: r for r in csv.DictReader(lines, delimiter="\t", quoting=csv.QUOTE_NONE)}


ROWS = _known_rows()


def _observed(row_id: str, drop: tuple[float, ...] = ()):
    """Peaks of a known.tsv row, their nH as counts, and the formula's H the row does not report.

    ``drop`` leaves out the peaks at those shifts (to model a signal that was not seen).
    """
    row = ROWS[row_id]
    peaks = tuple(p for p in parse_peak_text(row["peaks"]).peaks if p.shift not in drop)
    counts = tuple(int(p.integral) for p in peaks)
    missing = parse_formula(row["formula"])["H"] - sum(counts)
    return peaks, counts, missing


def _match(smiles: str, row_id: str, exchange_absent: bool = False, drop: tuple[float, ...] = ()):
    peaks, counts, missing = _observed(row_id, drop)
    signals = predict_smiles(smiles)
    return signals, peaks, match(signals, peaks, counts, missing, exchange_absent)


# --------------------------------------------------------- overlapping multiplets ----


def test_five_h_aromatic_multiplet_holds_all_three_ring_classes_of_ethylbenzene():
    # known.tsv ethylbenzene: 7.32-7.15 (m, 5H), 2.65 (q, 2H), 1.24 (t, 3H)
    signals, _, m = _match("CCc1ccccc1", "ethylbenzene")
    ring = [p for p in m.pairings if signals[p.signal].family == "aromatic"]
    assert len(ring) == 3  # ortho, meta and para H are three classes (textbook)
    assert {p.peak for p in ring} == {0}
    assert sum(p.protons for p in ring) == 5
    assert m.parts.integral == 0
    assert m.parts.count == 0  # one observed multiplet for three overlapping classes is not a miscount
    assert m.parts.multiplicity == 0  # an observed m says nothing about the pattern


def test_three_h_multiplet_of_toluene_holds_ortho_and_para_classes():
    # known.tsv toluene: 7.25 (m, 2H), 7.17 (m, 3H), 2.36 (s, 3H)
    signals, _, m = _match("Cc1ccccc1", "toluene")
    in_three = [p for p in m.pairings if p.peak == 1]
    assert len(in_three) == 2
    assert sorted(signals[p.signal].n_h for p in in_three) == [1, 2]
    assert m.parts.integral == 0


# --------------------------------------------------------------- unobserved H ----


def test_unreported_oh_of_tert_butanol_costs_nothing():
    # known.tsv tert_butanol: 1.28 (s, 9H); the OH is not reported (variable position)
    signals, peaks, m = _match("CC(C)(C)O", "tert_butanol")
    peaks, counts, missing = _observed("tert_butanol")
    assert missing == 1
    oh = [p for p in m.pairings if signals[p.signal].exchangeable]
    assert len(oh) == 1 and oh[0].peak is None
    without_oh = [s for s in signals if not s.exchangeable]
    alone = match(without_oh, peaks, counts, 0, False)
    assert m.misfit == pytest.approx(alone.misfit, abs=1e-9)
    assert m.parts.integral == 0


def test_unreported_oh_of_2_propanol_costs_nothing_but_a_missing_ch_costs_a_lot():
    # known.tsv isopropanol: 4.04 (sept, 1H), 1.22 (d, 6H); OH not reported
    signals, _, with_ch = _match("CC(C)O", "isopropanol")
    # the same list without the 4.04 septet: the CH is then unobserved too
    _, _, without_ch = _match("CC(C)O", "isopropanol", drop=(4.04,))
    ch = [p for p in without_ch.pairings if signals[p.signal].family == "CH"]
    assert len(ch) == 1 and ch[0].peak is None
    # an unobserved non-exchangeable H counts as a capped residual (module docstring of rank.match):
    # z_cap over the 6 H observed
    assert without_ch.parts.shift >= DEFAULT_SETTINGS.z_cap / 6 - 1e-9
    assert without_ch.misfit - with_ch.misfit > 1.0
    peaks, counts, _ = _observed("isopropanol")
    no_oh = match([s for s in signals if not s.exchangeable], peaks, counts, 0, False)
    assert with_ch.misfit == pytest.approx(no_oh.misfit, abs=1e-9)


def test_unobserved_oh_in_d2o_costs_nothing_and_unobserved_ch_still_does():
    # ethanol in D2O (Gottlieb et al. 1997, D2O column, from memory): 3.65 (q, 2H), 1.17 (t, 3H)
    peaks = parse_peak_text("3.65 (q, J = 7.1 Hz, 2H), 1.17 (t, J = 7.1 Hz, 3H)").peaks
    signals = predict_smiles("CCO", solvent="D2O")
    in_d2o = match(signals, peaks, (2, 3), 1, True)
    assert [p.peak for p in in_d2o.pairings if signals[p.signal].exchangeable] == [None]
    no_oh = [s for s in signals if not s.exchangeable]
    assert in_d2o.misfit == pytest.approx(match(no_oh, peaks, (2, 3), 0, True).misfit, abs=1e-9)
    # dimethyl ether against the same list: both CH3 would need to be at 3.65 and 1.17
    other = match(predict_smiles("COC", solvent="D2O"), peaks, (2, 3), 1, True)
    assert other.misfit > in_d2o.misfit + 1.0


# ------------------------------------------------------------- multiplicities ----


def test_penalty_table_of_first_order_patterns():
    # n+1 rule (Silverstein-Webster-Kiemle ch. 3): the number of partners a pattern implies
    assert multiplicity_penalty("t", "t", False) == 0
    assert multiplicity_penalty("d", "t", False) > 0
    assert multiplicity_penalty("s", "q", False) > 0
    assert multiplicity_penalty("s", "q", False) >= multiplicity_penalty("d", "t", False)
    assert multiplicity_penalty("m", "t", False) == 0  # an m says nothing (common practice)
    assert multiplicity_penalty("q", "dt", False) < multiplicity_penalty("s", "dt", False)
    # an exchangeable H is usually a broad singlet whatever it is bonded to (common practice)
    assert multiplicity_penalty("br s", "t", True) == 0


def test_observed_doublet_against_predicted_triplet_costs_multiplicity():
    # known.tsv isopropanol: the 6H doublet at 1.22; 1-propanol would put a CH3 triplet there
    signals, peaks, wrong = _match("CCCO", "isopropanol")
    methyl = [p for p in wrong.pairings if signals[p.signal].family == "CH3"]
    assert len(methyl) == 1
    assert peaks[methyl[0].peak].multiplicity == "d"
    assert signals[methyl[0].signal].multiplicity == "t"
    assert methyl[0].multiplicity_penalty == multiplicity_penalty("d", "t", False) > 0
    assert wrong.parts.multiplicity >= methyl[0].multiplicity_penalty * DEFAULT_SETTINGS.w_multiplicity
    _, _, right = _match("CC(C)O", "isopropanol")
    assert right.parts.multiplicity == 0


def test_singlet_against_coupled_classes_costs_multiplicity():
    # known.tsv dichloroethane: 3.73 (s, 4H); 1,1-dichloroethane gives a CH3 d and a CH q
    signals, _, wrong = _match("CC(Cl)Cl", "dichloroethane")
    assert sorted(s.multiplicity for s in signals) == ["d", "q"]
    assert all(p.multiplicity_penalty > 0 for p in wrong.pairings)
    # both classes sit in the one sharp singlet though they couple to each other (about 6 Hz):
    # coupled non-equivalent H do not give a sharp singlet (common practice), an extra term
    s = DEFAULT_SETTINGS
    assert wrong.parts.multiplicity == pytest.approx(
        s.w_multiplicity * (sum(p.multiplicity_penalty for p in wrong.pairings) + s.coupled_singlet), abs=1e-9
    )
    _, _, right = _match("ClCCCl", "dichloroethane")
    assert right.parts.multiplicity == 0
    assert right.misfit < wrong.misfit


# ---------------------------------------------------------------- coupling J ----


@pytest.mark.parametrize(
    ("row_id", "trans", "cis"),
    [
        ("ethyl_crotonate", "CCOC(=O)/C=C/C", "CCOC(=O)/C=C\\C"),
        ("methyl_cinnamate", "COC(=O)/C=C/c1ccccc1", "COC(=O)/C=C\\c1ccccc1"),
    ],
)
def test_sixteen_hz_alkene_coupling_fits_trans_better_than_cis(row_id, trans, cis):
    # known.tsv rows give 3J = 15.6 and 16.0 Hz across the C=C: trans (12-18 Hz), not cis (6-12 Hz)
    trans_signals, _, e = _match(trans, row_id)
    cis_signals, _, z = _match(cis, row_id)
    assert e.parts.coupling < z.parts.coupling
    assert e.misfit < z.misfit

    def alkene_j(signals, m):
        return sum(p.coupling_penalty for p in m.pairings if signals[p.signal].family == "alkene")

    assert alkene_j(trans_signals, e) < alkene_j(cis_signals, z)


def test_sixteen_hz_doublets_of_methyl_cinnamate_cost_no_coupling_for_the_e_isomer():
    # known.tsv methyl_cinnamate: 7.70 (d, J = 16.0 Hz), 6.45 (d, J = 16.0 Hz)
    _, _, e = _match("COC(=O)/C=C/c1ccccc1", "methyl_cinnamate")
    assert e.parts.coupling == 0


def test_coupling_penalty_grows_with_the_gap_beyond_tolerance():
    tol = DEFAULT_SETTINGS.j_tolerance
    assert coupling_penalty((16.0,), (16.0,), tol) == 0
    assert coupling_penalty((16.0,), (10.0,), tol) > coupling_penalty((16.0,), (14.0,), tol)
    assert coupling_penalty((16.0,), (), tol) == 0  # no predicted J: nothing to compare


def test_coupling_penalty_grows_by_one_per_step_beyond_tolerance():
    # Settings.j_step: half a step beyond the tolerance costs half the penalty; a whole step, all of it
    tol, step = DEFAULT_SETTINGS.j_tolerance, DEFAULT_SETTINGS.j_step
    assert coupling_penalty((10.0,), (10.0 + tol + step / 2,), tol) == pytest.approx(0.5)
    assert coupling_penalty((10.0,), (10.0 + tol + 2 * step,), tol) == 1.0
    assert coupling_penalty((10.0,), (10.0 + tol + step / 2,), tol, step=step / 2) == pytest.approx(1.0)


# -------------------------------------------------------------- misfit parts ----

SUM_CASES = [
    ("ethyl_acetate", "CCOC(C)=O"),
    ("ethyl_acetate", "CCC(=O)OC"),
    ("butanone", "CCC(C)=O"),
    ("butanone", "CCCC=O"),
    ("isopropanol", "CCCO"),
    ("dichloroethane", "CC(Cl)Cl"),
    ("ethylbenzene", "Cc1ccc(C)cc1"),
    ("ethyl_crotonate", "CCOC(=O)/C=C\\C"),
    ("acetanilide", "CC(=O)Nc1ccccc1"),
]


@pytest.mark.parametrize(("row_id", "smiles"), SUM_CASES)
def test_misfit_is_the_sum_of_its_parts(row_id, smiles):
    signals, _, m = _match(smiles, row_id)
    parts = m.parts
    assert m.misfit == pytest.approx(
        parts.shift + parts.integral + parts.multiplicity + parts.coupling + parts.count, abs=2e-6
    )
    assert all(x >= 0 for x in parts)
    s = DEFAULT_SETTINGS
    # J and M are the weighted sums of the per-signal penalties (M may add the coupled-singlet term)
    assert parts.coupling == pytest.approx(s.w_coupling * sum(p.coupling_penalty for p in m.pairings), abs=1e-9)
    assert parts.multiplicity >= s.w_multiplicity * sum(p.multiplicity_penalty for p in m.pairings) - 1e-9
    # every predicted signal appears once, and the protons placed never exceed its n_h
    assert sorted(p.signal for p in m.pairings) == list(range(len(signals)))
    assert all(0 < p.protons <= signals[p.signal].n_h for p in m.pairings)


@pytest.mark.parametrize(("row_id", "smiles"), [("ethyl_acetate", "CCOC(C)=O"), ("butanone", "CCC(C)=O"),
                                                ("butanone", "CCCC=O"), ("bromoethane", "CCBr")])
def test_shift_part_is_the_mean_capped_squared_residual(row_id, smiles):
    # S = (1/H) sum over protons of min(((obs - pred) / sigma)^2, z_cap), rank.match docstring;
    # these rows give single shifts (no ranges), so the residual is to the peak's centre
    signals, peaks, m = _match(smiles, row_id)
    assert all(p.peak is not None and p.protons == signals[p.signal].n_h for p in m.pairings)
    total = sum(
        signals[p.signal].n_h
        * min(((peaks[p.peak].shift - signals[p.signal].shift) / signals[p.signal].sigma) ** 2,
              DEFAULT_SETTINGS.z_cap)
        for p in m.pairings
    )
    n_h = sum(s.n_h for s in signals)
    assert m.parts.shift == pytest.approx(total / n_h, abs=1e-9)


def test_z_of_a_range_is_the_signed_residual_from_its_nearest_edge():
    # ethylbenzene with its ring multiplet written as a narrow range (CDCl3 values from memory): the
    # ring classes predicted at 7.30, 7.22 and 7.19 lie above, inside and below 7.25-7.20; the residual is
    # to the nearest point of the range (rank.match docstring), observed minus predicted, 0 inside
    peaks = parse_peak_text("7.25-7.20 (m, 5H), 2.65 (q, J = 7.6 Hz, 2H), 1.24 (t, J = 7.6 Hz, 3H)").peaks
    signals = predict_smiles("CCc1ccccc1")
    m = match(signals, peaks, (5, 2, 3), 0, False)
    ring = {signals[p.signal].shift: p for p in m.pairings if p.peak == 0}
    assert set(ring) == {7.30, 7.22, 7.19}
    assert ring[7.30].z == pytest.approx((7.25 - 7.30) / signals[ring[7.30].signal].sigma)
    assert ring[7.22].z == 0.0
    assert ring[7.19].z == pytest.approx((7.20 - 7.19) / signals[ring[7.19].signal].sigma)
    # the printed z is the scored one: S is the mean over protons of the capped z squared
    cap = DEFAULT_SETTINGS.z_cap
    assert all(p.protons == signals[p.signal].n_h for p in m.pairings)
    assert m.parts.shift == pytest.approx(sum(p.protons * min(p.z ** 2, cap) for p in m.pairings) / 10, abs=1e-12)


def test_z_of_a_single_shift_is_the_residual_to_it():
    # known.tsv bromoethane: a peak given as one value is its own nearest point
    signals, peaks, m = _match("CCBr", "bromoethane")
    for p in m.pairings:
        s = signals[p.signal]
        assert p.z == pytest.approx((peaks[p.peak].shift - s.shift) / s.sigma, abs=1e-12)


def test_coupled_singlet_counts_couplings_from_its_settings_threshold():
    # 1,1-dichloroethane in the 3.73 singlet of known.tsv dichloroethane: CH3 and CH couple by the
    # vic_sp3 J of coupling.tsv (7.0 Hz), counted from Settings.coupled_singlet_min_j (3 Hz) up
    peaks, counts, missing = _observed("dichloroethane")
    signals = predict_smiles("CC(Cl)Cl")
    default = match(signals, peaks, counts, missing, False)
    above = match(signals, peaks, counts, missing, False, replace(DEFAULT_SETTINGS, coupled_singlet_min_j=8.0))
    assert default.parts.multiplicity - above.parts.multiplicity == pytest.approx(
        DEFAULT_SETTINGS.w_multiplicity * DEFAULT_SETTINGS.coupled_singlet)


# --------------------------------------------------------- optimal assignment ----


def _brute_force(cost: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The cheapest assignment of every row to a distinct column, by trying them all."""
    n_rows, n_cols = cost.shape
    rows = np.arange(n_rows)
    best, best_cols = None, None
    for cols in itertools.permutations(range(n_cols), n_rows):
        total = cost[rows, list(cols)].sum()
        if best is None or total < best - 1e-12:
            best, best_cols = total, cols
    return rows, np.array(best_cols)


BRUTE_CASES = [
    ("bromoethane", "CCBr"),            # 2 signals, 5 H: 120 assignments
    ("isopropanol", "CC(C)O"),          # 3 signals (OH unobserved), 8 rows: 40,320 assignments
    ("isopropanol", "CCOC"),            # 3 signals of a wrong isomer against the same list
    ("acetaldehyde", "CC=O"),           # 2 signals, 4 H
]


@pytest.mark.parametrize(("row_id", "smiles"), BRUTE_CASES)
def test_hungarian_assignment_is_as_cheap_as_brute_force(row_id, smiles, monkeypatch):
    seen = []

    def recording(cost, *args, **kwargs):
        seen.append(np.array(cost, dtype=float))
        return linear_sum_assignment(cost, *args, **kwargs)

    monkeypatch.setattr(match_module, "linear_sum_assignment", recording)
    _, _, hungarian = _match(smiles, row_id)
    assert len(seen) == 1
    cost = seen[0]
    assert cost.shape[0] <= cost.shape[1] <= 8
    r, c = linear_sum_assignment(cost)
    br, bc = _brute_force(cost)
    assert cost[r, c].sum() == pytest.approx(cost[br, bc].sum(), abs=1e-9)

    # and the misfit is the same when the brute-force assignment is used instead
    monkeypatch.setattr(match_module, "linear_sum_assignment", lambda cost: _brute_force(np.asarray(cost)))
    _, _, brute = _match(smiles, row_id)
    assert brute.misfit == pytest.approx(hungarian.misfit, abs=1e-9)


def test_brute_force_reference_agrees_with_scipy_on_a_small_matrix():
    # a fixed 3 x 4 matrix whose optimum (rows to columns 1, 0, 3; cost 1 + 2 + 2) is checked by hand
    cost = np.array([[4.0, 1.0, 3.0, 9.0], [2.0, 0.5, 5.0, 9.0], [3.0, 2.0, 2.5, 2.0]])
    _, c = _brute_force(cost)
    assert list(c) == [1, 0, 3]
    sr, sc = linear_sum_assignment(cost)
    assert cost[sr, sc].sum() == pytest.approx(5.0)


# ------------------------------------------------ unreported multiplicities ----


@pytest.mark.parametrize(
    ("smiles", "text"),
    [
        # tert-butyl methyl ether, shifts and H counts only as a database lists them (from memory)
        ("COC(C)(C)C", "3.22 (3H), 1.19 (9H)"),
        # ethyl acetate without multiplicities (Gottlieb et al. 1997, from memory)
        ("CCOC(C)=O", "4.12 (2H), 2.05 (3H), 1.26 (3H)"),
    ],
)
def test_unreported_multiplicities_cost_nothing(smiles, text):
    peaks = parse_peak_text(text).peaks
    counts = tuple(int(p.integral) for p in peaks)
    result = match(predict_smiles(smiles), peaks, counts, 0, False)
    assert result.parts.multiplicity == 0.0
    assert result.parts.coupling == 0.0


def test_an_unreported_multiplicity_is_not_read_as_a_multiplet():
    # a singlet-only structure against peaks written "m" pays the lone-singlet-in-a-multiplet penalty;
    # the same peaks with no multiplicity written pay nothing (common practice: unknown is not m)
    signals = predict_smiles("COC(C)(C)C")
    as_m = parse_peak_text("3.22 (m, 3H), 1.19 (m, 9H)").peaks
    unknown = parse_peak_text("3.22 (3H), 1.19 (9H)").peaks
    assert match(signals, as_m, (3, 9), 0, False).parts.multiplicity > 0
    assert match(signals, unknown, (3, 9), 0, False).parts.multiplicity == 0


# ------------------------------------------------------ small observed J ----


def test_allylic_j_reported_for_e_crotonate_costs_nothing():
    # ethyl (E)-crotonate: H-2 5.84 (dq, J = 15.6, 1.7 Hz) and CH3 1.87 (dd, J = 6.9, 1.7 Hz) carry the
    # four-bond allylic coupling (typical literature values, from memory)
    text = ("6.97 (dq, J = 15.6, 6.9 Hz, 1H), 5.84 (dq, J = 15.6, 1.7 Hz, 1H), 4.18 (q, J = 7.1 Hz, 2H), "
            "1.87 (dd, J = 6.9, 1.7 Hz, 3H), 1.28 (t, J = 7.1 Hz, 3H)")
    peaks = parse_peak_text(text).peaks
    result = match(predict_smiles("C/C=C/C(=O)OCC"), peaks, (1, 1, 2, 3, 3), 0, False)
    assert result.parts.multiplicity == 0.0
    assert result.parts.coupling == 0.0


def test_small_observed_couplings_the_prediction_lacks_cost_nothing():
    # 2-methylfuran: the CH3 2.28 shows a 1.0 Hz long-range coupling to H-3 that no table predicts
    # (typical literature value, from memory); written as "d", it is read as the singlet it predicts
    signals = predict_smiles("Cc1ccco1")
    methyl = next(i for i, s in enumerate(signals) if s.family == "CH3")
    assert signals[methyl].multiplicity == "s"
    peaks = parse_peak_text("7.27 (dd, J = 1.8, 0.9 Hz, 1H), 6.27 (dd, J = 3.1, 1.9 Hz, 1H), "
                            "5.96 (m, 1H), 2.28 (d, J = 1.0 Hz, 3H)").peaks
    m = match(signals, peaks, (1, 1, 1, 3), 0, False)
    assert (m.pairings[methyl].multiplicity_penalty, m.pairings[methyl].coupling_penalty) == (0.0, 0.0)
    assert coupling_penalty((7.5, 1.2), (7.3,), 1.5, small=3.0) == 0.0
    assert coupling_penalty((7.5, 4.0), (7.3,), 1.5, small=3.0) > 0.0


def test_a_large_observed_coupling_the_prediction_lacks_still_costs():
    # an alkene H reported dd with 15.6 and 10.2 Hz against a prediction with one 15.6 Hz partner
    assert coupling_penalty((15.6, 10.2), (15.6,), 1.5, small=3.0) > 0.0
