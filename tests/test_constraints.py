"""Limits on carbon counts read from a 13C peak list (``rank/generate/constraints.py``,
``rules/constraints.tsv``): every limit keeps the true structure of the real compounds of the open
data, and the generator with limits gives exactly its own unconstrained structures that satisfy them.

The real data are the fit part of ``benchmarks/data/open-spectra.tsv`` (NMRShiftDB2: Steinbeck & Kuhn,
Phytochemistry 2004, 65, 2711; Kuhn & Schloerer, Magn. Reson. Chem. 2015, 53, 582), the split of
``rank.bench.read_cases``; whether a true structure satisfies a limit is counted with RDKit, the reference
library, on the structure as the database gives it.  Small lists are typical CDCl3 values (Pretsch,
Buhlmann, Badertscher, 4th ed., 13C chapter; from memory).
"""

from __future__ import annotations

import re
from pathlib import Path

import pytest
from rdkit import Chem

from rank.bench import read_cases
from rank.formula import parse_formula
from rank.generate import Hint, IsomerStream
from rank.generate.constraints import Kind, Limit, carbon_limits, constraint_rules, hint_limit, limit_rows
from rank.generate.plan import RunPlanner

DATA = Path(__file__).resolve().parent.parent / "benchmarks" / "data" / "open-spectra.tsv"
_TYPES = {"C": 0, "CH": 1, "CH2": 2, "CH3": 3}

# Rows of the fit part whose true structure breaks a limit, and why: each is a database row in error,
# none a reason to widen a window or a tolerance (NMRShiftDB2 id -> limits broken).
KNOWN_WRONG_ROWS = {
    # every one of nine carbons typed C (the DEPT types are missing, not C)
    "40093506": {"13C: quaternary C", "13C: CH", "13C: CH2", "13C: CH3", "13C: CH on a double bond, at most",
                 "13C: CH environments"},
    # the CH2OH carbon at 59.5 typed CH: five CH peaks for four CH
    "20093244": {"13C: CH"},
    # dimethoxymethane: OCH2O given at 109.9 ppm; it is near 97.5 (Pretsch 13C tables, from memory)
    "10016722": {"13C: CH2 on a double bond"},
    # 3 peaks for 7 carbons without symmetry: the list is incomplete
    "10023571": {"13C: carbon environments"},
    # a C at 193.5 ppm that this bisulfite adduct does not have (the free aldehyde's carbonyl)
    "20209090": {"13C: C=O, C=N or C=S carbons, allene centres, vinylogous ester beta C"},
}


def _c13_column() -> dict[str, str]:
    """InChIKey -> the c13 column of the open data (``Case`` has no 13C list)."""
    out = {}
    for line in DATA.read_text(encoding="utf-8").splitlines():
        if line.startswith("#") or not line.strip():
            continue
        fields = line.split("\t")
        out[fields[0]] = fields[6]
    return out


def _peaks(text: str, typed: bool = True) -> list[tuple[float, int | None]]:
    return [(float(s), _TYPES[t] if typed else None) for s, t in re.findall(r"(-?[\d.]+) \(([^)]*)\)", text)]


@pytest.fixture(scope="module")
def fit_part():
    c13 = _c13_column()
    return [(case, Chem.MolFromSmiles(case.smiles), c13[case.id]) for case in read_cases(str(DATA), "fit")]


def _violations(fit_part, typed: bool) -> dict[str, set[str]]:
    wrong: dict[str, set[str]] = {}
    for case, mol, text in fit_part:
        for limit in carbon_limits(parse_formula(case.formula), _peaks(text, typed)):
            if not limit.holds(mol):
                wrong.setdefault(case.name.removeprefix("NMRShiftDB2 "), set()).add(limit.name)
    return wrong


def test_every_fit_part_compound_satisfies_its_own_typed_limits(fit_part):
    assert len(fit_part) == 2346
    assert _violations(fit_part, typed=True) == KNOWN_WRONG_ROWS


def test_every_fit_part_compound_satisfies_its_own_untyped_limits(fit_part):
    assert _violations(fit_part, typed=False) == {"10023571": {"13C: carbon environments"}}


def test_every_window_row_bounds_some_fit_part_compound(fit_part):
    fired = set()
    for case, _, text in fit_part:
        fired |= {lim.name for lim in carbon_limits(parse_formula(case.formula), _peaks(text))}
    rows = limit_rows()
    assert {rows[name] for name in fired if name in rows} == set(rows.values())


def test_settings_rows_are_read():
    settings = {r.id: r.tolerance for r in constraint_rules() if r.kind == "setting"}
    assert settings == {"missing": 1, "shared": 2, "environments": 12, "mistyped": 0}


def test_typed_peaks_fix_the_counts_of_ethyl_acetate():
    # ethyl acetate, CDCl3: 171.1 (C=O), 60.4 (OCH2), 21.0 (CH3CO), 14.2 (CH3)
    limits = {lim.name: lim for lim in carbon_limits(parse_formula("C4H8O2"),
                                                     [(171.1, 0), (60.4, 2), (21.0, 3), (14.2, 3)])}
    assert (limits["13C: CH3"].lower, limits["13C: CH3"].upper) == (2, 2)
    assert (limits["13C: CH"].lower, limits["13C: CH"].upper) == (0, 0)
    assert "13C: CH3 on O or N" not in limits  # no CH3 in 49-70 ppm
    assert limits["13C: carbonyl carbons, at most"].upper == 1


def test_hidden_carbons_widen_the_upper_bounds():
    # toluene: 137.9 (C), 129.1 (2 CH), 128.3 (2 CH), 125.4 (CH), 21.5 (CH3): 5 peaks for 7 carbons
    limits = {lim.name: lim for lim in carbon_limits(parse_formula("C7H8"),
                                                     [(137.9, 0), (129.1, 1), (128.3, 1), (125.4, 1), (21.5, 3)])}
    assert (limits["13C: CH"].lower, limits["13C: CH"].upper) == (3, 5)
    assert (limits["13C: CH3"].lower, limits["13C: CH3"].upper) == (1, 3)
    assert "2 more carbons may hide in peaks" in limits["13C: CH"].evidence


def test_more_peaks_than_carbons_give_no_limit():
    assert carbon_limits(parse_formula("C2H6O"), [(58.0, 2), (18.0, 3), (77.0, 1)]) == ()


LISTS = [
    # butanone: 209.3 (C), 36.9 (CH2), 29.4 (CH3), 7.9 (CH3)
    ("C4H8O", [(209.3, 0), (36.9, 2), (29.4, 3), (7.9, 3)]),
    ("C4H8O", [(209.3, None), (36.9, None), (29.4, None), (7.9, None)]),
    # ethyl acrylate: 166.1 (C), 130.4 (CH2), 128.7 (CH), 60.5 (CH2), 14.2 (CH3)
    ("C5H8O2", [(166.1, 0), (130.4, 2), (128.7, 1), (60.5, 2), (14.2, 3)]),
    # cyclohexanone: 211.9 (C), 42.0 (2 CH2), 27.1 (2 CH2), 25.0 (CH2)
    ("C6H10O", [(211.9, 0), (42.0, 2), (27.1, 2), (25.0, 2)]),
    # allyl cyanide: 133.3 (CH), 119.0 (CH2), 117.3 (C), 21.9 (CH2)
    ("C4H5N", [(133.3, 1), (119.0, 2), (117.3, 0), (21.9, 2)]),
    # 3-pentanone without types: 211.5, 35.4, 7.9
    ("C5H10O", [(211.5, None), (35.4, None), (7.9, None)]),
]


@pytest.mark.parametrize(("formula", "peaks"), LISTS)
def test_the_generator_with_limits_gives_the_unconstrained_structures_that_satisfy_them(formula, peaks):
    parsed = parse_formula(formula)
    assert_generator_applies(parsed, carbon_limits(parsed, peaks))


def assert_generator_applies(parsed, limits) -> None:
    """The generator with ``limits`` builds exactly its unconstrained structures that satisfy them, fewer than
    all, and tallies what it removed under their names (also used by ``test_proton_limits.py``)."""
    assert limits
    stream = IsomerStream(parsed, limits=limits)
    got = {iso.smiles for iso in stream}
    everything = list(IsomerStream(parsed))
    kept = {iso.smiles for iso in everything if all(lim.holds(iso.mol) for lim in limits)}
    assert got == kept
    assert len(kept) < len(everything)
    # what was removed is tallied under the limits' names (each structure once, to the first limit it breaks)
    assert set(stream.hinted) <= {lim.name for lim in limits}
    assert sum(stream.hinted.values()) > 0


def test_the_tally_names_the_limit_that_refused_distributions():
    # butanone's types: one C, two CH3, one CH2; C4H8O distributions with a CH are refused by the CH limit
    parsed = parse_formula("C4H8O")
    stream = IsomerStream(parsed, limits=carbon_limits(parsed, LISTS[0][1]))
    assert [iso.smiles for iso in stream] == ["CCC(C)=O"]
    assert stream.hinted["13C: CH"] > 0
    assert stream.hinted["13C: quaternary C"] > 0


def test_a_limit_checked_only_on_built_structures_is_tallied_exactly():
    parsed = parse_formula("C4H8O")
    carbonyl = Limit("no carbonyl", "test", Kind(smarts="[#6;$([#6]=[#8]);!$([#6](=*)=*)]"), upper=0)
    stream = IsomerStream(parsed, limits=[carbonyl])
    got = {iso.smiles for iso in stream}
    everything = list(IsomerStream(parsed))
    assert got == {iso.smiles for iso in everything if carbonyl.holds(iso.mol)}
    # butanal, isobutanal, butanone
    assert stream.hinted["no carbonyl"] == sum(not carbonyl.holds(iso.mol) for iso in everything) == 3


def test_no_sp_carbon_bans_triple_bonds_in_the_core():
    parsed = parse_formula("C4H6")
    limit = Limit("no sp carbon", "test", Kind(triple_bond=True, smarts="[#6;!$([#6]#[#6]-[#7,#8,#16])]"), upper=0)
    stream = IsomerStream(parsed, limits=[limit])
    got = {iso.smiles for iso in stream}
    assert got == {iso.smiles for iso in IsomerStream(parsed) if "#" not in iso.smiles}
    assert stream.hinted["no sp carbon"] > 0


@pytest.mark.parametrize("formula", ["C5H10O", "C6H6", "C4H7N"])
def test_a_count_hint_and_its_limit_refuse_the_same_distributions(formula):
    hints = [Hint("methyl groups", "test", hydrogens=3, min_atoms=2),
             Hint("H on sp2 CH carbons", "test", hydrogens=1, min_atoms=2, double_bond=True)]
    parsed = parse_formula(formula)
    for hint in hints:
        limit = hint_limit(hint)
        assert limit is not None and limit.lower == hint.min_atoms
        for d in RunPlanner(parsed, complete=False).distributions():
            assert limit.allows(d.types) == hint.allows(d.types) or hint.double_bond
        with_hint = {iso.smiles for iso in IsomerStream(parsed, hints=[hint])}
        with_limit = {iso.smiles for iso in IsomerStream(parsed, limits=[limit])}
        assert with_hint == with_limit
    assert hint_limit(Hint("ethyl group", "test", fragments=("CC*",))) is None


def test_a_bound_on_carbons_with_a_double_bond_cuts_partial_structures_in_the_core():
    # C6H10: exactly one CH and at most two carbons on a double bond, neither fixed by the types alone
    parsed = parse_formula("C6H10")
    limits = [Limit("one sp2 CH", "test", Kind(hydrogens=(1,), double_bond=True), lower=1, upper=1),
              Limit("two sp2 C", "test", Kind(double_bond=True), upper=2)]
    stream = IsomerStream(parsed, limits=limits)
    got = {iso.smiles for iso in stream}
    everything = IsomerStream(parsed)
    kept = {iso.smiles for iso in everything if all(lim.holds(iso.mol) for lim in limits)}
    assert got == kept and kept
    assert stream.explored < everything.explored  # cut in the core, not built and checked
    assert stream.hinted["one sp2 CH"] > 0 and stream.hinted["two sp2 C"] > 0


def test_a_line_written_with_its_carbon_count_counts_that_many():
    from types import SimpleNamespace

    # toluene with the 2C lines written: 3 CH lines holding 5 CH, no carbon left to hide
    lines = [SimpleNamespace(shift=137.9, n_h=0, carbons=None), SimpleNamespace(shift=129.1, n_h=1, carbons=2),
             SimpleNamespace(shift=128.3, n_h=1, carbons=2), SimpleNamespace(shift=125.4, n_h=1, carbons=None),
             SimpleNamespace(shift=21.5, n_h=3, carbons=None)]
    limits = {lim.name: lim for lim in carbon_limits(parse_formula("C7H8"), lines)}
    assert (limits["13C: CH"].lower, limits["13C: CH"].upper) == (5, 5)
    assert (limits["13C: CH3"].lower, limits["13C: CH3"].upper) == (1, 1)


def test_limits_and_a_group_hint_together_give_the_hinted_structures_that_satisfy_the_limits():
    # butyrophenone, CDCl3: 200.4 (C), 137.1 (C), 132.9 (CH), 128.6 (2 CH), 128.1 (2 CH), 40.5 (CH2),
    # 17.8 (CH2), 13.9 (CH3); five aromatic H read as a monosubstituted benzene ring
    parsed = parse_formula("C10H12O")
    hints = [Hint("monosubstituted benzene ring", "test", fragments=("*c1ccccc1",))]
    limits = carbon_limits(parsed, [(200.4, 0), (137.1, 0), (132.9, 1), (128.6, 1), (128.1, 1), (40.5, 2),
                                    (17.8, 2), (13.9, 3)])
    got = {iso.smiles for iso in IsomerStream(parsed, hints=hints, limits=limits)}
    hinted = list(IsomerStream(parsed, hints=hints))
    assert got == {iso.smiles for iso in hinted if all(lim.holds(iso.mol) for lim in limits)}
    assert got == {"CCCC(=O)c1ccccc1", "CC(=O)CCc1ccccc1", "CCC(=O)Cc1ccccc1"}


# rules/constraints.tsv window row -> (a list it bounds, with its compound; a near miss where it stays silent, why).
# Typical CDCl3 values (Pretsch, Buhlmann, Badertscher, 4th ed., 13C chapter; from memory).
TOLUENE = ("C7H8", "Cc1ccccc1", [(137.9, 0), (129.1, 1), (128.3, 1), (125.4, 1), (21.5, 3)])
BENZOTRIFLUORIDE = ("C7H5F3", "FC(F)(F)c1ccccc1", [(131.8, 1), (130.9, 0), (128.7, 1), (125.3, 1), (124.3, 0)])
HEXANE = ("C6H14", "CCCCCC", [(31.6, 2), (22.7, 2), (14.1, 3)])
BENZENE = ("C6H6", "c1ccccc1", [(128.5, 1)])
EXAMPLES = {
    "dbl_c": (TOLUENE, BENZOTRIFLUORIDE, "the ipso C at 130.9 and the CF3 C at 124.3 are below 136"),
    "dbl_ch": (TOLUENE, ("C7H16O3", "CCOC(OCC)OCC", [(112.6, 1), (59.9, 2), (15.2, 3)]),
               "the orthoformate CH at 112.6 is sp3"),
    "dbl_ch2": (("C5H8O2", "C=CC(=O)OCC", [(166.1, 0), (130.4, 2), (128.7, 1), (60.5, 2), (14.2, 3)]),
                ("C7H6O2", "c1ccc2c(c1)OCO2", [(147.6, 0), (121.6, 1), (108.6, 1), (100.8, 2)]),
                "the OCH2O carbon at 100.8 is sp3"),
    "dbl_any": (("C7H8", "Cc1ccccc1", [(s, None) for s, _ in TOLUENE[2]]),
                ("C7H5F3", "FC(F)(F)c1ccccc1", [(s, None) for s, _ in BENZOTRIFLUORIDE[2]]),
                "no line above 131.8 without types"),
    "dbl_c_max": (HEXANE, ("C6Cl6", "Clc1c(Cl)c(Cl)c(Cl)c(Cl)c1Cl", [(132.5, 0)]),
                  "one C line and five hidden carbons: any of the six may be sp2"),
    "dbl_ch_max": (HEXANE, BENZENE, "one CH line and five hidden carbons: any of the six may be sp2"),
    "dbl_ch2_max": (HEXANE, ("C2H4", "C=C", [(123.3, 2)]), "one CH2 line and one hidden carbon"),
    "dbl_max": (("C6H14", "CCCCCC", [(s, None) for s, _ in HEXANE[2]]), ("C6H6", "c1ccccc1", [(128.5, None)]),
                "as dbl_c_max"),
    "triple_max": (HEXANE, ("C2H2", "C#C", [(71.9, 1)]), "the acetylene line may hold both carbons"),
    "carbonyl_max": (HEXANE, ("C2H2O4", "O=C(O)C(=O)O", [(160.0, 0)]), "the oxalic acid line may hold both"),
    "c_x_min": (("C4H8O", "CCC(C)=O", [(209.3, 0), (36.9, 2), (29.4, 3), (7.9, 3)]),
                ("C4H8O2", "CCOC(C)=O", [(171.1, 0), (60.4, 2), (21.0, 3), (14.2, 3)]),
                "an ester C=O at 171.1 is below 186"),
    "ox_ch3": (("C3H6O2", "COC(C)=O", [(171.4, 0), (51.6, 3), (20.6, 3)]),
               ("C2H6O2S", "CS(C)(=O)=O", [(42.6, 3)]), "CH3SO2 at 42.6 is below 49"),
}


def test_every_window_row_has_an_example_and_a_near_miss():
    assert set(EXAMPLES) == {r.id for r in constraint_rules() if r.kind == "region"}


@pytest.mark.parametrize("row_id", sorted(EXAMPLES))
def test_window_row_bounds_its_example_and_stays_silent_on_its_near_miss(row_id):
    name = {v: k for k, v in limit_rows().items()}[row_id]
    (formula, smiles, peaks), (miss_formula, _, miss_peaks), why = EXAMPLES[row_id]
    fired = {lim.name: lim for lim in carbon_limits(parse_formula(formula), peaks)}
    assert name in fired
    assert fired[name].holds(Chem.MolFromSmiles(smiles))
    assert name not in {lim.name for lim in carbon_limits(parse_formula(miss_formula), miss_peaks)}, why
