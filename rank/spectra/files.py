"""Peak list files: CSV, TSV, JSON, JCAMP-DX peak tables, and text files of inline lists; spectrum files
(JCAMP-DX spectra, Bruker folders) are read as traces and their peaks picked.

:func:`read_peaks` takes a file path (by its suffix) or inline text; :func:`read_peak_source` also says
what picking dropped and how, and keeps the trace.
"""

from __future__ import annotations

import json
import math
import re
import warnings
from pathlib import Path

from ..errors import InputError
from .peaks import DASH, NUMBER, CarbonSpectrum, Peak, PeakSource, Spectrum, make_peak, number
from .solvents import find_solvent
from .text import carbon_peaks, parse_carbon_text, parse_peak_text
from .trace import Trace, is_spectrum_source, read_trace

__all__ = ["read_carbon_peaks", "read_peak_source", "read_peaks"]


def _peak_from_fields(shift: str, integral: object, mult: object, j: object, counts_h: bool = False,
                      label: object = None) -> Peak:
    """A peak from a file's fields; ``counts_h``: the integral column holds H counts (n_h, nH)."""
    text = str(shift).strip()
    m = re.fullmatch(rf"({NUMBER})(?:{DASH}({NUMBER}))?", text)
    if not m:
        raise InputError(f"shift {text!r} is not a number or a range like 7.35-7.20")
    value = None if _blank(integral) else integral
    written = str(value).strip() if value is not None else ""
    if isinstance(value, str):
        value = value.strip().rstrip("Hh").strip() or None
    try:
        value = None if value is None else float(value)
    except ValueError:
        raise InputError(f"integral {integral!r} is not a number") from None
    counted = value is not None and (counts_h or written.upper().endswith("H")) and float(value).is_integer() \
        and "." not in written
    mult_text = None if _blank(mult) else str(mult)
    js: tuple[float, ...] = ()
    if not _blank(j):
        js = tuple(number(x) for x in re.findall(NUMBER, str(j)))
    return make_peak(number(m.group(1)), number(m.group(2)) if m.group(2) else None, value, mult_text, js,
                      "" if _blank(label) else str(label).strip(), counted)


def _blank(value: object) -> bool:
    return value is None or (isinstance(value, float) and math.isnan(value)) or str(value).strip() == ""


_COLUMNS = {
    "shift": ("shift", "delta", "ppm", "δ", "shift_ppm", "range", "position"),
    "integral": ("integral", "n_h", "nh", "h", "integration", "area", "intensity"),
    "multiplicity": ("multiplicity", "mult", "pattern"),
    "j": ("j", "j_hz", "coupling", "couplings"),
    "label": ("label", "assignment", "assign"),
}


_H_COUNT_COLUMNS = ("n_h", "nh", "h")
_CARBON_COLUMNS = {
    "shift": _COLUMNS["shift"],
    "type": ("type", "dept", "carbon_type", "n_h", "nh", "h", "multiplicity", "mult"),
    "carbons": ("carbons", "n_c", "nc", "count"),
    "label": _COLUMNS["label"],
}


def _pick(columns: list[str], role: str, names: dict[str, tuple[str, ...]] = _COLUMNS) -> str | None:
    lowered = {c.strip().lower(): c for c in columns}
    for name in names[role]:
        if name in lowered:
            return lowered[name]
    return None


def _table_frame(path: Path, sep: str):
    import pandas as pd

    try:
        return pd.read_csv(path, sep=sep, dtype=str, comment="#", skipinitialspace=True)
    except (OSError, ValueError, UnicodeDecodeError, pd.errors.ParserError) as exc:
        raise InputError(f"cannot read {path} as a table: {exc}".splitlines()[0]) from None


def _read_table_file(path: Path, sep: str) -> Spectrum:
    frame = _table_frame(path, sep)
    cols = list(frame.columns)
    shift = _pick(cols, "shift")
    if shift is None:
        raise InputError(f"{path}: no shift column; name one of {', '.join(_COLUMNS['shift'])}")
    roles = {r: _pick(cols, r) for r in ("integral", "multiplicity", "j", "label")}
    counts_h = roles["integral"] is not None and roles["integral"].strip().lower() in _H_COUNT_COLUMNS
    peaks = tuple(
        _peak_from_fields(
            row[shift],
            row[roles["integral"]] if roles["integral"] else None,
            row[roles["multiplicity"]] if roles["multiplicity"] else None,
            row[roles["j"]] if roles["j"] else None,
            counts_h,
            row[roles["label"]] if roles["label"] else None,
        )
        for _, row in frame.iterrows()
        if isinstance(row[shift], str) and row[shift].strip()
    )
    return Spectrum(peaks)


def _read_json(path: Path) -> Spectrum:
    try:
        data = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, ValueError) as exc:
        raise InputError(f"cannot read {path} as JSON: {exc}") from None
    items = data.get("peaks") if isinstance(data, dict) else data
    if not isinstance(items, list):
        raise InputError(f"{path}: expected a list of peaks or an object with a 'peaks' list")
    peaks = []
    for item in items:
        if not isinstance(item, dict) or not any(k in item for k in ("shift", "range")):
            raise InputError(f"{path}: each peak needs a 'shift' (or 'range')")
        shift = item.get("shift", item.get("range"))
        if isinstance(shift, list | tuple):
            shift = "-".join(str(x) for x in shift)
        peaks.append(_peak_from_fields(str(shift), item.get("integral", item.get("n_h")),
                                       item.get("multiplicity"), item.get("j"), "n_h" in item,
                                       item.get("label", item.get("assignment"))))
    field = data.get("field_mhz") if isinstance(data, dict) else None
    try:
        field = float(field) if field else None
    except (TypeError, ValueError):
        raise InputError(f"{path}: field_mhz {field!r} is not a number of MHz") from None
    solvent = data.get("solvent") if isinstance(data, dict) else None
    return Spectrum(tuple(peaks), field, find_solvent(solvent).id if solvent else None)


def _find_label(node: object, label: str) -> list[str] | None:
    if isinstance(node, dict):
        if label in node:
            return node[label]
        for value in node.values():
            found = _find_label(value, label)
            if found is not None:
                return found
    elif isinstance(node, list):
        for value in node:
            found = _find_label(value, label)
            if found is not None:
                return found
    return None


def _read_jcamp(path: Path) -> Spectrum:
    """JCAMP-DX peak table: ##PEAK TABLE=(XY..XY) or (XYW..XYW), with optional
    ##PEAK ASSIGNMENTS=(XYMA) for multiplicities (IUPAC JCAMP-DX for NMR,
    A. N. Davies, P. Lampen, Appl. Spectrosc. 1993, 47, 1093)."""
    rows, field, solvent = _jcamp_rows(path)
    peaks = tuple(_peak_from_fields(f"{shift:.4f}", y, mult, None) for shift, y, mult in rows)
    return Spectrum(peaks, field, solvent)


def _jcamp_rows(path: Path) -> tuple[list[tuple[float, float, str | None]], float | None, str | None]:
    """(shift in ppm, Y, multiplicity or None) per line of a JCAMP-DX peak table, the observe
    frequency (MHz) and the solvent."""
    import nmrglue

    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            dic = nmrglue.jcampdx.read(str(path))[0]
    except (OSError, ValueError, IndexError, KeyError, UnicodeDecodeError) as exc:
        raise InputError(f"cannot read {path} as JCAMP-DX: {exc}".splitlines()[0]) from None
    table = _find_label(dic, "PEAKTABLE")
    if not table:
        raise InputError(f"{path}: no ##PEAK TABLE in this JCAMP-DX file")
    text = table[0]
    form, _, rows = text.partition("\n")
    xunits = (_find_label(dic, "XUNITS") or ["PPM"])[0].upper()
    freq = _find_label(dic, ".OBSERVEFREQUENCY")
    field = float(freq[0]) if freq else None
    if "HZ" in xunits and not field:
        raise InputError(f"{path}: shifts in Hz need ##.OBSERVE FREQUENCY")
    assignments = _find_label(dic, "PEAKASSIGNMENTS")
    mults = _assigned_multiplicities(assignments[0]) if assignments else {}
    found = []
    for line in rows.splitlines():
        numbers = re.findall(NUMBER, line)
        for i in range(0, len(numbers) - 1, 3 if "W" in form.upper() else 2):
            x, y = number(numbers[i]), number(numbers[i + 1])
            found.append((x / field if "HZ" in xunits else x, y, mults.get(round(x, 3))))
    solvent = _find_label(dic, ".SOLVENTNAME")
    return found, field, find_solvent(solvent[0]).id if solvent else None


def _assigned_multiplicities(text: str) -> dict[float, str]:
    """Multiplicities by X from ##PEAK ASSIGNMENTS=(XYMA) or (XYMWA).

    Each entry is ``(X, Y, M, <A>)``: M the multiplicity, A the assignment in
    angle brackets; Y, W and M may be left empty, and an M written in angle
    brackets is read too.  (XYA) and (XYWA) carry no multiplicity (JCAMP-DX,
    R. S. McDonald, P. A. Wilks, Appl. Spectrosc. 1988, 42, 151; for NMR,
    Davies, Lampen 1993).
    """
    form, _, rows = text.partition("\n")
    names = re.sub(r"[^A-Z]", "", form.upper())
    if "M" not in names:
        return {}
    where = names.index("M")
    found = {}
    for entry in re.finditer(r"\(((?:[^()<]|<[^>]*>)*)\)", rows):
        values = [v.strip().strip("<>").strip() for v in re.split(r",(?![^<]*>)", entry.group(1))]
        if len(values) > where and values[where] and re.fullmatch(NUMBER, values[0]):
            found[round(number(values[0]), 3)] = values[where]
    return found


def _read_source(source: str, readers: dict):
    """Dispatch a file path by its suffix to ``readers`` (keys json, jcamp, text, table; the table reader
    takes the separator), or read inline text with the text reader."""
    text = source.strip()
    suffix = Path(text).suffix.lower() if "\n" not in text and len(text) < 4096 else ""
    if suffix not in (".csv", ".tsv", ".txt", ".json", ".jdx", ".dx", ".jcamp"):
        return readers["text"](text)
    path = Path(text)
    if not path.is_file():
        raise InputError(f"peak file {text!r} not found")
    if suffix == ".json":
        return readers["json"](path)
    if suffix in (".jdx", ".dx", ".jcamp"):
        return readers["jcamp"](path)
    if suffix == ".txt":
        try:
            text_in_file = path.read_text(encoding="utf-8")
        except (OSError, UnicodeDecodeError) as exc:
            raise InputError(f"cannot read {path} as text: {exc}".splitlines()[0]) from None
        return readers["text"](text_in_file)
    return readers["table"](path, "," if suffix == ".csv" else "\t")


def read_peaks(source: str, solvent: str | None = None) -> Spectrum:
    """Read peaks from a file (by its suffix) or from inline text.

    A JCAMP-DX spectrum without a peak table, or a Bruker folder, is read as a trace and its peaks
    picked (referenced to ``solvent``, else the file's); :func:`read_peak_source` gives what picking
    dropped and its notes too.

    Raises InputError for unreadable files, unknown formats and malformed text.
    """
    if is_spectrum_source(source):
        return read_peak_source(source, "1H", solvent).spectrum
    spectrum = _read_source(source, {"json": _read_json, "jcamp": _read_jcamp, "text": parse_peak_text,
                                     "table": _read_table_file})
    if not spectrum.peaks:
        raise InputError("the peak list is empty")
    return spectrum


# ------------------------------------------------------------------ 13C ----


def _carbon_inside_text(kind: object, carbons: object, label: object) -> str:
    """A file's type, carbon count and label fields written as the parentheses of a 13C list entry,
    so that :func:`~rank.spectra.text.carbon_peaks` reads them; a bare number in the type field is the
    carbon's H count (n_h)."""
    parts = []
    if not _blank(kind):
        text = str(kind).strip()
        if re.fullmatch(r"\d+(?:\.0)?", text):
            n_h = int(float(text))
            if n_h > 3:
                raise InputError(f"a carbon carries 0 to 3 H, not {text}")
            text = ("C", "CH", "CH2", "CH3")[n_h]
        parts.append(text)
    if not _blank(carbons):
        text = str(carbons).strip()
        if not re.fullmatch(r"\d+(?:\.0)?", text):
            raise InputError(f"carbon count {text!r} is not a whole number")
        parts.append(f"{int(float(text))}C")
    if not _blank(label):
        parts.append(str(label).strip())
    return ", ".join(parts)


def _read_carbon_table(path: Path, sep: str) -> CarbonSpectrum:
    frame = _table_frame(path, sep)
    cols = list(frame.columns)
    shift = _pick(cols, "shift", _CARBON_COLUMNS)
    if shift is None:
        raise InputError(f"{path}: no shift column; name one of {', '.join(_COLUMNS['shift'])}")
    roles = {r: _pick(cols, r, _CARBON_COLUMNS) for r in ("type", "carbons", "label")}
    rows = [
        (row[shift], _carbon_inside_text(*(row[roles[r]] if roles[r] else None for r in ("type", "carbons", "label"))))
        for _, row in frame.iterrows()
        if isinstance(row[shift], str) and row[shift].strip()
    ]
    return CarbonSpectrum(carbon_peaks(rows))


def _read_carbon_json(path: Path) -> CarbonSpectrum:
    try:
        data = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, ValueError) as exc:
        raise InputError(f"cannot read {path} as JSON: {exc}") from None
    items = data.get("peaks") if isinstance(data, dict) else data
    if not isinstance(items, list):
        raise InputError(f"{path}: expected a list of peaks or an object with a 'peaks' list")
    rows = []
    for item in items:
        if not isinstance(item, dict) or "shift" not in item:
            raise InputError(f"{path}: each 13C peak needs a 'shift'")
        kind = next((item[k] for k in ("type", "dept", "n_h", "multiplicity") if k in item), None)
        rows.append((str(item["shift"]), _carbon_inside_text(kind, item.get("carbons"),
                                                             item.get("label", item.get("assignment")))))
    field = data.get("field_mhz") if isinstance(data, dict) else None
    try:
        field = float(field) if field else None
    except (TypeError, ValueError):
        raise InputError(f"{path}: field_mhz {field!r} is not a number of MHz") from None
    solvent = data.get("solvent") if isinstance(data, dict) else None
    return CarbonSpectrum(carbon_peaks(rows), field, find_solvent(solvent).id if solvent else None)


def _read_carbon_jcamp(path: Path) -> CarbonSpectrum:
    """JCAMP-DX 13C peak table: shifts from ##PEAK TABLE (Y, the intensity, is not used), carbon types
    or off-resonance letters from the M of ##PEAK ASSIGNMENTS when given (as :func:`read_peaks`)."""
    rows, field, solvent = _jcamp_rows(path)
    return CarbonSpectrum(carbon_peaks([(f"{shift:.4f}", mult or "") for shift, _, mult in rows]), field, solvent)


def read_carbon_peaks(source: str, solvent: str | None = None, dept135: str | None = None) -> CarbonSpectrum:
    """Read 13C peaks from a file (by its suffix) or from inline text, as :func:`read_peaks` reads 1H.

    A 13C spectrum file is picked as :func:`read_peak_source` does, its lines typed by the DEPT-135
    spectrum file ``dept135`` when given.

    A CSV or TSV table needs a shift column (``shift``, ``delta``, ``ppm``, ...) and may have a type
    column (``type``, ``dept``: C, CH, CH2, CH3, Cq or s/d/t/q; or ``n_h``: 0 to 3), a ``carbons``
    column (carbons in the line) and a ``label`` column; JSON is a list of such objects or
    ``{"peaks": [...], "solvent": ..., "field_mhz": ...}``; a ``.txt`` file holds an inline list.

    Raises InputError for unreadable files, unknown formats and malformed text.
    """
    if dept135 is not None or is_spectrum_source(source):
        return read_peak_source(source, "13C", solvent, dept135).spectrum
    spectrum = _read_source(source, {"json": _read_carbon_json, "jcamp": _read_carbon_jcamp,
                                     "text": parse_carbon_text, "table": _read_carbon_table})
    if not spectrum.peaks:
        raise InputError("the 13C peak list is empty")
    return spectrum




# ------------------------------------------------------------ spectrum files ----


def read_peak_source(source: str, nucleus: str | None = "1H", solvent: str | None = None,
                     dept135: str | None = None) -> PeakSource:
    """Read a 1H or 13C peak list from inline text, a peak file or a spectrum file.

    Parameters
    ----------
    source : inline text, a peak file (CSV, TSV, JSON, JCAMP-DX peak table, text), or a spectrum file
        (a JCAMP-DX spectrum, a Bruker experiment or processed-data folder), whose peaks are picked
        by :func:`rank.spectra.picking.pick_proton` or :func:`~rank.spectra.picking.pick_carbon`.
    nucleus : "1H" or "13C"; None takes a spectrum file's own nucleus (13C with ``dept135``), and reads
        any other source as a 1H list.
    solvent : the solvent to reference and drop by; None takes the file's.
    dept135 : for 13C, a DEPT-135 spectrum file that types the picked lines (CH and CH3 up, CH2
        down, quaternary absent); only with a 13C spectrum file.

    Returns
    -------
    PeakSource

    Raises
    ------
    InputError
        As :func:`read_peaks`; also for a spectrum of another nucleus, an FID, 2D data, and a DEPT-135
        file given without a 13C spectrum file or whose experiment is another.
    """
    spectrum_file = is_spectrum_source(source)
    if nucleus is None and dept135 is not None:
        nucleus = "13C"
    if nucleus not in (None, "1H", "13C"):
        raise InputError(f"peak lists are read for 1H or 13C, not {nucleus}")
    if dept135 is not None and (nucleus != "13C" or not spectrum_file):
        raise InputError("--dept135 types the lines of a 13C spectrum file; give that file with --carbon "
                         "(a JCAMP-DX spectrum or a Bruker folder)")
    if not spectrum_file:
        reader = read_carbon_peaks if nucleus == "13C" else read_peaks
        return PeakSource(reader(source))
    trace = read_trace(source, nucleus)
    dept = None if dept135 is None else _dept135_trace(dept135)
    from .picking import pick_carbon, pick_proton

    if trace.nucleus == "1H":
        picked = pick_proton(trace, solvent)
    elif trace.nucleus == "13C":
        picked = pick_carbon(trace, solvent, dept)
    else:
        raise InputError(f"{trace.source} is a {trace.nucleus} spectrum; peak lists are read for 1H or 13C")
    if not picked.spectrum.peaks:
        raise InputError(f"no peak picked in {trace.source}; check the file or give a peak list")
    return picked


def _dept135_trace(source: str) -> Trace:
    """The DEPT-135 spectrum; refused when its experiment is named and is not a DEPT-135."""
    if not is_spectrum_source(source):
        raise InputError(f"--dept135 {source!r} is not a spectrum file (a JCAMP-DX spectrum or a Bruker folder)")
    trace = read_trace(source, "13C")
    if trace.experiment and not trace.is_dept135:
        raise InputError(f"{trace.source} was recorded with {trace.experiment!r}, not a DEPT-135; "
                         "give the DEPT-135 spectrum")
    return trace
