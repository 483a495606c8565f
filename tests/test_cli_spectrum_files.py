"""Spectrum files on the command line: `peaks FILE` and `identify --peaks/--carbon/--dept135 FILE`."""

from __future__ import annotations

from pathlib import Path

import pytest
from clitools import one_line_error, run_cli

SPECTRA = Path(__file__).parent / "data" / "spectra"
ASPIRIN = SPECTRA / "50-78-2"
ANILIDE = SPECTRA / "620-71-3"


def _truncated(tmp_path: Path) -> Path:
    text = (ASPIRIN / "1h.dx").read_text(encoding="utf-8", errors="replace")
    path = tmp_path / "cut.dx"
    path.write_text(text[: len(text) // 3])
    return path


def _not_jcamp(tmp_path: Path) -> Path:
    path = tmp_path / "photo.jdx"
    path.write_bytes(b"\x89PNG\r\n\x1a\n not a spectrum")
    return path


def _two_d(tmp_path: Path) -> Path:
    path = tmp_path / "cosy.dx"
    path.write_text("##TITLE=cosy\n##JCAMP-DX=6.0\n##DATA TYPE=nD NMR SPECTRUM\n##NUM DIM=2\n"
                    "##.OBSERVE NUCLEUS=^1H\n##END=\n")
    return path


def _fid(tmp_path: Path) -> Path:
    path = tmp_path / "fid.jdx"
    path.write_text("##TITLE=fid\n##JCAMP-DX=5.01\n##DATA TYPE=NMR FID\n##.OBSERVE FREQUENCY=400\n"
                    "##.OBSERVE NUCLEUS=^1H\n##XUNITS=SECONDS\n##YUNITS=ARBITRARY UNITS\n##FIRSTX=0\n"
                    "##LASTX=0.001\n##NPOINTS=4\n##XYDATA=(X++(Y..Y))\n0 1 2 3 4\n##END=\n")
    return path


BAD = {
    "truncated": (_truncated, "truncated"),
    "not JCAMP-DX": (_not_jcamp, "not a JCAMP-DX file"),
    "2D": (_two_d, "2D data"),
    "FID": (_fid, "unprocessed FID"),
    "13C file as 1H": (lambda tmp: ASPIRIN / "13c.dx", "13C spectrum, not 1H"),
}


@pytest.mark.parametrize("case", list(BAD))
def test_bad_spectrum_file_for_identify_gives_one_line_and_exit_2(case, tmp_path, capsys):
    make, expected = BAD[case]
    argv = ["identify", "--formula", "C9H8O4", "--peaks", str(make(tmp_path)), "--workers", "1"]
    assert expected in one_line_error(*run_cli(argv, capsys))


@pytest.mark.parametrize("case", [c for c in BAD if c != "13C file as 1H"])
def test_bad_spectrum_file_for_peaks_gives_one_line_and_exit_2(case, tmp_path, capsys):
    make, expected = BAD[case]
    assert expected in one_line_error(*run_cli(["peaks", str(make(tmp_path))], capsys))


def test_1h_file_given_as_carbon_is_refused(capsys):
    argv = ["identify", "--formula", "C9H8O4", "--peaks", "2.3 (s, 3H)", "--carbon", str(ASPIRIN / "1h.dx")]
    assert "1H spectrum, not 13C" in one_line_error(*run_cli(argv, capsys))


def test_dept135_without_carbon_is_refused(capsys):
    argv = ["identify", "--formula", "C9H11NO", "--peaks", "1.2 (t, 3H)", "--dept135", str(ANILIDE / "dept135.dx")]
    assert "--carbon" in one_line_error(*run_cli(argv, capsys))


def test_dept135_with_a_typed_carbon_list_is_refused(capsys):
    argv = ["identify", "--formula", "C9H11NO", "--peaks", "1.2 (t, 3H)", "--carbon", "172.0, 30.8, 9.8",
            "--dept135", str(ANILIDE / "dept135.dx")]
    assert "13C spectrum file" in one_line_error(*run_cli(argv, capsys))


def test_a_plain_13c_file_given_as_dept135_is_refused(capsys):
    argv = ["peaks", str(ANILIDE / "13c.dx"), "--dept135", str(ANILIDE / "13c.dx")]
    assert "not a DEPT-135" in one_line_error(*run_cli(argv, capsys))


def test_missing_bruker_folder_contents_are_refused(tmp_path, capsys):
    (tmp_path / "10").mkdir()
    (tmp_path / "10" / "fid").write_bytes(b"\0" * 64)
    assert "unprocessed FID" in one_line_error(*run_cli(["peaks", str(tmp_path / "10")], capsys))



def test_a_bad_formula_is_refused_before_the_spectrum_is_picked(capsys, monkeypatch):
    from rank.spectra import files

    monkeypatch.setattr(files, "read_trace", lambda *a, **k: pytest.fail("the spectrum was read"))
    argv = ["identify", "--formula", "C9H8Q4", "--peaks", str(ASPIRIN / "1h.dx")]
    assert "unknown element" in one_line_error(*run_cli(argv, capsys))


# ------------------------------------------------ picked from the real files ----
# The four real exports (cheminfo public NMR data set, MIT licence; tests/data/spectra/README.md) and
# their structures (structure.mol, read with RDKit).

COMPOUNDS = ["141-32-2", "50-78-2", "620-71-3", "623-70-1"]


def _structure(folder: str):
    from rdkit import Chem

    return Chem.MolFromMolFile(str(SPECTRA / folder / "structure.mol"))


def _formula(folder: str) -> str:
    from rdkit.Chem.rdMolDescriptors import CalcMolFormula

    return CalcMolFormula(_structure(folder))


def _carbon_args(folder: str) -> list[str]:
    dept = SPECTRA / folder / "dept135.dx"
    return ["--carbon", str(SPECTRA / folder / "13c.dx")] + (["--dept135", str(dept)] if dept.is_file() else [])


@pytest.mark.parametrize("folder", COMPOUNDS)
def test_peaks_prints_the_1h_list_that_reads_back_the_same(folder, capsys):
    from rank.spectra import parse_peak_text, read_peak_source

    code, out, _ = run_cli(["peaks", str(SPECTRA / folder / "1h.dx")], capsys)
    assert code == 0 and out.startswith("1H NMR (") and len(out.splitlines()) == 1
    again = parse_peak_text(out)
    picked = read_peak_source(str(SPECTRA / folder / "1h.dx")).spectrum
    assert again.solvent == picked.solvent == "CDCl3"
    assert again.field_mhz == pytest.approx(picked.field_mhz, abs=0.001)
    assert len(again.peaks) == len(picked.peaks)
    for a, p in zip(again.peaks, picked.peaks, strict=True):
        assert (a.low, a.high) == pytest.approx((p.low, p.high), abs=1e-4)
        assert a.integral == pytest.approx(p.integral, rel=1e-5)
        assert a.multiplicity == p.multiplicity
        assert a.j == pytest.approx(p.j, abs=0.01)


@pytest.mark.parametrize("folder", COMPOUNDS)
def test_peaks_prints_the_13c_list_that_reads_back_the_same(folder, capsys):
    from rank.spectra import parse_carbon_text

    code, out, _ = run_cli(["peaks", *_carbon_args(folder)[1:]], capsys)
    assert code == 0 and out.startswith("13C NMR (")
    again = parse_carbon_text(out)
    _, json_out, _ = run_cli(["peaks", *_carbon_args(folder)[1:], "--json", "-"], capsys)
    import json

    doc = json.loads(json_out)
    assert doc["nucleus"] == "13C" and doc["solvent"] == "CDCl3"
    assert [p.shift for p in again.peaks] == pytest.approx([p["shift"] for p in doc["peaks"]], abs=0.01)
    assert [p.dept for p in again.peaks] == [p["type"] for p in doc["peaks"]]
    assert any("CDCl3" in d["reason"] for d in doc["dropped"])  # the solvent triplet, reported
    if (SPECTRA / folder / "dept135.dx").is_file():
        assert all(p.dept is not None for p in again.peaks)


@pytest.mark.parametrize("folder", COMPOUNDS)
def test_picked_integrals_match_the_structures_h_counts(folder):
    """Every picked 1H integral, scaled to the structure's H, lies within 10 % of a whole number of H, and
    those numbers are the structure's proton classes (RDKit perception), some merged.

    Exchangeable H may be unobserved; a broad line may be left out of the check when the structure has
    exchangeable H (an OH, NH or COOH line's area varies with exchange and the baseline under it; common
    practice): aspirin's COOH near 11 ppm integrates to about 1.6 H.
    """
    from rank.predict.perceive import proton_classes
    from rank.spectra import read_peak_source

    classes = proton_classes(_structure(folder))
    sizes = sorted(c.n_h for c in classes)
    labile = sum(c.n_h for c in classes if c.exchangeable)
    peaks = read_peak_source(str(SPECTRA / folder / "1h.dx")).spectrum.peaks
    broad = [p for p in peaks if p.broad] if labile else []
    options = [(peaks, sum(sizes) - k) for k in range(labile + 1)]
    options += [([p for p in peaks if p not in broad], sum(sizes) - labile)] if broad else []
    readings = [_whole_numbers([p.integral for p in kept], total) for kept, total in options]
    assert any(readings), ([p.integral for p in peaks], sizes)
    whole = next(w for w in readings if w)
    assert _merges(sorted(whole, reverse=True), sizes), (whole, sizes)


def _whole_numbers(integrals: list[float], total: int) -> list[int] | None:
    """The integrals scaled to ``total`` H as whole numbers, each within 10 % of its count; None if not."""
    counts = [x * total / sum(integrals) for x in integrals]
    whole = [max(1, round(c)) for c in counts]
    close = all(abs(c - w) <= 0.1 * w for c, w in zip(counts, whole, strict=True))
    return whole if close and sum(whole) == total else None


def _merges(groups: list[int], sizes: list[int]) -> bool:
    """The class sizes can be shared out among the groups (each group the sum of some classes), with the
    exchangeable classes allowed to be left over (already taken off the total)."""
    if not groups:
        return True
    first, rest = groups[0], groups[1:]

    def fill(need: int, pool: list[int], start: int) -> bool:
        if need == 0:
            return _merges(rest, pool)
        for i in range(start, len(pool)):
            fits = pool[i] <= need and (i == start or pool[i] != pool[i - 1])
            if fits and fill(need - pool[i], pool[:i] + pool[i + 1:], i):
                return True
        return False

    return fill(first, sorted(sizes), 0)


def _true_rank(doc: dict, folder: str) -> int | None:
    from rdkit import Chem

    key = Chem.MolToInchiKey(_structure(folder)).split("-")[0]  # constitution (stereo dropped)
    return next((c["rank"] for c in doc["candidates"] if c["inchikey"].split("-")[0] == key), None)


# formula mode: butyl acrylate, propionanilide and ethyl crotonate take a few seconds; aspirin's space
# (C9H8O4, about 5 million structures even with its 13C list) is above the default ceiling, so it is
# ranked in library mode only, below
FORMULA_MODE = ["141-32-2", "620-71-3", "623-70-1"]


def _identify(folder: str, extra: list[str], capsys) -> dict:
    import json

    argv = ["identify", "--formula", _formula(folder), "--peaks", str(SPECTRA / folder / "1h.dx"), *extra,
            "--workers", "2", "--top", "5", "--json", "-"]
    code, out, err = run_cli(argv, capsys)
    assert code == 0, err
    doc = json.loads(out)
    assert doc["complete"]
    return doc


@pytest.mark.parametrize("folder", FORMULA_MODE)
def test_identify_with_the_1h_file_alone_ranks_the_true_structure_first(folder, capsys):
    doc = _identify(folder, [], capsys)
    assert _true_rank(doc, folder) == 1, [c["smiles"] for c in doc["candidates"]]


@pytest.mark.parametrize("folder", FORMULA_MODE)
def test_identify_with_1h_13c_and_dept_files_ranks_the_true_structure_first(folder, capsys, tmp_path):
    report = tmp_path / "report.html"
    doc = _identify(folder, [*_carbon_args(folder), "--report", str(report)], capsys)
    assert _true_rank(doc, folder) == 1, [c["smiles"] for c in doc["candidates"]]
    # what picking dropped reaches the reports: the residual CHCl3 line and the CDCl3 triplet
    assert any("CDCl3" in d["reason"] for d in doc["peaks_dropped"])
    assert any("CDCl3" in d["reason"] for d in doc["carbon_peaks_dropped"])
    page = report.read_text()
    assert "measured spectrum (1h.dx)" in page and "measured spectrum (13c.dx)" in page
    from html import escape

    from rank.spectra import read_peak_source

    notes = read_peak_source(str(SPECTRA / folder / "1h.dx")).notes
    assert notes and all(escape(note) in page for note in notes)  # how the list was picked


def test_a_refusal_after_picking_is_still_one_line(capsys):
    # aspirin's 1H spectrum gives six signals; a formula with four H cannot hold them
    argv = ["identify", "--formula", "C3H4O", "--peaks", str(ASPIRIN / "1h.dx")]
    assert "only 4 H" in one_line_error(*run_cli(argv, capsys))


@pytest.mark.parametrize("with_carbon", [False, True])
@pytest.mark.parametrize("folder", COMPOUNDS)
def test_identify_among_the_known_structures_of_the_formula_ranks_the_true_structure_first(folder, with_carbon,
                                                                                          capsys, tmp_path):
    # library mode: every NMRShiftDB2 structure of the formula (open-structures-by-formula.tsv, open data)
    library = Path(__file__).parent.parent / "benchmarks" / "data" / "open-structures-by-formula.tsv"
    formula = _formula(folder)
    row = next(line for line in library.read_text().splitlines() if line.startswith(f"{formula}\t"))
    suspects = tmp_path / "suspects.smi"
    suspects.write_text("\n".join(row.split("\t")[1].split("|")) + "\n")
    assert len(row.split("|")) >= 10
    doc = _identify(folder, ["--candidates", str(suspects), *(_carbon_args(folder) if with_carbon else [])], capsys)
    assert _true_rank(doc, folder) == 1, [c["smiles"] for c in doc["candidates"]]


def test_a_bruker_folder_of_the_same_trace_gives_the_same_list(tmp_path, capsys):
    # the propionanilide 1H export written out as a Bruker experiment folder (1r as 32-bit integers,
    # procs OFFSET, SW_p, SF, SI; acqus NUC1, SFO1, SOLVENT, PULPROG)
    import numpy as np

    from rank.spectra import read_trace

    trace = read_trace(SPECTRA / "620-71-3" / "1h.dx")
    n, sf = len(trace.ppm), 500.13
    pdata = tmp_path / "10" / "pdata" / "1"
    pdata.mkdir(parents=True)

    def parameters(path: Path, values: dict) -> None:
        path.write_text("##TITLE= Parameter file\n##JCAMPDX= 5.0\n"
                        + "".join(f"##${k}= {v}\n" for k, v in values.items()) + "##END=\n")

    parameters(pdata / "procs", {"OFFSET": repr(float(trace.ppm[0])), "SI": n, "SF": sf, "BYTORDP": 0, "DTYPP": 0,
                                 "NC_proc": 0, "SW_p": repr(float(trace.ppm[0] - trace.ppm[-1]) * sf * n / (n - 1))})
    parameters(tmp_path / "10" / "acqus", {"NUC1": "<1H>", "SFO1": trace.frequency_mhz, "SOLVENT": "<CDCl3>",
                                           "PULPROG": "<zg30>", "BYTORDA": 0})
    np.round(trace.intensity).astype("<i4").tofile(pdata / "1r")
    _, from_folder, _ = run_cli(["peaks", str(tmp_path / "10")], capsys)
    _, from_file, _ = run_cli(["peaks", str(SPECTRA / "620-71-3" / "1h.dx")], capsys)
    assert from_folder == from_file and from_file.count("(") >= 6


def test_the_python_api_reports_what_picking_a_file_dropped_and_did():
    # ethyl crotonate (cheminfo data set, MIT): the same dropped peaks and notes as the command line shows
    from rank.shortlist import Identifier
    from rank.spectra import read_peak_source

    path = str(SPECTRA / "623-70-1" / "1h.dx")
    source = read_peak_source(path)
    result = Identifier(top=3).identify(_formula("623-70-1"), path, candidates=["CC=CC(=O)OCC", "C=CCC(=O)OCC"])
    assert result.notes == source.notes and result.notes
    assert set(source.dropped) <= set(result.dropped)
    assert any("CDCl3" in d.reason for d in result.dropped)
