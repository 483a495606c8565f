"""Identification with a 13C list beside the 1H list.

Drug-like suspects with amides and heteroaromatic rings must rank first among same-formula decoys
when their 13C lists are given.  Sources: caffeine's lists are the open data set's row
(benchmarks/data/open-spectra.tsv, derived from NMRShiftDB2, id 10016316); lidocaine's and DEET's are
typical literature values in CDCl3, from memory.  The decoys are positional and chain isomers a
chemist would have to rule out, plus, for caffeine, every structure of its formula in the open data.
"""

from __future__ import annotations

from pathlib import Path

import pytest

from rank.bench import read_library
from rank.shortlist import Identifier

LIBRARY = Path(__file__).resolve().parents[1] / "benchmarks" / "data" / "open-structures-by-formula.tsv"

CASES = {
    "caffeine": (
        "C8H10N4O2",
        "Cn1c(=O)c2c(ncn2C)n(C)c1=O",
        "7.53 (s, 1H), 4.00 (s, 3H), 3.57 (s, 3H), 3.40 (s, 3H)",
        "155.3 (C), 151.7 (C), 148.7 (C), 141.6 (CH), 107.5 (C), 33.6 (CH3), 29.7 (CH3), 27.9 (CH3)",
        ["Cn1cnc2c1c(=O)n(C)c(=O)n2C",          # 1,3,9-trimethylxanthine (isocaffeine)
         "CCn1c(=O)c2[nH]cnc2n(C)c1=O"],        # 1-ethyl-3-methylxanthine
    ),
    "lidocaine": (
        "C14H22N2O",
        "CCN(CC)CC(=O)Nc1c(C)cccc1C",
        ("8.93 (br s, 1H), 7.10-7.02 (m, 3H), 3.22 (s, 2H), 2.69 (q, J = 7.1 Hz, 4H), 2.23 (s, 6H), "
        "1.13 (t, J = 7.1 Hz, 6H)"),
        ("170.2 (C), 135.0 (C), 133.9 (C), 128.2 (CH), 127.0 (CH), 57.6 (CH2), 48.9 (CH2), 18.6 (CH3), "
        "12.7 (CH3)"),
        ["CCN(CC)CC(=O)Nc1ccc(C)cc1C",          # 2,4-dimethyl isomer
         "CCN(CC)CC(=O)Nc1cc(C)ccc1C",          # 2,5-dimethyl isomer
         "CCCN(C)CC(=O)Nc1c(C)cccc1C",          # N-methyl-N-propyl isomer
         "CCN(CC)C(C)C(=O)Nc1ccccc1C"],         # a 2-aminopropanamide of o-toluidine
    ),
    "DEET": (
        "C12H17NO",
        "CCN(CC)C(=O)c1cccc(C)c1",
        "7.25-7.13 (m, 4H), 3.53 (br s, 2H), 3.25 (br s, 2H), 2.36 (s, 3H), 1.24 (br s, 3H), 1.10 (br s, 3H)",
        ("171.4 (C), 138.2 (C), 137.2 (C), 129.7 (CH), 128.2 (CH), 126.9 (CH), 123.1 (CH), 43.3 (CH2), "
        "39.2 (CH2), 21.4 (CH3), 14.2 (CH3), 12.9 (CH3)"),
        ["CCN(CC)C(=O)c1ccc(C)cc1",             # para isomer
         "CCN(CC)C(=O)c1ccccc1C",               # ortho isomer
         "CCCN(C)C(=O)c1cccc(C)c1",             # N-methyl-N-propyl isomer
         "CCN(CC)C(=O)Cc1ccccc1"],              # N,N-diethylphenylacetamide
    ),
}


@pytest.mark.parametrize("name", sorted(CASES))
def test_suspect_ranks_first_with_its_carbon_list(name):
    formula, truth, protons, carbons, decoys = CASES[name]
    suspects = [truth, *decoys, *read_library(str(LIBRARY)).get(formula, [])]
    result = Identifier(top=len(suspects), track=truth).identify(formula, protons, suspects, carbon=carbons)
    assert result.tracked_rank() == 1, [(c.smiles, c.misfit) for c in result.candidates[:3]]
    best = result.candidates[0].scored
    assert best.carbon is not None and best.misfit == pytest.approx(best.proton_misfit + best.carbon_misfit,
                                                                     abs=1e-5)


def test_carbon_list_with_more_carbons_than_the_formula_is_refused():
    from rank.errors import InputError

    with pytest.raises(InputError, match="holds 5 carbons but C4H8O2 has 4"):
        Identifier().identify("C4H8O2", "4.12 (q, 2H), 2.05 (s, 3H), 1.26 (t, 3H)",
                              ["CCOC(C)=O"], carbon="171.1, 60.5, 21.0, 14.2, 30.0")
