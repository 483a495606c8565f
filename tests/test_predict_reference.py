"""The predictor against experimental CDCl3 shifts, compared atom by atom.

Reference: tests/data/reference_shifts.tsv, values from H. E. Gottlieb, V. Kotlyar, A. Nudelman,
J. Org. Chem. 1997, 62, 7512 (Table 1), E. Pretsch et al., Structure Determination of Organic
Compounds, 4th ed., Springer 2009, and R. M. Silverstein et al., Spectrometric Identification of
Organic Compounds, 7th ed., Wiley 2005; all from memory, as the file states per compound.
The comparison code is shared with benchmarks/predict_mae.py, which prints the figures.
"""

from __future__ import annotations

import importlib.util
import statistics
import sys
from pathlib import Path

import pytest

from rank.predict import Predictor

_BENCH = Path(__file__).resolve().parent.parent / "benchmarks" / "predict_mae.py"
_spec = importlib.util.spec_from_file_location("predict_mae", _BENCH)
bench = importlib.util.module_from_spec(_spec)
sys.modules.setdefault("predict_mae", bench)
_spec.loader.exec_module(bench)

ENTRIES = bench.load_reference()
PREDICTOR = Predictor("CDCl3", 400.0)
PAIRS = {e.id: bench.compare(e, PREDICTOR) for e in ENTRIES}
MEASURED = [p for pairs in PAIRS.values() for p in pairs if not p.exchangeable]


def test_reference_set_is_large_and_sourced():
    assert len(ENTRIES) >= 50
    assert {e.source for e in ENTRIES} <= {"G97", "P09", "S05"}
    text = bench.REFERENCE.read_text(encoding="utf-8")
    assert "from memory" in text


def test_reference_set_spans_every_family():
    seen = {p.family for pairs in PAIRS.values() for p in pairs}
    assert {"CH3", "CH2", "CH", "alkene", "aromatic", "heteroaromatic", "aldehyde", "formyl",
            "alkyne", "imine", "OH", "NH", "SH"} <= seen


@pytest.mark.parametrize("entry", ENTRIES, ids=[e.id for e in ENTRIES])
def test_every_assignment_group_meets_a_predicted_signal(entry):
    # compare() raises when a group's atoms carry no signal or the signal count does not fit
    assert bench.compare(entry, PREDICTOR)


def test_mean_absolute_error_over_non_exchangeable_hydrogens_is_at_most_0_12_ppm():
    mae = statistics.fmean(abs(p.error) for p in MEASURED)
    assert mae <= 0.12, f"MAE {mae:.3f} ppm"


def test_compounds_not_cited_in_the_tables_also_meet_the_target():
    held_out = {e.id for e in ENTRIES if not e.in_tables}
    errors = [abs(p.error) for p in MEASURED if p.compound in held_out]
    assert len(held_out) >= 20
    assert statistics.fmean(errors) <= 0.12


def test_no_class_is_off_by_more_than_0_6_ppm():
    worst = max(MEASURED, key=lambda p: abs(p.error))
    assert abs(worst.error) <= 0.6, f"{worst.compound} group {worst.group}: {worst.error:+.2f}"


def test_most_shifts_lie_within_two_sigma():
    # the sigma the matcher uses should cover the errors it meets
    inside = [abs(p.error) <= 2 * p.sigma for p in MEASURED]
    assert sum(inside) / len(inside) >= 0.9


def test_exchangeable_observations_fall_in_the_predicted_range():
    exchange = [p for pairs in PAIRS.values() for p in pairs if p.exchangeable]
    assert exchange and all(p.inside_range for p in exchange)
