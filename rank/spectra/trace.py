"""Spectrum traces: a processed 1D spectrum as intensities on a shift axis, read from instrument files."""

from __future__ import annotations

import re
import warnings
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ..errors import InputError

__all__ = ["Trace", "is_spectrum_source", "read_trace"]


@dataclass(frozen=True, eq=False)
class Trace:
    """A processed (frequency-domain, real) 1D spectrum.

    Attributes
    ----------
    ppm : shift of each point in ppm, as the file states its axis (before any re-referencing);
        monotonic, either direction.
    intensity : real intensities, same length as ``ppm``.
    nucleus : "1H" or "13C" (or another nucleus, as written: "19F", "31P").
    frequency_mhz : the observe frequency of that nucleus, MHz.
    solvent : the solvent id of :func:`rank.spectra.find_solvent` when the file names a known one, else None.
    experiment : the pulse program or experiment as the file names it (``zg30``, ``dept135``), lower case; "".
    source : where it came from, for messages (a file or folder name).
    """

    ppm: np.ndarray
    intensity: np.ndarray
    nucleus: str
    frequency_mhz: float
    solvent: str | None = None
    experiment: str = ""
    source: str = ""

    @property
    def is_dept135(self) -> bool:
        """A DEPT-135 spectrum: CH and CH3 up, CH2 down, quaternary carbons absent."""
        return "dept135" in self.experiment.replace("-", "").replace(" ", "")


_JCAMP_SUFFIXES = (".jdx", ".dx", ".jcamp")


def is_spectrum_source(source: str | Path) -> bool:
    """True when ``source`` names a Bruker experiment or processed-data folder, or a JCAMP-DX file that
    holds no peak table (a spectrum or FID, read with :func:`read_trace`)."""
    text = str(source).strip()
    if not text or "\n" in text or len(text) > 4096:
        return False
    path = Path(text)
    try:
        if path.is_dir():
            return True
        if path.suffix.lower() not in _JCAMP_SUFFIXES or not path.is_file():
            return False
    except OSError:  # inline text too long for a file name
        return False
    return _PEAK_TABLE.search(_read_text(path)) is None


def read_trace(path: str | Path, nucleus: str | None = None) -> Trace:
    """Read a processed 1D spectrum from a JCAMP-DX file or a Bruker folder.

    Parameters
    ----------
    path : a JCAMP-DX file (``XYDATA`` in AFFN or the compressed ASDF forms, ``XYPOINTS``, or
        ``NTUPLES`` with real and imaginary pages, of which the real one is taken; inside a LINK
        block too), or a Bruker folder: the processed-data folder (``pdata/1`` with ``1r`` and
        ``procs``, ``acqus`` two levels up) or the experiment folder above it (``pdata/1`` is used).
    nucleus : the nucleus expected ("1H", "13C"); None accepts any.

    Returns
    -------
    Trace
        The real spectrum on a ppm axis as the file references it.

    Raises
    ------
    InputError
        For a missing, unreadable, truncated or non-JCAMP-DX file, an unprocessed FID, 2D data,
        a file without a usable axis, and a nucleus other than ``nucleus``.

    Notes
    -----
    The ppm axis of a Hz axis comes from ``##.SHIFT REFERENCE`` (the shift of one data point), else
    the Bruker ``##$OFFSET`` (the shift of the first point), else Hz over the observe frequency;
    Hz are turned into ppm with the reference frequency ``##$SF`` when given, else
    ``##.OBSERVE FREQUENCY``. Compressed data are decoded by nmrglue.

    References
    ----------
    R. S. McDonald, P. A. Wilks, "JCAMP-DX: a standard form for exchange of infrared spectra in
    computer readable form", Appl. Spectrosc. 1988, 42, 151 (the format and its compressed forms).
    A. N. Davies, P. Lampen, "JCAMP-DX for NMR", Appl. Spectrosc. 1993, 47, 1093 (the ``.``
    labels: observe frequency and nucleus, shift reference, solvent). P. Lampen et al., "An
    extension to the JCAMP-DX standard file format, JCAMP-DX V.5.01", Pure Appl. Chem. 1999, 71,
    1549 (NTUPLES; from memory).
    """
    p = Path(str(path).strip())
    if p.is_dir():
        trace = _read_bruker_folder(p)
    elif p.is_file():
        trace = _read_jcamp_trace(p)
    else:
        raise InputError(f"spectrum file {str(path)!r} not found")
    if nucleus is not None and trace.nucleus != nucleus:
        raise InputError(f"{p.name} is a {trace.nucleus} spectrum, not {nucleus}; give the {nucleus} file here")
    return trace


# ----------------------------------------------------------------- JCAMP-DX ----

_PEAK_TABLE = re.compile(r"^##\s*PEAK\s*TABLE\s*=", re.MULTILINE | re.IGNORECASE)
_LABEL = re.compile(r"^##\s*([^=]*?)\s*=([^\n]*)", re.MULTILINE)


def _read_text(path: Path) -> str:
    try:
        return path.read_text(encoding="utf-8-sig", errors="replace")
    except OSError as exc:
        raise InputError(f"cannot read {path}: {exc.strerror or exc}") from None


def _labels(text: str) -> dict[str, list[str]]:
    """Every ``##LABEL=value`` line's first-line value by normalised label (upper case, no spaces,
    ``/``, ``-`` or ``_``), in file order; ``$$`` comments cut off."""
    found: dict[str, list[str]] = {}
    for m in _LABEL.finditer(text):
        key = re.sub(r"[\s/_-]", "", m.group(1)).upper()
        found.setdefault(key, []).append(m.group(2).split("$$", 1)[0].strip())
    return found


def _check_jcamp_text(path: Path, text: str) -> None:
    """Refuse what is not a whole 1D JCAMP-DX spectrum before decoding: not JCAMP-DX, truncated
    (fewer ##END= than ##TITLE=), 2D, FID only."""
    head = text.lstrip()[:200]
    if not head.startswith("##"):
        raise InputError(f"{path.name} is not a JCAMP-DX file (it should start with ##TITLE=)")
    labels = _labels(text)
    if "TITLE" not in labels:
        raise InputError(f"{path.name} is not a JCAMP-DX file (no ##TITLE=)")
    if len(labels.get("END", [])) < len(labels["TITLE"]):
        raise InputError(f"{path.name} ends before its ##END=: the file is truncated; export it again")
    kinds = [v.upper() for v in labels.get("DATATYPE", []) + labels.get("NTUPLES", [])]
    dims = [v for v in labels.get("NUMDIM", []) if v.strip().isdigit() and int(v) > 1]
    if dims or any(re.search(r"\b(?:2D|ND|NMR\s*2D)\b", k) for k in kinds):
        raise InputError(f"{path.name} holds 2D data; give a 1D spectrum")
    spectra = [k for k in kinds if "SPECTRUM" in k]
    if not spectra and any("FID" in k for k in kinds):
        raise _fid_refusal(path)
    if not spectra and "XYDATA" not in labels and "XYPOINTS" not in labels and "DATATABLE" not in labels:
        raise InputError(f"{path.name} holds neither a spectrum (##XYDATA, ##XYPOINTS, ##DATA TABLE) nor a "
                         "peak list (##PEAK TABLE)")


def _fid_refusal(path: Path) -> InputError:
    return InputError(f"{path.name} is an unprocessed FID; process it (Fourier transform, phase, baseline) "
                      "and export the spectrum, or give a peak list")


def _first(dic: dict, key: str) -> str | None:
    value = dic.get(key)
    return value[0].strip() if value else None


def _float(dic: dict, key: str, path: Path, index: int = 0) -> float | None:
    text = _first(dic, key)
    if text is None:
        return None
    parts = [p.strip() for p in text.split(",")]
    try:
        return float(parts[index])
    except (IndexError, ValueError):
        raise InputError(f"{path.name}: ##{key}={text} is not a number") from None


def _read_jcamp_trace(path: Path) -> Trace:
    import nmrglue

    text = _read_text(path)
    _check_jcamp_text(path, text)
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            dic, data = nmrglue.jcampdx.read(str(path))
    except (OSError, ValueError, IndexError, KeyError) as exc:
        raise InputError(f"cannot read {path.name} as JCAMP-DX: {exc}".splitlines()[0]) from None
    if data is None:  # nmrglue leaves a block it could not decode under _datatype_ keys
        dic = next((b for k, blocks in dic.items() if k.startswith("_datatype_") for b in blocks
                    if "XYPOINTS" in b), dic)
    kind = (_first(dic, "DATATYPE") or "").upper()
    if "FID" in kind:
        raise _fid_refusal(path)
    ntuples = "NTUPLES" in (_first(dic, "DATACLASS") or "").upper()
    if isinstance(data, list):
        data = data[0]
    if data is None and "XYPOINTS" in dic:
        axis, y = _xypoints(dic, path)
    elif data is None:
        raise InputError(f"cannot decode the spectrum data of {path.name}; the file may be damaged")
    else:
        y = np.asarray(data, dtype=float)
        axis = _ntuples_axis(dic, path, len(y)) if ntuples else _xydata_axis(dic, path, len(y))
    return Trace(_ppm_axis(dic, path, axis), y, _jcamp_nucleus(dic, path), _jcamp_frequency(dic),
                 _jcamp_solvent(dic), _jcamp_experiment(dic), path.name)


def _xydata_axis(dic: dict, path: Path, n: int) -> tuple[np.ndarray, str]:
    """The X values of ``##XYDATA=(X++(Y..Y))`` from FIRSTX, LASTX and NPOINTS, with XUNITS."""
    first, last = _float(dic, "FIRSTX", path), _float(dic, "LASTX", path)
    expected = _float(dic, "NPOINTS", path)
    if first is None or last is None:
        raise InputError(f"{path.name}: the spectrum has no ##FIRSTX and ##LASTX; cannot place its axis")
    _check_length(path, n, expected)
    return np.linspace(first, last, n), (_first(dic, "XUNITS") or "").upper()


def _ntuples_axis(dic: dict, path: Path, n: int) -> tuple[np.ndarray, str]:
    """The X values of an NTUPLES page from the X column of ##FIRST, ##LAST, ##VAR_DIM, ##UNITS."""
    symbols = [s.strip().upper() for s in (_first(dic, "SYMBOL") or "X").split(",")]
    at = symbols.index("X") if "X" in symbols else 0
    first, last = _float(dic, "FIRST", path, at), _float(dic, "LAST", path, at)
    if first is None or last is None:
        raise InputError(f"{path.name}: the NTUPLES have no ##FIRST and ##LAST; cannot place the axis")
    _check_length(path, n, _float(dic, "VARDIM", path, at))
    units = (_first(dic, "UNITS") or "").split(",")
    return np.linspace(first, last, n), units[at].strip().upper() if at < len(units) else ""


def _check_length(path: Path, n: int, expected: float | None) -> None:
    if n < 2:
        raise InputError(f"{path.name}: the spectrum holds {n} point(s); the file may be damaged")
    if expected is not None and int(expected) != n:
        raise InputError(f"{path.name}: the spectrum holds {n} of its {int(expected)} points; the file is truncated "
                         "or damaged; export it again")


def _xypoints(dic: dict, path: Path) -> tuple[tuple[np.ndarray, str], np.ndarray]:
    """``##XYPOINTS=(XY..XY)``: X, Y pairs in AFFN, scaled by XFACTOR and YFACTOR (nmrglue reads only
    the (X++(Y..Y)) forms)."""
    body = dic["XYPOINTS"][0].partition("\n")[2]
    values = re.findall(r"[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?", body)
    if len(values) < 4 or len(values) % 2:
        raise InputError(f"{path.name}: ##XYPOINTS holds no complete X, Y pairs")
    pairs = np.asarray(values, dtype=float).reshape(-1, 2)
    _check_length(path, len(pairs), _float(dic, "NPOINTS", path))
    xf, yf = _float(dic, "XFACTOR", path) or 1.0, _float(dic, "YFACTOR", path) or 1.0
    return (pairs[:, 0] * xf, (_first(dic, "XUNITS") or "").upper()), pairs[:, 1] * yf


def _ppm_axis(dic: dict, path: Path, axis: tuple[np.ndarray, str]) -> np.ndarray:
    x, units = axis
    if "PPM" in units:
        return x
    if units and "HZ" not in units:
        raise InputError(f"{path.name}: X units {units!r} are neither ppm nor Hz")
    freq = _float(dic, "$SF", path) or _jcamp_frequency(dic)
    if not freq:
        raise InputError(f"{path.name}: an axis in Hz needs ##.OBSERVE FREQUENCY")
    reference = _first(dic, ".SHIFTREFERENCE")
    if reference:
        fields = [f.strip() for f in reference.strip("() ").split(",")]
        try:
            point, shift = int(float(fields[2])), float(fields[3])
        except (IndexError, ValueError):
            raise InputError(f"{path.name}: ##.SHIFT REFERENCE={reference} is not (method, name, point, "
                             "shift)") from None
        if not 1 <= point <= len(x):
            raise InputError(f"{path.name}: ##.SHIFT REFERENCE names point {point} of {len(x)}")
        return shift + (x - x[point - 1]) / freq
    offset = _float(dic, "$OFFSET", path)
    if offset is not None:
        return offset + (x - x[0]) / freq
    return x / freq


def _jcamp_frequency(dic: dict) -> float:
    for key in (".OBSERVEFREQUENCY", "$SFO1", "$SF"):
        text = _first(dic, key)
        try:
            if text and float(text) > 0:
                return float(text)
        except ValueError:
            continue
    return 0.0


def _jcamp_nucleus(dic: dict, path: Path) -> str:
    text = _first(dic, ".OBSERVENUCLEUS") or _first(dic, "$NUC1") or _first(dic, "$AXNUC")
    if not text:
        raise InputError(f"{path.name} does not say which nucleus it observed (##.OBSERVE NUCLEUS)")
    return _nucleus_name(text)


def _nucleus_name(text: str) -> str:
    """``^1H``, ``<13C>``, ``C13`` -> "1H", "13C"."""
    t = text.strip().strip("<>^ ").replace("^", "")
    m = re.fullmatch(r"([A-Za-z]{1,2})(\d{1,3})", t)
    return f"{m.group(2)}{m.group(1).capitalize()}" if m else t


def _jcamp_solvent(dic: dict) -> str | None:
    return _solvent_id(_first(dic, ".SOLVENTNAME") or _first(dic, "$SOLVENT"))


def _solvent_id(name: str | None) -> str | None:
    from .solvents import find_solvent

    name = (name or "").strip().strip("<>").strip()
    if not name:
        return None
    try:
        return find_solvent(name).id
    except InputError:
        return None


def _jcamp_experiment(dic: dict) -> str:
    return (_first(dic, ".PULSESEQUENCE") or _first(dic, "$PULPROG") or "").strip("<> ").lower()


# ------------------------------------------------------------ Bruker folders ----


def _read_bruker_folder(folder: Path) -> Trace:
    """A Bruker processed-data folder (``1r``, ``procs``; ``acqus`` two levels up) or the experiment
    folder above it, read with :func:`nmrglue.bruker.read_pdata`."""
    pdata = _pdata_folder(folder)
    import nmrglue

    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            dic, data = nmrglue.bruker.read_pdata(str(pdata), read_acqus=(pdata.parent.parent / "acqus").is_file(),
                                                  scale_data=True)
    except (OSError, ValueError, IndexError, KeyError, TypeError) as exc:
        raise InputError(f"cannot read the Bruker folder {pdata}: {exc}".splitlines()[0]) from None
    procs, acqus = dic.get("procs", {}), dic.get("acqus", {})
    y = np.asarray(data, dtype=float)
    if y.ndim != 1:
        raise InputError(f"{pdata} holds 2D data; give a 1D spectrum")
    try:
        offset, sw_hz, sf, size = (float(procs["OFFSET"]), float(procs["SW_p"]), float(procs["SF"]), int(procs["SI"]))
    except (KeyError, TypeError, ValueError):
        raise InputError(f"{pdata}/procs lacks OFFSET, SW_p, SF or SI; cannot place the axis") from None
    if len(y) != size:
        raise InputError(f"{pdata}/1r holds {len(y)} of its {size} points; the file is truncated or damaged")
    ppm = offset - np.arange(size) * (sw_hz / sf / size)
    nucleus = _nucleus_name(str(acqus.get("NUC1") or procs.get("AXNUC") or ""))
    if not nucleus:
        raise InputError(f"{pdata}: neither acqus NUC1 nor procs AXNUC names the nucleus")
    frequency = float(acqus.get("SFO1") or sf)
    return Trace(ppm, y, nucleus, frequency, _solvent_id(str(acqus.get("SOLVENT") or "")),
                 str(acqus.get("PULPROG") or "").strip("<> ").lower(), str(pdata))


def _pdata_folder(folder: Path) -> Path:
    """The processed-data folder to read, or InputError for an FID-only or 2D experiment."""
    if (folder / "2rr").exists() or (folder / "ser").exists() or (folder / "acqu2s").exists():
        raise InputError(f"{folder} holds 2D data; give a 1D spectrum")
    if (folder / "1r").is_file():
        return folder
    processed = folder / "pdata" / "1"
    if (processed / "2rr").exists():
        raise InputError(f"{folder} holds 2D data; give a 1D spectrum")
    if (processed / "1r").is_file():
        return processed
    if (folder / "fid").is_file():
        raise InputError(f"{folder} holds only an unprocessed FID; process it (Fourier transform, phase, "
                         "baseline) so that pdata/1/1r exists, or give a peak list")
    raise InputError(f"{folder} is neither a Bruker experiment folder (pdata/1/1r) nor a processed-data folder "
                     "(1r, procs)")
