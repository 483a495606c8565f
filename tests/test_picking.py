"""Peak picking on simulated traces with known answers (nmrsim line lists rendered as Lorentzians) and on
the four real spectrometer files of tests/data/spectra."""

from __future__ import annotations

import re
from dataclasses import fields
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, assume, given, settings
from hypothesis import strategies as st

from rank.errors import InputError
from rank.spectra.picking import PickingSettings, first_order, pick_carbon, pick_proton, picking_settings
from rank.spectra.trace import Trace
from rank.tables import read_table

nmrsim = pytest.importorskip("nmrsim")
from nmrsim.qm import qm_spinsystem

FIELD = 400.0
WIDTH_HZ = 0.8
SPECTRA = Path(__file__).parent / "data" / "spectra"


def _multiplet(ppm: float, n_h: float, couplings: list[tuple[float, int]]) -> list[tuple[float, float]]:
    """First-order lines (ppm, area in H) from nmrsim's Multiplet (n+1 rule, binomial intensities)."""
    lines = nmrsim.Multiplet(ppm * FIELD, n_h, couplings).peaklist()
    return [(f / FIELD, a) for f, a in lines]


def _ab(ppm_a: float, ppm_b: float, j: float) -> list[tuple[float, float]]:
    """An AB system (second order), from nmrsim's quantum-mechanical simulation; 2H in all."""
    lines = qm_spinsystem([ppm_a * FIELD, ppm_b * FIELD], np.array([[0, j], [j, 0]]), sparse=False)
    total = sum(a for _, a in lines)
    return [(f / FIELD, 2 * a / total) for f, a in lines]


def _render(lines, points=65536, low=-1.0, high=12.0, offset=0.0, seed=7, slope=True,
            widths: dict[float, float] | None = None) -> Trace:
    """Lorentzian lines (area in H) on a descending axis, with noise (fixed seed) and a sloping baseline; the
    axis is shifted by ``offset`` ppm as a mis-referenced file would be."""
    ppm = np.linspace(high, low, points)
    hz = ppm * FIELD
    y = np.zeros(points)
    for centre, area in lines:
        half = (widths or {}).get(round(centre, 3), WIDTH_HZ) / 2
        y += area * half / np.pi / ((hz - centre * FIELD) ** 2 + half ** 2)
    y += np.random.default_rng(seed).normal(0, 2e-4, points)
    if slope:
        y += 0.004 + 0.0008 * ppm
    return Trace(ppm + offset, y, "1H", FIELD, "CDCl3", "zg30", "simulated")


# Chosen values (not a real compound): an ethyl group, an isopropyl group, a vinyl-type dd and dt, and
# an AB pair with Δν/J = 2; residual CHCl3 at 7.26 and water at 1.56 (solvent table, Fulmer et al.
# Organometallics 2010, 29, 2176), TMS at 0.
ETHYL = _multiplet(4.12, 2, [(7.1, 3)]) + _multiplet(1.26, 3, [(7.1, 2)])
ISOPROPYL = _multiplet(2.62, 1, [(6.9, 6)]) + _multiplet(1.05, 6, [(6.9, 1)])
VINYL = _multiplet(6.45, 1, [(17.0, 1), (10.4, 1)]) + _multiplet(5.25, 1, [(17.0, 1), (1.6, 2)])
AB = _ab(3.80, 3.85, 10.0)
SOLVENT = [(7.26, 0.3), (1.56, 0.4), (0.0, 0.5)]
WIDER = {1.56: 3.0}


@pytest.fixture(scope="module")
def picked():
    return pick_proton(_render(ETHYL + ISOPROPYL + VINYL + AB + SOLVENT, widths=WIDER))


def _correction(note: str) -> float:
    return float(re.search(r"correction ([-+][0-9.]+) ppm", note).group(1))


def _at(result, ppm: float, within: float = 0.02):
    near = [p for p in result.spectrum.peaks if abs(p.shift - ppm) <= within]
    assert len(near) == 1, [p.caption for p in result.spectrum.peaks]
    return near[0]


@pytest.mark.parametrize("ppm, n_h, multiplicity, j", [
    (4.12, 2, "q", (7.1,)), (1.26, 3, "t", (7.1,)),          # nmrsim first-order ethyl
    (2.62, 1, "sept", (6.9,)), (1.05, 6, "d", (6.9,)),       # nmrsim isopropyl
    (6.45, 1, "dd", (17.0, 10.4)), (5.25, 1, "dt", (17.0, 1.6)),  # nmrsim vinyl-type
])
def test_simulated_first_order_signals_read_back(picked, ppm, n_h, multiplicity, j):
    peak = _at(picked, ppm)
    assert abs(peak.shift - ppm) <= 0.005               # common practice: shifts to 0.005 ppm
    assert peak.multiplicity == multiplicity
    assert len(peak.j) == len(j) and all(abs(a - b) <= 0.3 for a, b in zip(peak.j, j))  # J to 0.3 Hz
    assert peak.integral == pytest.approx(n_h, rel=0.05)  # integrals to 5 % (the 1H unit is the smallest signal)


def test_strongly_coupled_ab_pair_reads_as_one_multiplet(picked):
    # nmrsim AB, Δν/J = 2: no first-order reading
    near = [p for p in picked.spectrum.peaks if 3.75 <= p.shift <= 3.90]
    assert near and all(p.multiplicity == "m" for p in near)
    assert sum(p.integral for p in near) == pytest.approx(2, rel=0.05)


def test_solvent_water_and_tms_dropped_with_reasons(picked):
    reasons = {round(d.peak.shift, 2): d.reason for d in picked.dropped if d.peak.integral is None or
               d.peak.integral > 0.1}
    assert reasons[7.26] == "residual CDCl3"
    assert reasons[1.56].startswith("water in CDCl3")
    assert reasons[0.0] == "TMS reference"
    assert not any(abs(p.shift - x) < 0.01 for p in picked.spectrum.peaks for x in (7.26, 1.56, 0.0))
    assert picked.spectrum.nucleus == "1H" and picked.spectrum.solvent == "CDCl3"
    assert picked.spectrum.field_mhz == FIELD


def test_picked_list_has_exactly_the_compound_signals(picked):
    assert len(picked.spectrum.peaks) in (7, 8)   # six first-order signals and the AB (one or two peaks)


def test_offset_axis_is_referenced_on_tms():
    # axis shifted by +0.05 ppm, TMS present: the correction is -0.05 ppm
    result = pick_proton(_render(ETHYL + SOLVENT, offset=0.05))
    assert "TMS" in result.notes[0] and _correction(result.notes[0]) == pytest.approx(-0.05, abs=0.002)
    assert abs(_at(result, 4.12).shift - 4.12) <= 0.005
    assert abs(float(np.max(result.trace.ppm)) - 12.0) <= 0.005


def test_without_tms_the_residual_solvent_line_references():
    result = pick_proton(_render(ETHYL + SOLVENT[:2], offset=-0.04))
    assert "residual CDCl3" in result.notes[0] and _correction(result.notes[0]) == pytest.approx(0.04, abs=0.002)
    assert abs(_at(result, 1.26).shift - 1.26) <= 0.005


def test_without_reference_lines_the_axis_is_kept():
    result = pick_proton(_render(ETHYL, offset=0.02))
    assert "kept" in result.notes[0]
    assert abs(_at(result, 4.14).shift - 4.14) <= 0.005


def test_broad_singlet_is_br_s():
    result = pick_proton(_render(ETHYL + [(5.5, 1.0)], widths={5.5: 12.0}))
    assert _at(result, 5.5).multiplicity == "br s"


def test_13c_satellites_are_dropped():
    # 1J(C,H) 145 Hz: satellites at ±72.5 Hz, 0.55 % each (natural abundance 1.1 %)
    sats = [(3.30 + k * 72.5 / FIELD, 9 * 0.0055) for k in (-1, 1)]
    result = pick_proton(_render([(3.30, 9.0), (2.0, 1.0)] + sats, seed=3))
    assert [round(p.shift, 2) for p in result.spectrum.peaks] == [3.3, 2.0]
    assert sum("13C satellite" in d.reason for d in result.dropped) == 2


def test_a_13c_trace_is_refused_by_pick_proton():
    trace = _render(ETHYL)
    with pytest.raises(InputError):
        pick_proton(Trace(trace.ppm, trace.intensity, "13C", 100.0))


def _peaks_of(result) -> list[str]:
    return [p.caption for p in result.spectrum.peaks]


@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(j1=st.floats(4.0, 16.0), n1=st.integers(1, 3), j2=st.floats(1.2, 9.0), n2=st.integers(0, 2))
def test_random_first_order_multiplets_read_back(j1, n1, j2, n2):
    # exact first-order line lists (nmrsim Multiplet) of up to two couplings
    assume(n2 == 0 or j1 - j2 >= 1.5)
    couplings = [(j1, n1)] + ([(j2, n2)] if n2 else [])
    lines = nmrsim.Multiplet(1000.0, 1, couplings).peaklist()
    positions = sorted({round(f, 6) for f, _ in lines})
    gaps = np.diff(positions)
    assume(all(g < 0.01 or g > 4 * WIDTH_HZ for g in gaps))
    merged: dict[float, float] = {}
    for f, a in lines:
        key = min(merged, key=lambda x: abs(x - f), default=None)
        if key is not None and abs(key - f) < 0.01:
            merged[key] += a
        else:
            merged[f] = a
    found = first_order(tuple(merged), tuple(merged.values()), (WIDTH_HZ,) * len(merged))
    assert found is not None
    name, js, centre = found
    letters = {1: "d", 2: "t", 3: "q"}
    expected = letters[n1] + (letters[n2] if n2 else "")
    assert name == expected
    assert all(abs(a - b) <= 0.3 for a, b in zip(js, [j1, j2][: len(js)]))
    assert centre == pytest.approx(1000.0, abs=0.05)


# ---------------------------------------------------------------- 13C and DEPT-135

C_FIELD = 100.6


def _carbon_trace(lines: list[tuple[float, float]], dept: bool = False, seed: int = 5) -> Trace:
    ppm = np.linspace(230, -10, 65536)
    hz = ppm * C_FIELD
    y = np.random.default_rng(seed).normal(0, 2e-3, ppm.size)
    for centre, height in lines:
        y += height / (1 + ((hz - centre * C_FIELD) / 0.6) ** 2)
    return Trace(ppm, y, "13C", C_FIELD, "CDCl3", "dept135" if dept else "zgpg30", "simulated")


# chosen values for ethyl acetate-like lines; CDCl3 triplet 77.16, J(C,D) 32 Hz (solvent table)
CARBONS = [(170.9, 0.3), (60.4, 1.0), (21.0, 1.0), (14.2, 1.0)]
CDCL3 = [(77.16 + k * 32.0 / C_FIELD, 1.5) for k in (-1, 0, 1)]
DEPT = [(60.4, -1.0), (21.0, 1.0), (14.2, 1.0)]


def test_carbon_lines_with_dept_types():
    result = pick_carbon(_carbon_trace(CARBONS + CDCL3), dept135=_carbon_trace(DEPT, dept=True))
    got = {round(p.shift, 1): p.n_h for p in result.spectrum.peaks}
    # DEPT-135: absent C, down CH2; up below 20 ppm CH3; up between 20 and 65 ppm left open (rules/picking.tsv)
    assert got == {170.9: 0, 60.4: 2, 21.0: None, 14.2: 3}
    assert sum(d.reason.startswith("residual CDCl3") for d in result.dropped) == 3
    assert any("untyped" in n for n in result.notes)


def test_carbon_axis_referenced_on_the_solvent_triplet():
    shifted = _carbon_trace(CARBONS + CDCL3)
    result = pick_carbon(Trace(shifted.ppm + 0.4, shifted.intensity, "13C", C_FIELD, "CDCl3"))
    assert [round(p.shift, 1) for p in result.spectrum.peaks] == [170.9, 60.4, 21.0, 14.2]
    assert _correction(result.notes[0]) == pytest.approx(-0.4, abs=0.005)


def test_carbon_without_dept_leaves_types_open():
    result = pick_carbon(_carbon_trace(CARBONS + CDCL3))
    assert all(p.n_h is None for p in result.spectrum.peaks)


# ---------------------------------------------------------------- settings


def test_every_setting_has_a_row_with_a_note():
    rows = {r["id"]: r for r in read_table("picking")}
    assert set(rows) == {f.name for f in fields(PickingSettings)}
    assert all(r["note"] for r in rows.values())
    assert isinstance(picking_settings().max_spins, int)


# ---------------------------------------------------------------- real spectrometer files

def _class_counts(mol_path: Path) -> list[int]:
    """H on carbon per symmetry class of the structure (RDKit canonical ranks without tie breaking), the two H
    of a terminal =CH2 apart (cis and trans to the substituent), plus one per O-H or N-H."""
    from rdkit import Chem

    mol = Chem.MolFromMolFile(str(mol_path))
    ranks = list(Chem.CanonicalRankAtoms(mol, breakTies=False))
    counts: dict[int, int] = {}
    for atom in mol.GetAtoms():
        h = atom.GetTotalNumHs()
        if not h:
            continue
        if atom.GetSymbol() == "C" and h == 2 and any(b.GetBondTypeAsDouble() == 2 for b in atom.GetBonds()):
            counts[-atom.GetIdx() - 1] = 1
            counts[-atom.GetIdx() - 1000] = 1
            continue
        counts[ranks[atom.GetIdx()]] = counts.get(ranks[atom.GetIdx()], 0) + h
    return sorted(counts.values())


@pytest.mark.parametrize("cas", ["141-32-2", "620-71-3", "623-70-1"])
def test_real_1h_integrals_match_the_structure(cas):
    # real files (tests/data/spectra, MIT licence) and their structure.mol
    from rank.spectra.trace import read_trace

    result = pick_proton(read_trace(SPECTRA / cas / "1h.dx"))
    main = [p.integral for p in result.spectrum.peaks if p.integral >= 0.5]   # impurities hold well under 1 H
    expected = _class_counts(SPECTRA / cas / "structure.mol")
    assert sorted(round(x) for x in main) == expected
    assert all(abs(x - round(x)) <= 0.1 * round(x) for x in main)   # within 10 % of the H count


def test_real_aspirin_ring_and_methyl_integrals_and_the_broad_acid_h():
    # 50-78-2 (aspirin, 300 MHz, tests/data/spectra): four ring H and the acetyl CH3 within 10 %; the CO2H is
    # one broad singlet whose integral carries the baseline under it (read 1.6 H), so only its presence is checked
    from rank.spectra.trace import read_trace

    result = pick_proton(read_trace(SPECTRA / "50-78-2" / "1h.dx"))
    sharp = [p for p in result.spectrum.peaks if p.integral >= 0.5 and p.multiplicity != "br s"]
    assert sorted(round(p.integral) for p in sharp) == [1, 1, 1, 1, 3]
    assert all(abs(p.integral - round(p.integral)) <= 0.1 * round(p.integral) for p in sharp)
    assert [p.multiplicity for p in sharp] == ["dd", "td", "td", "dd", "s"]
    assert [p.multiplicity for p in result.spectrum.peaks if p.integral >= 0.5 and p not in sharp] == ["br s"]


def _carbon_classes(mol_path: Path) -> list[int]:
    """H count of each symmetry class of carbon (RDKit canonical ranks without tie breaking)."""
    from rdkit import Chem

    mol = Chem.MolFromMolFile(str(mol_path))
    ranks = list(Chem.CanonicalRankAtoms(mol, breakTies=False))
    classes = {ranks[a.GetIdx()]: a.GetTotalNumHs() for a in mol.GetAtoms() if a.GetSymbol() == "C"}
    return sorted(classes.values())


@pytest.mark.parametrize("cas", ["141-32-2", "50-78-2", "620-71-3", "623-70-1"])
def test_real_13c_one_line_per_carbon_class(cas):
    # real files (tests/data/spectra) and their structure.mol: solvent triplet, grease and artefacts dropped
    from rank.spectra.trace import read_trace

    folder = SPECTRA / cas
    dept = read_trace(folder / "dept135.dx") if (folder / "dept135.dx").exists() else None
    result = pick_carbon(read_trace(folder / "13c.dx"), dept135=dept)
    expected = _carbon_classes(folder / "structure.mol")
    assert len(result.spectrum.peaks) == len(expected)
    if dept is not None:
        # DEPT-135 types: every typed line right; untyped only where an up line may be CH or CH3
        typed = sorted(p.n_h for p in result.spectrum.peaks if p.n_h is not None)
        untyped = [p for p in result.spectrum.peaks if p.n_h is None]
        assert all(20 <= p.shift <= 65 for p in untyped)
        remaining = list(expected)
        for n in typed:
            remaining.remove(n)
        assert all(n in (1, 3) for n in remaining) and len(remaining) == len(untyped)


def test_spinning_sidebands_are_dropped():
    # a symmetric pair at ±25 Hz, 0.8 % each, around a big singlet (spinning at 25 Hz; common practice)
    bands = [(2.10 + k * 25.0 / FIELD, 6 * 0.008) for k in (-1, 1)]
    result = pick_proton(_render([(2.10, 6.0), (3.70, 2.0)] + bands, seed=11))
    assert [round(p.shift, 2) for p in result.spectrum.peaks] == [3.7, 2.1]
    assert sum("spinning sideband" in d.reason for d in result.dropped) == 2


def test_dmso_residual_quintet_is_dropped():
    # CHD2 residual of DMSO-d6 at 2.50, 1:2:3:2:1 with J(H,D) 1.9 Hz (solvent table; from memory)
    quintet = [(2.50 + k * 1.9 / FIELD, 0.3 * w / 9) for k, w in zip(range(-2, 3), (1, 2, 3, 2, 1))]
    trace = _render(ETHYL + quintet, seed=5)
    result = pick_proton(Trace(trace.ppm, trace.intensity, "1H", FIELD, "DMSO-d6"))
    assert [round(p.shift, 2) for p in result.spectrum.peaks] == [4.12, 1.26]
    assert any(d.reason == "residual DMSO-d6" for d in result.dropped)


def test_ab_pair_read_as_two_doublets_is_flagged_strongly_coupled():
    # nmrsim AB, Δν/J = 4: each half looks like a roofed doublet; the pair shares J and is second order
    result = pick_proton(_render(ETHYL + _ab(3.50, 3.60, 10.0), seed=13))
    near = [p for p in result.spectrum.peaks if 3.4 <= p.shift <= 3.7]
    assert len(near) == 2 and all(p.multiplicity == "m" for p in near)
    assert any(n.startswith("strongly coupled") for n in result.notes)
    assert any(n.startswith("spin system") for n in result.notes)


def test_pick_carbon_refuses_a_1h_trace_and_a_1h_dept():
    carbon = _carbon_trace(CARBONS + CDCL3)
    proton = _render(ETHYL)
    with pytest.raises(InputError):
        pick_carbon(proton)
    with pytest.raises(InputError):
        pick_carbon(carbon, dept135=proton)
