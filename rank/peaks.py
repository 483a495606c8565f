"""Observed 1H peak lists: reading, solvent signals, integral normalisation.

Peak lists arrive inline, as written in papers and supporting information, or
as files (CSV, TSV, JSON, JCAMP-DX peak tables).

>>> spec = parse_peak_text("1H NMR (400 MHz, CDCl3) δ 4.12 (q, J = 7.1 Hz, 2H), 2.05 (s, 3H)")
>>> spec.field_mhz, spec.solvent, [p.multiplicity for p in spec.peaks]
(400.0, 'CDCl3', ['q', 's'])
"""

from __future__ import annotations

import json
import math
import re
import warnings
from dataclasses import dataclass, replace
from fractions import Fraction
from functools import cache
from pathlib import Path
from typing import NamedTuple

from .errors import InputError
from .tables import read_table

SHIFT_RANGE = (-1.0, 16.0)
_SIMPLE = {"s": 0, "d": 1, "t": 2, "q": 3, "quint": 4, "sext": 5, "sept": 6}
_ALIASES = {
    "p": "quint", "quin": "quint", "pent": "quint", "pentet": "quint", "quintet": "quint",
    "sextet": "sext", "hept": "sept", "septet": "sept", "heptet": "sept", "sep": "sept",
    "singlet": "s", "doublet": "d", "triplet": "t", "quartet": "q", "multiplet": "m",
    "bs": "br s", "brs": "br s", "br. s": "br s", "br.s": "br s", "bs.": "br s", "br": "br",
    "br.": "br", "broad": "br", "br m": "m", "brm": "m", "bd": "br d", "brd": "br d", "bt": "br t",
    "brt": "br t", "dm": "m", "tm": "m", "qm": "m", "abq": "m", "ab q": "m", "ab": "m", "aa'bb'": "m",
    "aa'xx'": "m", "abx": "m",
}
# "app t", "app. sext", "apparent q", "pseudo-t", "ps t": read as the pattern they look like
_APPARENT = re.compile(r"^(?:apparent|app\.?|pseudo-?|ps\.?)\s*(?=\w)")
_COMPOUND = re.compile(r"^[dtq]{2,4}$")
_NUMBER = r"[-−]?\d+(?:\.\d+)?"
_DASH = r"\s*[-–—]\s*"


@dataclass(frozen=True)
class Peak:
    """One observed signal.

    Attributes
    ----------
    shift : centre in ppm (the middle of a range).
    low, high : the range in ppm (equal for a single value).
    integral : as given, relative or absolute; None when not given.
    multiplicity : normalised text: s, d, t, q, quint, sext, sept, m, br s, br, dd, dt, ...;
        None when the list does not say (unknown, which is not ``m``).
    j : coupling constants in Hz, as given.
    label : the chemist's assignment written with the peak (``OCH3``, ``H-2, H-6``), or "".
    counted : the integral was written as a whole number of H (``3H``): an absolute count.
    """

    shift: float
    low: float
    high: float
    integral: float | None = None
    multiplicity: str | None = None
    j: tuple[float, ...] = ()
    label: str = ""
    counted: bool = False

    @property
    def broad(self) -> bool:
        return self.multiplicity is not None and self.multiplicity.startswith("br")

    @property
    def caption(self) -> str:
        """Short text for the peak: its shift or range and multiplicity, e.g. ``7.35–7.20 (m)``."""
        where = f"{self.high:.2f}–{self.low:.2f}" if self.high - self.low > 1e-9 else f"{self.shift:.2f}"
        return f"{where} ({self.multiplicity})" if self.multiplicity else where


@dataclass(frozen=True)
class Spectrum:
    """A peak list with what its header or file says about the experiment.

    ``nucleus`` is "1H" or "13C" when a header names it, else None.
    """

    peaks: tuple[Peak, ...]
    field_mhz: float | None = None
    solvent: str | None = None
    nucleus: str | None = None


@dataclass(frozen=True)
class Dropped:
    """A peak taken out as solvent, water or reference, with the reason."""

    peak: Peak
    reason: str


@dataclass(frozen=True)
class Normalisation:
    """Whole-number H counts for the kept peaks.

    ``missing`` hydrogens of the formula are not observed (exchangeable H that
    are broad or exchanged); ``error`` is the largest rounding residual;
    ``written``: the counts are the H counts the chemist wrote, taken as they are.
    """

    counts: tuple[int, ...]
    missing: int
    scale: float
    error: float
    written: bool = False

    @property
    def text(self) -> str:
        shown = ", ".join(str(c) for c in self.counts)
        extra = f"; {self.missing} H not observed" if self.missing else ""
        if self.written:
            return f"{shown} H as written{extra}"
        return f"{shown} H{extra} (scale {self.scale:.4g}, rounding {self.error:.2f})"


# ---------------------------------------------------------------- solvents ----


@dataclass(frozen=True)
class Solvent:
    """A deuterated solvent of ``rules/solvents.tsv``."""

    id: str
    residual: float
    residual_multiplicity: str
    water: float
    exchange: bool
    tolerance_residual: float
    tolerance_water: float
    tms: float


@cache
def _solvents() -> dict[str, Solvent]:
    table = {}
    for r in read_table("solvents"):
        s = Solvent(r["id"], float(r["residual"]), r["residual_multiplicity"], float(r["water"]),
                    r["exchange"] == "yes", float(r["tolerance_residual"]),
                    float(r["tolerance_water"]), float(r["tms"]))
        for name in [r["id"], *r["aliases"].split(",")]:
            table[name.strip().lower()] = s
    return table


def solvent_names() -> list[str]:
    """The solvent ids peakrank knows."""
    return sorted({s.id for s in _solvents().values()})


def find_solvent(name: str) -> Solvent:
    """Look a solvent up by id or alias; InputError when unknown."""
    found = _solvents().get(name.strip().lower())
    if found is None:
        raise InputError(f"unknown solvent {name!r}; known are {', '.join(solvent_names())}")
    return found


def drop_solvent_signals(peaks: tuple[Peak, ...], solvent: Solvent) -> tuple[tuple[Peak, ...], tuple[Dropped, ...]]:
    """Remove residual solvent, water and TMS singlets.

    Only sharp or broad singlets, or peaks written without a multiplicity and
    without an H count, close to a tabulated value are dropped; a multiplet or a
    range that covers the value is kept, since it can hold the compound's own
    signals (common practice).  Water wanders with temperature and
    concentration, so a broad singlet or one without an H count is taken as
    water anywhere in the table's wider window; a sharp singlet that carries an
    H count is the compound's own unless it sits on the tabulated value within
    the residual tolerance (cyclohexane at 1.43 and tert-butyl groups near 1.45
    in CDCl3, methoxy singlets near 3.2 in DMSO-d6).  A peak written with an H
    count but no multiplicity (a database list) is the compound's own.
    """
    kept, dropped = [], []
    for p in peaks:
        reason = _solvent_reason(p, solvent)
        if reason:
            dropped.append(Dropped(p, reason))
        else:
            kept.append(p)
    return tuple(kept), tuple(dropped)


def _solvent_reason(p: Peak, solvent: Solvent) -> str | None:
    if p.high - p.low >= 0.05:
        return None
    unreported = p.multiplicity is None and p.integral is None
    singlet = p.multiplicity in ("s", "br s", "br") or unreported
    if (singlet or p.multiplicity == "m") and abs(p.shift - solvent.tms) <= 0.02:
        return "TMS reference"
    near_residual = abs(p.shift - solvent.residual) <= solvent.tolerance_residual
    if near_residual and (singlet or p.multiplicity == solvent.residual_multiplicity):
        return f"residual {solvent.id}"
    if singlet and _looks_like_water(p, solvent):
        return f"water in {solvent.id}"
    return None


def _looks_like_water(p: Peak, solvent: Solvent) -> bool:
    off = abs(p.shift - solvent.water)
    if off <= solvent.tolerance_residual:
        return True
    return off <= solvent.tolerance_water and (p.integral is None or p.broad)


@cache
def _not_compound_labels() -> dict[str, str]:
    return {r["label"].lower(): r["kind"] for r in read_table("peak_labels")}


_LABEL_NOISE = re.compile(r"\b(?:residual|peak|signal|impurity|trace|in|of)\b", re.IGNORECASE)


def drop_labelled_peaks(peaks: tuple[Peak, ...]) -> tuple[tuple[Peak, ...], tuple[Dropped, ...]]:
    """Remove the peaks the chemist labelled as solvent, water or reference (``rules/peak_labels.tsv``).

    >>> kept, dropped = drop_labelled_peaks(parse_peak_text("7.26 (s, CHCl3), 2.10 (s, 3H, OAc)").peaks)
    >>> [p.shift for p in kept], [d.reason for d in dropped]
    ([2.1], ["labelled 'CHCl3' (solvent)"])
    """
    kept, dropped = [], []
    for p in peaks:
        words = [" ".join(_LABEL_NOISE.sub(" ", part).split()).lower() for part in p.label.split(",")]
        kinds = [_not_compound_labels().get(w) for w in words if w]
        if kinds and all(kinds):
            dropped.append(Dropped(p, f"labelled {p.label!r} ({kinds[0]})"))
        else:
            kept.append(p)
    return tuple(kept), tuple(dropped)


# --------------------------------------------------------------- reading -----


def normalise_multiplicity(text: str) -> str:
    """Map the ways papers write multiplicities to one spelling.

    >>> [normalise_multiplicity(t) for t in ("app sext", "br. s", "hept", "p", "dd")]
    ['sext', 'br s', 'sept', 'quint', 'dd']
    """
    t = " ".join(text.strip().lower().replace("(", " ").replace(")", " ").split())
    t = _APPARENT.sub("", t)
    t = re.sub(r"^(?:br\.|broad)\s*", "br ", t).strip()
    t = _ALIASES.get(t, t)
    if t in _SIMPLE or t in ("m", "br s", "br") or _COMPOUND.match(t):
        return t
    if t.startswith("br "):
        inner = _ALIASES.get(t[3:], t[3:])
        if inner in _SIMPLE or inner == "m" or _COMPOUND.match(inner):
            return "br s" if inner == "s" else inner
    raise InputError(f"multiplicity {text!r} not understood; use s, d, t, q, quint, sext, sept, m, br s, dd, dt, ...")


def coupling_groups(multiplicity: str | None) -> tuple[int, ...] | None:
    """Sizes of the equivalent partner groups a first-order pattern implies.

    ``"dt"`` gives (1, 2); ``"s"`` gives (); ``"m"``, ``"br"`` and an unreported
    multiplicity (None) give None (unknown).
    """
    if multiplicity is None:
        return None
    if multiplicity in _SIMPLE:
        n = _SIMPLE[multiplicity]
        return (n,) if n else ()
    if multiplicity == "br s":
        return ()
    if _COMPOUND.match(multiplicity):
        return tuple(_SIMPLE[c] for c in multiplicity)
    return None


def format_peaks(peaks) -> str:
    """The peaks in the paper style :func:`parse_peak_text` reads back.

    >>> format_peaks(parse_peak_text("4.12 (q, J = 7.1 Hz, 2H, OCH2), 7.35-7.20 (m, 5H), 2.14 (3H)").peaks)
    '4.12 (q, J = 7.1 Hz, 2H, OCH2), 7.35–7.20 (m, 5H), 2.14 (3H)'
    """
    return ", ".join(_format_peak(p) for p in peaks)


def _format_peak(p: Peak) -> str:
    where = f"{_ppm_text(p.high)}–{_ppm_text(p.low)}" if p.high > p.low else _ppm_text(p.shift)
    inside = []
    if p.multiplicity:
        inside.append(p.multiplicity)
    if p.j:
        inside.append("J = " + ", ".join(f"{j:g}" for j in p.j) + " Hz")
    if p.integral is not None:
        inside.append(f"{int(p.integral)}H" if p.counted else f"{_relative_text(p.integral)}H")
    if p.label:
        inside.append(p.label)
    return f"{where} ({', '.join(inside)})" if inside else where


def _ppm_text(value: float) -> str:
    return f"{value:.2f}" if round(value, 2) == value else f"{value:.4f}".rstrip("0")


def _relative_text(value: float) -> str:
    """A relative integral always with a decimal point, so that it reads back as relative."""
    text = f"{value:.6f}".rstrip("0")
    return text + "0" if text.endswith(".") else text


def _number(text: str) -> float:
    return float(text.replace("−", "-"))


def _make_peak(a: float, b: float | None, integral: float | None, mult: str | None, j: tuple[float, ...],
               label: str = "", counted: bool = False) -> Peak:
    low, high = (a, a) if b is None else (min(a, b), max(a, b))
    for value in (low, high):
        if not SHIFT_RANGE[0] <= value <= SHIFT_RANGE[1]:
            raise InputError(f"shift {value:g} ppm is outside {SHIFT_RANGE[0]:g} to {SHIFT_RANGE[1]:g} ppm")
    if integral is not None and not integral > 0:
        raise InputError(f"peak at {(low + high) / 2:g} ppm: integral {integral:g} must be positive")
    if any(x <= 0 or x > 40 for x in j):
        raise InputError(f"peak at {(low + high) / 2:g} ppm: J values must lie between 0 and 40 Hz")
    multiplicity = None if mult is None else normalise_multiplicity(mult)
    return Peak(round((low + high) / 2, 4), low, high, integral, multiplicity, j, label, counted)


# A header names the nucleus and the experiment; its parentheses hold field, solvent and temperature:
#   1H NMR (400 MHz, CDCl3) δ   |  1H-NMR (CDCl3, 400 MHz): δ (ppm) =  |  δH (400 MHz; CDCl3)  |  ¹H NMR δ
_NUCLEUS = r"(?P<nucleus>(?:1|¹|\^1)?H|(?:13|¹³|\^13)C)"
_PARENS = r"\((?P<{name}>[^()]*)\)"
_HEADER = re.compile(
    rf"^\s*{_NUCLEUS}?(?:\s*\{{[^}}]*\}})?[\s-]*NMR\s*(?:{_PARENS.format(name='facts')})?\s*[:,]?\s*"
    rf"(?:(?:δ|delta)\s*(?P<delta_of>[HC](?![a-z]))?\s*(?:{_PARENS.format(name='facts2')})?)?\s*[:=]?\s*",
    re.IGNORECASE,
)
_DELTA_HEADER = re.compile(
    rf"^\s*(?:δ|delta)\s*(?P<delta_of>[HC](?![a-z]))?\s*(?:{_PARENS.format(name='facts')})?\s*[:=]?\s*",
    re.IGNORECASE,
)
_TEMPERATURE = re.compile(rf"{_NUMBER}\s*(?:[°º]\s*C|K)|r\.?\s*t\.?|room temperature", re.IGNORECASE)
_HEADER_NOISE = re.compile(r"ppm|δ|delta|tms|j\s+in\s+hz|internal standard|.*\bref(?:erence)?\b.*", re.IGNORECASE)
# A decimal comma: digits, a comma and digits with no space, not part of a label such as H-2,6
_DECIMAL_COMMA = re.compile(r"(?<![\w.,\-−])(\d+),(\d+)(?![\d,])")


def parse_peak_text(text: str) -> Spectrum:
    """Read a peak list written as in a paper.

    Parameters
    ----------
    text : str
        For example ``"1H NMR (400 MHz, CDCl3) δ 7.35–7.20 (m, 5H), 4.12 (q,
        J = 7.1 Hz, 2H), 2.05 (s, 3H, OCH3)"``.  The header is optional; inside
        the parentheses the multiplicity, the H count, the J values and an
        assignment label may come in any order.  A multiplicity that is not
        written is unknown (``None``), not ``m``.  Decimal commas (``2,14``)
        are read as decimal points when every number uses them.

    Returns
    -------
    Spectrum

    Raises
    ------
    InputError
        Text that cannot be read as peaks, shifts outside -1 to 16 ppm, zero or
        negative H counts, decimal commas mixed with decimal points, or an
        empty list.

    Examples
    --------
    >>> [(p.shift, p.integral, p.multiplicity, p.label) for p in parse_peak_text("3.80 (3H, s, OCH3)").peaks]
    [(3.8, 3.0, 's', 'OCH3')]
    """
    body = _tidy_text(text)
    field, solvent, nucleus = None, None, None
    head = _HEADER.match(body) or _DELTA_HEADER.match(body)
    if head:
        found = head.groupdict()
        field, solvent = _header_facts(", ".join(f for f in (found.get("facts"), found.get("facts2")) if f))
        nucleus = _nucleus(found.get("nucleus"), found.get("delta_of"))
        body = body[head.end():]
    if nucleus == "13C":
        raise InputError("this list's header names 13C; the peak list must be a 1H list")
    body = _decimal_commas(body)
    if not body.strip():
        raise InputError("the peak list is empty; give peaks like '7.26 (s, 1H), 2.10 (s, 3H)'")
    peaks = tuple(_peak_from_entry(*entry) for entry in _entries(body))
    return Spectrum(peaks, field, solvent, nucleus)


def _tidy_text(text: str) -> str:
    """One line, ordinary spaces and minus signs, no final full stop or trailing 'ppm'."""
    body = " ".join(text.replace("\u00a0", " ").replace("\u2009", " ").replace("\u202f", " ").split())
    body = body.replace("−", "-").replace("‐", "-").replace("‑", "-")
    body = re.sub(r"[\s.]*$", "", body)
    return re.sub(r"\s*\bppm\.?$", "", body, flags=re.IGNORECASE)


def _nucleus(named: str | None, delta_of: str | None) -> str | None:
    for tag in (named, delta_of):
        if tag:
            return "13C" if tag.upper().endswith("C") else "1H"
    return None


def _decimal_commas(body: str) -> str:
    """Read 2,14 as 2.14 when the list writes every decimal that way; refuse a mixture."""
    commas = _DECIMAL_COMMA.findall(body)
    if not commas:
        return body
    first = ",".join(commas[0])
    if re.search(r"\d\.\d", body):
        raise InputError(f"{first!r} looks like a decimal comma beside decimal points; write "
                         f"{'.'.join(commas[0])} (or '{commas[0][0]}, {commas[0][1]}' for two peaks)")
    return _DECIMAL_COMMA.sub(r"\1.\2", body)


_ENTRY = re.compile(
    rf"\s*(?:δ\s*)?(?P<a>{_NUMBER})(?:{_DASH}(?P<b>{_NUMBER}))?\s*(?:ppm\b)?\s*"
    r"(?:\((?P<inside>(?:[^()]|\([^()]*\))*)\))?\s*(?:[,;]|$)"
)


def _entries(body: str):
    """(low, high, text inside the parentheses) for each peak of the body; InputError where unreadable."""
    pos = 0
    while pos < len(body):
        m = _ENTRY.match(body, pos)
        if not m or m.end() == pos:
            rest = body[pos:].strip()
            raise InputError(f"cannot read the peak list at {rest[:30]!r}; write e.g. '4.12 (q, J = 7.1 Hz, 2H)'")
        yield m.group("a"), m.group("b"), m.group("inside") or ""
        pos = m.end()


def _peak_from_entry(a: str, b: str | None, inside: str) -> Peak:
    read = _inside(inside)
    return _make_peak(_number(a), _number(b) if b else None, read.integral, read.multiplicity, read.j,
                      read.label, read.counted)


def _header_facts(inside: str) -> tuple[float | None, str | None]:
    field = solvent = None
    for part in re.split(r"[,;]", inside):
        part = part.strip()
        m = re.fullmatch(r"(\d+(?:\.\d+)?)\s*MHz", part, re.IGNORECASE)
        if m:
            field = float(m.group(1))
        elif not part or _TEMPERATURE.fullmatch(part) or _HEADER_NOISE.fullmatch(part):
            continue
        else:
            solvent = find_solvent(part).id
    return field, solvent


class _Inside(NamedTuple):
    integral: float | None
    multiplicity: str | None
    j: tuple[float, ...]
    label: str
    counted: bool


# J in its usual spellings: J = 8.9 Hz, J 8.9, J=8.9Hz, 3J = 8.9 Hz, JHH = 8.9, J(H,H) = 8.9, J1 = 8.9
_J_LEAD = re.compile(r"^(?:\d|[²³⁴])?J(?:\s*_?\s*HH|\s*H,H|\d(?![\d.]))?\s*(?:\([^)]*\))?\s*[=:]?\s*(?=[\d.])",
                     re.IGNORECASE)
_J_VALUES = re.compile(rf"^(?:{_NUMBER}\s*(?:,|and|&|/)?\s*)+(?:Hz)?$", re.IGNORECASE)
_H_COUNT = re.compile(rf"^(?P<n>{_NUMBER})\s*H$")
# a lower-case word of multiplicity letters that is not one: a typing slip, not a label
_MULTIPLICITY_LIKE = re.compile(r"^[sdtqmpbrx. ]{1,6}$")


def _inside(inside: str) -> _Inside:
    """Read the parentheses of one peak: H count, multiplicity, J values, label, in any order."""
    integral, mult, js, labels, counted = None, None, [], [], False
    in_j = False
    for part in _top_level_parts(inside):
        if not part:
            continue
        lead = _J_LEAD.match(part)
        if lead:
            part, in_j = part[lead.end():], True
        if in_j and _J_VALUES.match(part):
            js.extend(_number(x) for x in re.findall(_NUMBER, part))
            continue
        in_j = False
        count = _H_COUNT.match(part)
        if count:
            integral = _number(count.group("n"))
            if integral <= 0:
                raise InputError(f"H count {part!r} must be positive")
            counted = re.fullmatch(r"\d+", count.group("n")) is not None
        elif part.lower() == "hz":
            continue
        elif mult is None and _is_multiplicity(part):
            mult = part
        elif _MULTIPLICITY_LIKE.match(part) and part == part.lower():
            normalise_multiplicity(part)  # raises with the spellings understood
        else:
            labels.append(part)
    return _Inside(integral, mult, tuple(js), ", ".join(labels), counted)


def _top_level_parts(text: str) -> list[str]:
    """Split at commas and semicolons outside nested parentheses: ``J (H,H) = 7.1, 2H`` gives two parts."""
    parts, depth, start = [], 0, 0
    for i, ch in enumerate(text):
        depth += {"(": 1, ")": -1}.get(ch, 0)
        if ch in ",;" and depth == 0:
            parts.append(text[start:i].strip())
            start = i + 1
    parts.append(text[start:].strip())
    return parts


def _is_multiplicity(text: str) -> bool:
    try:
        normalise_multiplicity(text)
    except InputError:
        return False
    return True


def _peak_from_fields(shift: str, integral: object, mult: object, j: object, counts_h: bool = False,
                      label: object = None) -> Peak:
    """A peak from a file's fields; ``counts_h``: the integral column holds H counts (n_h, nH)."""
    text = str(shift).strip()
    m = re.fullmatch(rf"({_NUMBER})(?:{_DASH}({_NUMBER}))?", text)
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
        js = tuple(_number(x) for x in re.findall(_NUMBER, str(j)))
    return _make_peak(_number(m.group(1)), _number(m.group(2)) if m.group(2) else None, value, mult_text, js,
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


def _pick(columns: list[str], role: str) -> str | None:
    lowered = {c.strip().lower(): c for c in columns}
    for name in _COLUMNS[role]:
        if name in lowered:
            return lowered[name]
    return None


def _read_table_file(path: Path, sep: str) -> Spectrum:
    import pandas as pd

    try:
        frame = pd.read_csv(path, sep=sep, dtype=str, comment="#", skipinitialspace=True)
    except (OSError, ValueError, UnicodeDecodeError, pd.errors.ParserError) as exc:
        raise InputError(f"cannot read {path} as a table: {exc}".splitlines()[0]) from None
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
    peaks = []
    for line in rows.splitlines():
        numbers = re.findall(_NUMBER, line)
        for i in range(0, len(numbers) - 1, 3 if "W" in form.upper() else 2):
            x, y = _number(numbers[i]), _number(numbers[i + 1])
            shift = x / field if "HZ" in xunits else x
            peaks.append(_peak_from_fields(f"{shift:.4f}", y, mults.get(round(x, 3)), None))
    solvent = _find_label(dic, ".SOLVENTNAME")
    return Spectrum(tuple(peaks), field, find_solvent(solvent[0]).id if solvent else None)


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
        if len(values) > where and values[where] and re.fullmatch(_NUMBER, values[0]):
            found[round(_number(values[0]), 3)] = values[where]
    return found


def read_peaks(source: str) -> Spectrum:
    """Read peaks from a file (by its suffix) or from inline text.

    Raises InputError for unreadable files, unknown formats and malformed text.
    """
    text = source.strip()
    suffix = Path(text).suffix.lower() if "\n" not in text and len(text) < 4096 else ""
    if suffix in (".csv", ".tsv", ".txt", ".json", ".jdx", ".dx", ".jcamp"):
        path = Path(text)
        if not path.is_file():
            raise InputError(f"peak file {text!r} not found")
        if suffix == ".json":
            spectrum = _read_json(path)
        elif suffix in (".jdx", ".dx", ".jcamp"):
            spectrum = _read_jcamp(path)
        elif suffix == ".txt":
            try:
                text_in_file = path.read_text(encoding="utf-8")
            except (OSError, UnicodeDecodeError) as exc:
                raise InputError(f"cannot read {path} as text: {exc}".splitlines()[0]) from None
            spectrum = parse_peak_text(text_in_file)
        else:
            spectrum = _read_table_file(path, "," if suffix == ".csv" else "\t")
    else:
        spectrum = parse_peak_text(text)
    if not spectrum.peaks:
        raise InputError("the peak list is empty")
    return spectrum


# ----------------------------------------------------------- normalisation ----


def normalise(peaks: tuple[Peak, ...], hydrogens: int, max_missing: int, keep: int = 3) -> list[Normalisation]:
    """Whole-number H counts for the peaks.

    H counts written as whole numbers (``3H``) on every peak are absolute: they
    are taken as written, and the formula's remaining hydrogens, at most
    ``max_missing`` of them, are exchangeable H left unreported.  Relative
    integrals (27.1, 40.5, 26.9; or any list not written as whole H counts) are
    scaled so that they sum to the formula's hydrogens, or to fewer when up to
    ``max_missing`` exchangeable H may be unobserved; every peak holds at least
    one H.  The plausible choices are returned best first (smallest rounding
    residual, fewest missing H), so that the matching can decide between them.

    Raises
    ------
    InputError
        When no choice fits: more peaks than hydrogens, written H counts that
        add up to more than the formula's H (or to fewer than its H less the
        exchangeable ones), or integrals that cannot be brought to whole numbers
        summing to the formula's count.
    """
    n = len(peaks)
    if n > hydrogens:
        raise InputError(f"{n} peaks but the formula has only {hydrogens} H; check the formula or the list")
    given = [p.integral for p in peaks]
    if any(g is None for g in given):
        if all(g is None for g in given):
            return [Normalisation(tuple(0 for _ in peaks), 0, 0.0, 0.0)]
        raise InputError("some peaks have an integral and some do not; give all or none")
    if all(p.counted for p in peaks):
        return [_as_written(peaks, hydrogens, max_missing)]
    total = sum(given)
    options = []
    for target in range(hydrogens, max(hydrogens - max_missing, n) - 1, -1):
        scale = target / total
        raw = [g * scale for g in given]
        counts = [max(1, round(r)) for r in raw]
        diff = target - sum(counts)
        order = sorted(range(n), key=lambda i: raw[i] - counts[i], reverse=diff > 0)
        for i in order[: abs(diff)]:
            counts[i] += 1 if diff > 0 else -1
        if min(counts) < 1:
            continue
        error = max(abs(r - c) / max(c, 1) ** 0.5 for r, c in zip(raw, counts))
        if error <= 0.35:
            options.append(Normalisation(tuple(counts), hydrogens - target, scale, error))
    options.sort(key=lambda o: (round(o.error, 1), o.missing))
    if not options:
        ratio = _smallest_ratio(given)
        raise InputError(
            f"integrals {', '.join(f'{g:g}' for g in given)} (about {ratio}) cannot be scaled to "
            f"whole numbers summing to the formula's {hydrogens} H"
        )
    return options[:keep]


def _as_written(peaks: tuple[Peak, ...], hydrogens: int, max_missing: int) -> Normalisation:
    counts = tuple(int(p.integral) for p in peaks)
    total = sum(counts)
    if total > hydrogens:
        raise InputError(f"the H counts written add up to {total} H but the formula has {hydrogens} H; "
                         "check the formula or the counts")
    if hydrogens - total > max_missing:
        can = f"at most {max_missing} of them" if max_missing else "none of them"
        raise InputError(f"the H counts written add up to {total} H but the formula has {hydrogens} H, and {can} "
                         "can be exchangeable H left unreported; check the formula or the counts "
                         "(write relative integrals as decimals, e.g. 1.00H, 1.52H)")
    return Normalisation(counts, hydrogens - total, 1.0, 0.0, written=True)


def _smallest_ratio(values: list[float]) -> str:
    low = min(values)
    parts = [Fraction(v / low).limit_denominator(4) for v in values]
    lcm = math.lcm(*(p.denominator for p in parts))
    return ":".join(str(int(p * lcm)) for p in parts)


def with_counts(peaks: tuple[Peak, ...], norm: Normalisation) -> tuple[Peak, ...]:
    """The peaks with their integrals replaced by the normalised H counts."""
    return tuple(replace(p, integral=float(c)) for p, c in zip(peaks, norm.counts))
