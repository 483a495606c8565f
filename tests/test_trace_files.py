"""Reading spectrum traces: real JCAMP-DX exports, the standard's other data forms, Bruker folders, bad files."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
from rdkit import Chem

from rank.errors import InputError
from rank.spectra.trace import is_spectrum_source, read_trace

SPECTRA = Path(__file__).parent / "data" / "spectra"

# (folder, file, nucleus, observe MHz, experiment) as the real files' headers state them
# (cheminfo public NMR data set, MIT licence; tests/data/spectra/README.md)
REAL = [
    ("141-32-2", "1h.dx", "1H", 600.134, "zg30"),
    ("141-32-2", "13c.dx", "13C", 150.918, "zgpg30"),
    ("50-78-2", "1h.dx", "1H", 300.132, "zg30"),
    ("50-78-2", "13c.dx", "13C", 75.476, "zgdc30"),
    ("620-71-3", "1h.dx", "1H", 500.132, "zg30"),
    ("620-71-3", "13c.dx", "13C", 125.771, "zgdc30"),
    ("620-71-3", "dept135.dx", "13C", 125.771, "dept135"),
    ("623-70-1", "1h.dx", "1H", 500.132, "zg30"),
    ("623-70-1", "13c.dx", "13C", 125.769, "zgdc30"),
    ("623-70-1", "dept135.dx", "13C", 125.769, "dept135"),
]


@pytest.mark.parametrize(("folder", "name", "nucleus", "mhz", "experiment"), REAL)
def test_real_exports_read_with_their_nucleus_frequency_solvent_and_window(folder, name, nucleus, mhz, experiment):
    trace = read_trace(SPECTRA / folder / name)
    assert trace.nucleus == nucleus
    assert trace.frequency_mhz == pytest.approx(mhz, abs=0.001)
    assert trace.solvent == "CDCl3"
    assert trace.experiment == experiment
    assert trace.is_dept135 == (experiment == "dept135")
    assert len(trace.ppm) == len(trace.intensity) in (16384, 32768)
    assert np.all(np.diff(trace.ppm) < 0)  # stored from high to low shift
    # the usual windows: 1H about -1 to 16 ppm, 13C about -20 to 230 ppm (common practice)
    low, high = (-5.0, 17.0) if nucleus == "1H" else (-25.0, 230.0)
    assert low <= trace.ppm.min() < 0.5 and 8.5 < trace.ppm.max() <= high


# the tallest point of each 1H trace: a methyl group of the structure; shifts in CDCl3 (from memory),
# within 0.1 ppm since the exports are referenced as recorded (butyl acrylate's lies 0.06 ppm low)
TALLEST_1H = [("141-32-2", 0.94), ("50-78-2", 2.36), ("620-71-3", 1.24), ("623-70-1", 1.27)]


@pytest.mark.parametrize(("folder", "shift"), TALLEST_1H)
def test_tallest_1h_point_is_the_methyl_group(folder, shift):
    trace = read_trace(SPECTRA / folder / "1h.dx")
    assert trace.ppm[np.argmax(trace.intensity)] == pytest.approx(shift, abs=0.1)


@pytest.mark.parametrize("folder", ["141-32-2", "50-78-2", "620-71-3", "623-70-1"])
def test_13c_trace_shows_the_cdcl3_line(folder):
    # CDCl3 at 77.16 ppm (Fulmer et al., Organometallics 2010, 29, 2176); butyl acrylate's export lies
    # 1.2 ppm low, as recorded
    trace = read_trace(SPECTRA / folder / "13c.dx")
    window = (trace.ppm > 74.5) & (trace.ppm < 79.5)
    assert trace.intensity[window].max() > 20 * np.median(np.abs(trace.intensity))


@pytest.mark.parametrize(("folder", "shift"), [("620-71-3", 30.8), ("623-70-1", 60.1)])
def test_dept135_keeps_the_ch2_line_negative(folder, shift):
    # each structure holds one CH2 (RDKit, below); its DEPT-135 line points down: propionanilide's
    # C(=O)CH2 near 30.8, ethyl crotonate's OCH2 near 60.1 ppm (CDCl3, from memory)
    mol = Chem.MolFromMolFile(str(SPECTRA / folder / "structure.mol"))
    assert sum(1 for a in mol.GetAtoms() if a.GetSymbol() == "C" and a.GetTotalNumHs() == 2) == 1
    trace = read_trace(SPECTRA / folder / "dept135.dx")
    assert trace.ppm[np.argmin(trace.intensity)] == pytest.approx(shift, abs=1.0)


def test_wrong_nucleus_is_refused_naming_both():
    with pytest.raises(InputError, match="13C spectrum, not 1H"):
        read_trace(SPECTRA / "50-78-2" / "13c.dx", nucleus="1H")


def test_real_spectrum_exports_are_spectrum_sources_and_peak_tables_are_not(tmp_path):
    assert is_spectrum_source(str(SPECTRA / "50-78-2" / "1h.dx"))
    table = tmp_path / "peaks.jdx"
    table.write_text("##TITLE=t\n##JCAMP-DX=5.01\n##DATA TYPE=NMR PEAK TABLE\n##PEAK TABLE=(XY..XY)\n"
                     "2.1, 3\n##END=\n")
    assert not is_spectrum_source(str(table))
    assert not is_spectrum_source("2.10 (s, 3H)")


# ------------------------------------------------------ the standard's other forms ----

N = 2048
_X = np.arange(N)
_Y = (1000 * np.exp(-(((_X - 600) / 3.0) ** 2)) + 400 * np.exp(-(((_X - 1500) / 3.0) ** 2))).round()


def _affn_lines(values, x0: float, dx: float, per_line: int = 10) -> str:
    """(X++(Y..Y)) lines in AFFN: the abscissa of each line's first point, then its ordinates."""
    rows = []
    for i in range(0, len(values), per_line):
        rows.append(f"{x0 + i * dx:.6f} " + " ".join(f"{v:.0f}" for v in values[i:i + per_line]))
    return "\n".join(rows)


def _xydata_file(path: Path, header: str, x0: float, x1: float, units: str) -> Path:
    dx = (x1 - x0) / (N - 1)
    path.write_text(
        "##TITLE=synthetic\n##JCAMP-DX=5.01\n##DATA TYPE=NMR SPECTRUM\n##.OBSERVE FREQUENCY=400.0\n"
        f"##.OBSERVE NUCLEUS=^1H\n##.SOLVENT NAME=DMSO-d6\n{header}##XUNITS={units}\n##YUNITS=ARBITRARY UNITS\n"
        f"##FIRSTX={x0}\n##LASTX={x1}\n##XFACTOR=1\n##YFACTOR=1\n##NPOINTS={N}\n##XYDATA=(X++(Y..Y))\n"
        f"{_affn_lines(_Y, x0, dx)}\n##END=\n")
    return path


def test_affn_xydata_in_ppm(tmp_path):
    trace = read_trace(_xydata_file(tmp_path / "a.jdx", "", 12.0, -1.0, "PPM"))
    assert trace.nucleus == "1H" and trace.solvent == "DMSO-d6" and trace.frequency_mhz == 400.0
    assert trace.ppm[600] == pytest.approx(12.0 - 600 * 13.0 / (N - 1))
    assert trace.intensity[600] == 1000 and trace.intensity[1500] == 400


def test_compressed_xydata_sqz_dif_dup_with_the_y_check(tmp_path):
    # 100 100 100 105 103 | 103 103 110 written as SQZ A00, DIF % (0) N (+5) k (-2) P (+7), DUP T (twice);
    # the second line repeats the last value as its Y check (McDonald, Wilks 1988); YFACTOR 0.5
    path = tmp_path / "asdf.jdx"
    path.write_text("##TITLE=compressed\n##JCAMP-DX=5.01\n##DATA TYPE=NMR SPECTRUM\n##.OBSERVE FREQUENCY=400\n"
                    "##.OBSERVE NUCLEUS=^1H\n##XUNITS=PPM\n##YUNITS=ARBITRARY UNITS\n##FIRSTX=7\n##LASTX=0\n"
                    "##XFACTOR=1\n##YFACTOR=0.5\n##NPOINTS=8\n##XYDATA=(X++(Y..Y))\n7A00%TNk\n3A03%TP\n##END=\n")
    trace = read_trace(path)
    assert list(trace.ppm) == [7, 6, 5, 4, 3, 2, 1, 0]
    assert list(trace.intensity) == [50, 50, 50, 52.5, 51.5, 51.5, 51.5, 55]


def test_hz_axis_placed_by_the_shift_reference(tmp_path):
    # ##.SHIFT REFERENCE=(method, name, point, shift): point 1 lies at 12 ppm (Davies, Lampen 1993)
    path = _xydata_file(tmp_path / "hz.jdx", "##.SHIFT REFERENCE=(INTERNAL, TMS, 1, 12.0)\n", 5200.0, 0.0, "HZ")
    trace = read_trace(path)
    assert trace.ppm[0] == pytest.approx(12.0)
    assert trace.ppm[-1] == pytest.approx(12.0 - 5200.0 / 400.0)


def test_hz_axis_without_reference_is_hz_over_the_observe_frequency(tmp_path):
    trace = read_trace(_xydata_file(tmp_path / "hz.jdx", "", 4800.0, -400.0, "HZ"))
    assert trace.ppm[0] == pytest.approx(12.0) and trace.ppm[-1] == pytest.approx(-1.0)


def test_xypoints_pairs(tmp_path):
    pairs = "\n".join(f"{12 - i * 0.01:.2f}, {v:.0f}" for i, v in enumerate(_Y[:1300]))
    path = tmp_path / "xy.jdx"
    path.write_text("##TITLE=pairs\n##JCAMP-DX=5.01\n##DATA TYPE=NMR SPECTRUM\n##.OBSERVE FREQUENCY=400\n"
                    "##.OBSERVE NUCLEUS=^1H\n##XUNITS=PPM\n##YUNITS=ARBITRARY UNITS\n##NPOINTS=1300\n"
                    f"##XYPOINTS=(XY..XY)\n{pairs}\n##END=\n")
    trace = read_trace(path)
    assert trace.ppm[600] == pytest.approx(6.0) and trace.intensity[600] == 1000


def test_spectrum_inside_a_link_block(tmp_path):
    inner = _xydata_file(tmp_path / "inner.jdx", "", 12.0, -1.0, "PPM").read_text()
    path = tmp_path / "link.jdx"
    path.write_text("##TITLE=compound\n##JCAMP-DX=5.01\n##DATA TYPE=LINK\n##BLOCKS=2\n"
                    "##TITLE=structure\n##JCAMP-CS=3.7\n##BLOCK_ID=1\n##END=\n"
                    + inner.replace("##DATA TYPE", "##BLOCK_ID=2\n##DATA TYPE") + "##END=\n")
    trace = read_trace(path)
    assert trace.intensity[600] == 1000 and trace.ppm[0] == pytest.approx(12.0)


# ------------------------------------------------------------------ bad files ----


def test_truncated_export_is_refused(tmp_path):
    text = (SPECTRA / "50-78-2" / "1h.dx").read_text(encoding="utf-8", errors="replace")
    cut = tmp_path / "cut.dx"
    cut.write_text(text[: len(text) // 2])
    with pytest.raises(InputError, match="truncated"):
        read_trace(cut)


def test_missing_points_are_refused(tmp_path):
    path = _xydata_file(tmp_path / "short.jdx", "", 12.0, -1.0, "PPM")
    path.write_text(path.read_text().replace(f"##NPOINTS={N}", f"##NPOINTS={N + 10}"))
    with pytest.raises(InputError, match=f"{N} of its {N + 10} points"):
        read_trace(path)


def test_not_jcamp_is_refused(tmp_path):
    path = tmp_path / "notes.dx"
    path.write_text("this is a lab note, not a spectrum\n")
    with pytest.raises(InputError, match="not a JCAMP-DX file"):
        read_trace(path)


def test_2d_is_refused(tmp_path):
    path = tmp_path / "hsqc.jdx"
    path.write_text("##TITLE=hsqc\n##JCAMP-DX=6.0\n##DATA TYPE=nD NMR SPECTRUM\n##NUM DIM=2\n"
                    "##.OBSERVE NUCLEUS=^1H\n##NTUPLES=nD NMR SPECTRUM\n##END NTUPLES=nD NMR SPECTRUM\n##END=\n")
    with pytest.raises(InputError, match="2D"):
        read_trace(path)


def test_2d_ntuples_are_refused(tmp_path):
    path = tmp_path / "hmbc.jdx"
    path.write_text("##TITLE=hmbc\n##JCAMP-DX=6.0\n##DATA TYPE=NMR SPECTRUM\n##DATA CLASS=NTUPLES\n"
                    "##NTUPLES=nD NMR SPECTRUM\n##.OBSERVE NUCLEUS=^1H\n##END NTUPLES=nD NMR SPECTRUM\n##END=\n")
    with pytest.raises(InputError, match="2D"):
        read_trace(path)


def test_fid_is_refused(tmp_path):
    path = _xydata_file(tmp_path / "fid.jdx", "", 0.0, 1.0, "SECONDS")
    path.write_text(path.read_text().replace("NMR SPECTRUM", "NMR FID"))
    with pytest.raises(InputError, match="unprocessed FID"):
        read_trace(path)


# ------------------------------------------------------------- Bruker folders ----


def _parameters(path: Path, values: dict) -> None:
    """A Bruker parameter file (JCAMP-DX labels ##$NAME=value)."""
    path.write_text("##TITLE= Parameter file\n##JCAMPDX= 5.0\n"
                    + "".join(f"##${k}= {v}\n" for k, v in values.items()) + "##END=\n")


def _bruker_experiment(root: Path, processed: bool = True) -> Path:
    root.mkdir()
    _parameters(root / "acqus", {"NUC1": "<1H>", "SFO1": 400.132, "SOLVENT": "<DMSO>", "PULPROG": "<zg30>",
                                 "TD": 2 * N, "BYTORDA": 0})
    (root / "fid").write_bytes(np.zeros(2 * N, dtype="<i4").tobytes())
    if processed:
        pdata = root / "pdata" / "1"
        pdata.mkdir(parents=True)
        _parameters(pdata / "procs", {"OFFSET": 12.0, "SW_p": 5200.0, "SF": 400.13, "SI": N, "BYTORDP": 0,
                                      "DTYPP": 0, "NC_proc": 0, "AXNUC": "<1H>"})
        _Y.astype("<i4").tofile(pdata / "1r")
    return root


def test_bruker_experiment_folder_reads_pdata_1(tmp_path):
    trace = read_trace(_bruker_experiment(tmp_path / "10"))
    assert (trace.nucleus, trace.solvent, trace.experiment) == ("1H", "DMSO-d6", "zg30")
    assert trace.frequency_mhz == pytest.approx(400.132)
    # Bruker processing parameters: point i lies at OFFSET - i * SW_p / SF / SI ppm (from memory)
    assert trace.ppm[600] == pytest.approx(12.0 - 600 * 5200.0 / 400.13 / N)
    assert trace.intensity[600] == 1000
    same = read_trace(tmp_path / "10" / "pdata" / "1")
    assert np.array_equal(same.ppm, trace.ppm)


def test_bruker_folder_with_only_an_fid_is_refused(tmp_path):
    with pytest.raises(InputError, match="unprocessed FID"):
        read_trace(_bruker_experiment(tmp_path / "11", processed=False))


def test_bruker_2d_folder_is_refused(tmp_path):
    root = _bruker_experiment(tmp_path / "12", processed=False)
    (root / "ser").write_bytes(b"\0" * 16)
    with pytest.raises(InputError, match="2D"):
        read_trace(root)


def test_long_inline_text_is_not_taken_for_a_file_name():
    assert not is_spectrum_source(", ".join(f"{7 - i * 0.01:.2f} (1H)" for i in range(60)))
