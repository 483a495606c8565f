"""Shift arithmetic, multiplicities, exchangeable H, solvents, purity, JSON and the predict command.

Observed values named below are CDCl3 shifts from E. Pretsch, P. Buehlmann, M. Badertscher,
Structure Determination of Organic Compounds, 4th ed., Springer 2009 (P09) and from H. E. Gottlieb,
V. Kotlyar, A. Nudelman, J. Org. Chem. 1997, 62, 7512 (G97); all from memory.
"""

from __future__ import annotations

import ast
import json
import math
import subprocess
import sys
from pathlib import Path

import pytest
from rdkit import Chem

import rank
from rank.cli import main
from rank.errors import InputError
from rank.predict import Predictor, Signal, Term, parse_smiles, predict_smiles, signal_table
from rank.spectra import coupling_groups


def by_atom(smiles: str, solvent: str = "CDCl3", field: float = 400.0) -> dict[int, list[Signal]]:
    out: dict[int, list[Signal]] = {}
    for s in Predictor(solvent, field).predict(Chem.MolFromSmiles(smiles)):
        for a in s.atoms:
            out.setdefault(a, []).append(s)
    return out


def one(smiles: str, atom: int, solvent: str = "CDCl3", field: float = 400.0) -> Signal:
    (signal,) = by_atom(smiles, solvent, field)[atom]
    return signal


# ------------------------------------------------------------ worked examples ----


def test_ch2_between_acyloxy_and_phenyl_is_base_plus_attenuated_increments():
    # shift_alkyl.tsv: base 1.37, alpha OC(=O)R 2.72, alpha Ar 1.28 times 0.75 (second alpha
    # increment on a carbon carrying O); benzyl acetate CH2 5.10 (P09, from memory)
    s = one("CC(=O)OCc1ccccc1", 4)
    assert s.terms == (Term("CH2 base", 1.37), Term("α OC(=O)R", 2.72), Term("α Ar (×0.75)", 0.96))
    assert s.shift == pytest.approx(5.05)
    assert abs(s.shift - 5.10) <= 2 * s.sigma


def test_para_disubstituted_benzene_adds_ortho_and_meta_increments():
    # shift_benzene.tsv: 7.36 + ortho OR -0.48 + meta CH3 -0.11; 4-methylanisole 6.81 and 7.08
    # (Silverstein 7th ed., from memory)
    mol = "Cc1ccc(OC)cc1"
    near_ome = one(mol, 3)
    assert near_ome.terms == (Term("benzene base", 7.36), Term("meta CH3", -0.11), Term("ortho OR", -0.48))
    assert near_ome.shift == pytest.approx(6.77)
    near_me = one(mol, 2)
    assert near_me.shift == pytest.approx(7.36 - 0.18 - 0.09)
    assert abs(near_ome.shift - 6.81) <= near_ome.sigma and abs(near_me.shift - 7.08) <= near_me.sigma


def test_trisubstituted_alkene_sums_gem_cis_and_trans_increments():
    # Pascual-Meier-Simon: 5.25 + Z_gem(alkyl) 0.45 + Z_cis(alkyl) -0.22 + Z_trans(alkyl) -0.28;
    # 2-methyl-2-butene =CH 5.19 (P09, from memory)
    s = one("CC=C(C)C", 1)
    assert dict(s.terms) == {"alkene base": 5.25, "gem alkyl": 0.45, "cis alkyl": -0.22, "trans alkyl": -0.28}
    assert s.shift == pytest.approx(5.20)
    assert abs(s.shift - 5.19) <= s.sigma


def test_styrene_vinyl_hydrogens_follow_their_geometry():
    # P09 (from memory): =CH 6.72; H cis to Ph 5.74, H trans to Ph 5.23
    ch2 = sorted(by_atom("C=Cc1ccccc1")[0], key=lambda s: s.shift)
    assert [dict(s.terms).get("cis Ar", dict(s.terms).get("trans Ar")) for s in ch2] == [-0.07, 0.36]
    assert ch2[1].shift == pytest.approx(5.61) and ch2[0].shift == pytest.approx(5.18)


def test_shift_is_the_sum_of_its_terms_and_the_explanation_shows_them():
    for smiles in ("CCOC(C)=O", "OC(=O)/C=C/c1ccccc1", "Clc1ccc(Br)cc1", "CC(C)(O)C#N", "c1ccoc1C=O"):
        for s in predict_smiles(smiles):
            assert s.shift == pytest.approx(sum(v for _, v in s.terms), abs=1e-9)
            assert s.explanation.startswith(s.terms[0].name)
            assert s.explanation.split(" = ")[1].startswith(f"{s.shift:.2f}")
    ethyl = predict_smiles("CCOC(C)=O")[0]
    assert ethyl.explanation == "CH2 base 1.37 + α OC(=O)R 2.72 = 4.09"


def test_dmf_methyls_differ_by_the_rotamer_term():
    # G97: 2.96 and 2.88
    methyls = sorted((s for s in predict_smiles("CN(C)C=O") if s.family == "CH3"), key=lambda s: s.shift)
    assert [round(s.shift, 2) for s in methyls] == [2.87, 2.95]


# ------------------------------------------------------------- rules of thumb ----


def test_alkane_hydrogens_sit_where_common_practice_puts_them():
    # common practice: CH3 about 0.9, CH2 1.2-1.3, CH 1.5-1.7
    hexane = predict_smiles("CCCCCC")
    assert all(0.85 <= s.shift <= 0.95 for s in hexane if s.family == "CH3")
    assert all(1.2 <= s.shift <= 1.35 for s in hexane if s.family == "CH2")
    assert 1.4 <= one("CC(C)C", 1).shift <= 1.75


def test_alpha_oxygen_and_carbonyl_increments_have_their_usual_size():
    # common practice: alcohol/ether O adds 2.3-2.5, ester O 2.8-3.0, a carbonyl about 1 (each +-0.3)
    ethane = one("CC", 0).shift
    assert 2.0 <= one("CO", 0).shift - ethane <= 2.8
    assert 2.0 <= one("COC", 0).shift - ethane <= 2.8
    assert 2.5 <= one("COC(C)=O", 0).shift - ethane <= 3.3
    assert 0.7 <= one("CC(C)=O", 0).shift - ethane <= 1.4
    assert 0.7 <= one("CCC(=O)C", 1).shift - 1.37 <= 1.3


def test_beta_increment_is_a_fraction_of_the_alpha_increment():
    # common practice: a beta substituent has roughly one fifth of its alpha effect
    for x in ("O", "Cl", "Br", "OC(C)=O"):
        alpha = one(f"CC{x}", 1).shift - one("CCC", 1).shift   # X-CH2-CH3 against CH3-CH2-CH3
        beta = one(f"CCC{x}", 1).shift - one("CCCC", 1).shift  # CH3-CH2-CH2-X against butane C2
        assert 0.05 <= beta / alpha <= 0.35, x


def test_benzene_and_characteristic_hydrogens():
    # common practice / G97: benzene 7.36; COOH 10-13; aldehyde 9.5-10.1; terminal alkyne 1.8-3.1
    assert 7.2 <= one("c1ccccc1", 0).shift <= 7.4
    acid = next(s for s in predict_smiles("CC(=O)O") if s.family == "COOH")
    assert 10 <= acid.shift <= 13 and acid.shift_range == (10.0, 13.0)
    assert 9.5 <= one("CCC=O", 2).shift <= 10.1
    assert 1.8 <= one("CCCC#C", 4).shift <= 3.1


def test_hydrogen_bonded_phenol_sits_far_downfield():
    # Silverstein 7th ed. (from memory): methyl salicylate OH 10.76
    oh = next(s for s in predict_smiles("COC(=O)c1ccccc1O") if s.family == "OH")
    assert oh.shift >= 10.5 and oh.broad
    free = next(s for s in predict_smiles("COC(=O)c1ccc(O)cc1") if s.family == "OH")
    assert free.shift < 8


# ------------------------------------------------------------- multiplicity ----


def mults(smiles: str, solvent: str = "CDCl3", field: float = 400.0) -> dict[int, str]:
    return {a: "/".join(s.multiplicity for s in sig) for a, sig in by_atom(smiles, solvent, field).items()}


def test_first_order_patterns_of_simple_chains():
    # common practice (n+1 rule)
    assert mults("CCOC(C)=O") == {0: "t", 1: "q", 4: "s"}
    assert mults("CCCCl") == {0: "t", 1: "sext", 2: "t"}
    assert mults("CC(C)O") == {0: "d", 1: "sept", 2: "d", 3: "br s"}


def test_vinyl_group_gives_dd_with_trans_and_cis_couplings():
    ch = one("C=Cc1ccccc1", 1)
    assert ch.multiplicity == "dd" and ch.j == (16.5, 10.5)
    assert sorted(s.j for s in by_atom("C=Cc1ccccc1")[0]) == [(10.5,), (16.5,)]


def test_aldehyde_couples_weakly_to_its_alpha_hydrogens():
    # propanal CHO t (J about 1.5), CH2 qd; acetaldehyde CHO q (P09, from memory)
    assert mults("CCC=O") == {0: "t", 1: "qd", 2: "t"}
    assert mults("CC=O")[1] == "q"


def test_terminal_alkyne_is_a_triplet_from_the_propargylic_ch2():
    m = mults("CCCCC#C")
    assert m[5] == "t" and m[3] == "td"


def test_monosubstituted_benzene_ring_hydrogens_are_a_multiplet():
    ring = [s for s in predict_smiles("CCc1ccccc1") if s.family == "aromatic"]
    assert ring and all(s.multiplicity == "m" for s in ring)


def test_para_disubstituted_ring_is_two_doublets_at_400_but_not_at_60_mhz():
    high = [s.multiplicity for s in Predictor("CDCl3", 400).predict(parse_smiles("Cc1ccc(OC)cc1"))
            if s.family == "aromatic"]
    low = [s.multiplicity for s in Predictor("CDCl3", 60).predict(parse_smiles("Cc1ccc(OC)cc1"))
           if s.family == "aromatic"]
    assert high == ["d", "d"] and low == ["m", "m"]


def test_ring_ch2_of_cyclohexanone_is_a_multiplet():
    # common practice: ring conformers
    assert set(mults("O=C1CCCCC1").values()) == {"m"}


def test_amide_nh_splits_the_n_methyl_unless_exchanged():
    assert mults("CNC(C)=O")[0] == "d"
    assert mults("CNC(C)=O", "CD3OD")[0] == "s"


def test_alcohol_oh_couples_only_in_dmso():
    # common practice: OH-CH coupling is seen in DMSO-d6, not in CDCl3
    assert mults("CCO") == {0: "t", 1: "q", 2: "br s"}
    assert mults("CCO", "DMSO-d6") == {0: "t", 1: "qd", 2: "t"}


def test_multiplicities_are_readable_by_the_peak_parser():
    for smiles in ("CC=CC(=O)OCC", "CCCC(C)CO", "Cc1ccc(Cl)cc1N", "C=CC(C)Br", "CC(C)C=O"):
        for s in predict_smiles(smiles):
            assert s.multiplicity == "m" or coupling_groups(s.multiplicity) is not None, s.multiplicity
            assert all(j > 0 for j in s.j)


# ------------------------------------------------------------ exchangeable H ----


def test_exchangeable_hydrogens_are_broad_with_a_range():
    oh = next(s for s in predict_smiles("CCO") if s.exchangeable)
    assert oh.broad and oh.family == "OH"
    assert oh.shift_range[0] <= oh.shift <= oh.shift_range[1]
    assert oh.sigma >= 1.0 and "exchangeable" in oh.note


def test_exchangeable_hydrogens_are_flagged_absent_in_methanol_d4():
    oh = next(s for s in predict_smiles("CCO", "CD3OD") if s.exchangeable)
    assert "expected absent" in oh.note


def test_alcohol_oh_moves_downfield_in_dmso():
    # Silverstein 7th ed. (from memory): alcohol OH 4.3-4.7 in DMSO-d6
    oh = next(s for s in predict_smiles("CCO", "DMSO-d6") if s.exchangeable)
    assert 4.0 <= oh.shift <= 5.0


# ------------------------------------------------------------------ solvents ----


def test_unknown_solvent_is_an_input_error():
    with pytest.raises(InputError, match="unknown solvent"):
        Predictor("chloroform-x")
    with pytest.raises(InputError):
        predict_smiles("CCO", solvent="")


def test_solvent_aliases_are_accepted():
    assert Predictor("dmso").solvent_id == "DMSO-d6"
    assert Predictor("chloroform-d").solvent_id == "CDCl3"


def test_benzene_moves_upfield_in_benzene_d6():
    # G97 (from memory): benzene 7.36 in CDCl3, 7.15 in C6D6
    s = one("c1ccccc1", 0, "C6D6")
    assert s.shift == pytest.approx(7.16) and "solvent C6D6" in s.explanation


# ----------------------------------------------------------------- the object ----


def test_constructor_stores_its_parameters():
    p = Predictor("DMSO-d6", 600.0)
    assert (p.solvent, p.field_mhz) == ("DMSO-d6", 600.0)


@pytest.mark.parametrize("field", [0, -400, math.nan, math.inf, "400"])
def test_bad_field_is_an_input_error(field):
    with pytest.raises(InputError):
        Predictor("CDCl3", field)


@pytest.mark.parametrize("smiles", ["C1CC", "", "   ", "CC(C", "Xx"])
def test_invalid_smiles_is_an_input_error(smiles):
    with pytest.raises(InputError, match="not a valid SMILES"):
        predict_smiles(smiles)


def test_predict_rejects_no_molecule():
    with pytest.raises(InputError):
        Predictor().predict(None)


def test_prediction_is_a_pure_function_of_molecule_solvent_and_field():
    mols = [parse_smiles(s) for s in ("CCOC(C)=O", "c1ccncc1", "CC(O)CC=C")]
    before = [Chem.MolToSmiles(m) for m in mols]
    a, b = Predictor("CDCl3"), Predictor("DMSO-d6")
    first = [a.predict(m) for m in mols]
    [b.predict(m) for m in reversed(mols)]
    again = [a.predict(m) for m in reversed(mols)][::-1]
    assert first == again
    assert [Chem.MolToSmiles(m) for m in mols] == before


def test_signals_are_sorted_by_shift_and_partners_point_into_the_list():
    signals = predict_smiles("CC=CC(=O)OCC")
    assert [s.shift for s in signals] == sorted((s.shift for s in signals), reverse=True)
    for i, s in enumerate(signals):
        for c in s.partners:
            assert 0 <= c.signal < len(signals) and c.signal != i
            assert any(back.signal == i for back in signals[c.signal].partners)


def test_hydrogen_count_is_preserved():
    for smiles in ("CC(C)(C)c1cc(C)cc(C(C)(C)C)c1O", "C=CC(=O)N(C)C", "OCC(O)CO"):
        mol = parse_smiles(smiles)
        assert sum(s.n_h for s in predict_smiles(smiles)) == sum(a.GetTotalNumHs() for a in mol.GetAtoms())


def test_diastereotopic_ch2_is_marked_on_the_signal():
    ch2 = next(s for s in predict_smiles("CCC(C)O") if s.family == "CH2")
    assert ch2.diastereotopic
    assert "diastereotopic" in signal_table(predict_smiles("CCC(C)O"))


def test_rows_name_the_table_rows_behind_a_shift():
    s = one("CCCl", 1)
    assert "shift_alkyl:cl" in s.rows and "shift_alkyl_site:base" in s.rows


def test_json_form_has_the_documented_fields():
    # ../shared/GUIDE.md section 3: shift, n_h, multiplicity, exchangeable, atoms, sigma, explanation
    for s in predict_smiles("CC(=O)OCC"):
        d = s.to_json()
        assert {"shift", "n_h", "multiplicity", "exchangeable", "atoms", "sigma", "explanation",
                "j", "family", "terms"} <= set(d)
        assert isinstance(d["atoms"], list) and all(isinstance(a, int) for a in d["atoms"])
        assert sum(v for _, v in d["terms"]) == pytest.approx(d["shift"])
        json.dumps(d)


# ------------------------------------------------------------------- command ----


def test_predict_command_prints_the_arithmetic(capsys):
    assert main(["predict", "CCOC(C)=O"]) == 0
    out = capsys.readouterr().out
    assert "α OC(=O)R 2.72" in out and "4.09" in out


def test_predict_command_json_to_stdout_is_json_only(capsys):
    assert main(["predict", "CCO", "--json", "-"]) == 0
    doc = json.loads(capsys.readouterr().out)
    assert doc["smiles"] == "CCO" and len(doc["signals"]) == 3
    assert doc["signals"][0]["atoms"] == [1]


def test_predict_command_refuses_to_overwrite_without_force(tmp_path, capsys):
    path = tmp_path / "out.json"
    assert main(["predict", "CCO", "--json", str(path)]) == 0
    first = path.read_text()
    assert json.loads(first)["signals"]
    assert main(["predict", "CCN", "--json", str(path)]) == 2
    err = capsys.readouterr().err
    assert "--force" in err and err.count("\n") == 1
    assert path.read_text() == first
    assert main(["predict", "CCN", "--json", str(path), "--force"]) == 0
    assert json.loads(path.read_text())["smiles"] == "CCN"


@pytest.mark.parametrize("argv", [["predict", "C1CC"], ["predict", "CCO", "--solvent", "xyz"],
                                  ["predict", "CCO", "--field", "0"]])
def test_predict_command_bad_input_exits_2_with_one_line(argv, capsys):
    assert main(argv) == 2
    captured = capsys.readouterr()
    assert captured.out == "" and captured.err.count("\n") == 1


def test_importing_the_predictor_leaves_rdkit_logging_on_and_parse_smiles_holds_back_its_own():
    # RDKit's parse messages are held back while parse_smiles parses (its InputError says what is
    # wrong, on one line), and only then: a later parse elsewhere still logs
    code = ("from rdkit import Chem\n"
            "from rank.predict import parse_smiles\n"
            "try:\n    parse_smiles('C1CC')\nexcept Exception:\n    pass\n"
            "Chem.MolFromSmiles('CC(')\n")
    run = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=120,
                         cwd=Path(__file__).resolve().parent.parent, check=True)
    assert "C1CC" not in run.stderr
    assert "CC(" in run.stderr


def test_predict_and_match_modules_use_only_public_names_of_other_modules():
    # ../shared/GUIDE.md section 1: a module uses another's public names only
    root = Path(rank.__file__).resolve().parent
    for path in [*sorted((root / "predict").glob("*.py")), root / "match.py"]:
        for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
            if isinstance(node, ast.ImportFrom):
                private = [a.name for a in node.names if a.name.startswith("_") and not a.name.startswith("__")]
                assert not private, f"{path.name} imports {private} from {node.module}"

