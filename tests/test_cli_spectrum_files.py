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
