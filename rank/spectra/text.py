"""Peak lists as papers print them: ``1H NMR (400 MHz, CDCl3) δ 4.12 (q, J = 7.1 Hz, 2H), …``.

>>> spec = parse_peak_text("1H NMR (400 MHz, CDCl3) δ 4.12 (q, J = 7.1 Hz, 2H), 2.05 (s, 3H)")
>>> spec.field_mhz, spec.solvent, [p.multiplicity for p in spec.peaks]
(400.0, 'CDCl3', ['q', 's'])
"""

from __future__ import annotations

import re
from typing import NamedTuple

from ..errors import InputError
from .peaks import (
    DASH,
    NUMBER,
    CarbonPeak,
    CarbonSpectrum,
    Peak,
    Spectrum,
    make_carbon_peak,
    make_peak,
    normalise_multiplicity,
    number,
)
from .solvents import find_solvent

__all__ = ["carbon_peaks", "parse_carbon_text", "parse_peak_text"]

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
_TEMPERATURE = re.compile(rf"{NUMBER}\s*(?:[°º]\s*C|K)|r\.?\s*t\.?|room temperature", re.IGNORECASE)
_HEADER_NOISE = re.compile(r"ppm|δ|delta|tms|j\s+in\s+hz|internal standard|.*\bref(?:erence)?\b.*|"
                           r".*\bdecoupled\b.*|dept(?:[\s-]*\d+)?|apt|jmod|\{?(?:1|¹)H\}?", re.IGNORECASE)
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
    head = _read_header(_tidy_text(text))
    field, solvent, nucleus, body = head.field, head.solvent, head.nucleus, head.body
    if nucleus == "13C":
        raise InputError("this list's header names 13C; the peak list must be a 1H list")
    body = _decimal_commas(body)
    if not body.strip():
        raise InputError("the peak list is empty; give peaks like '7.26 (s, 1H), 2.10 (s, 3H)'")
    peaks = tuple(_peak_from_entry(*entry) for entry in _entries(body))
    return Spectrum(peaks, field, solvent, nucleus)


class _Header(NamedTuple):
    field: float | None
    solvent: str | None
    nucleus: str | None
    decoupled: bool      # 13C{1H}: proton-decoupled, so letters s/d/t/q are couplings to other nuclei
    body: str            # the text after the header


def _read_header(body: str) -> _Header:
    """The header's facts (field, solvent, nucleus) and the peak text after it; all None without a header."""
    head = _HEADER.match(body) or _DELTA_HEADER.match(body)
    if not head:
        return _Header(None, None, None, False, body)
    found = head.groupdict()
    facts = ", ".join(f for f in (found.get("facts"), found.get("facts2")) if f)
    field, solvent = _header_facts(facts)
    decoupled = bool(re.search(r"\{|decoupled", head.group(0) + facts, re.IGNORECASE))
    return _Header(field, solvent, _nucleus(found.get("nucleus"), found.get("delta_of")), decoupled,
                   body[head.end():])


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


def _decimal_commas(body: str, pattern: re.Pattern = _DECIMAL_COMMA) -> str:
    """Read 2,14 as 2.14 when the list writes every decimal that way; refuse a mixture."""
    commas = pattern.findall(body)
    if not commas:
        return body
    first = ",".join(commas[0])
    if re.search(r"\d\.\d", body):
        raise InputError(f"{first!r} looks like a decimal comma beside decimal points; write "
                         f"{'.'.join(commas[0])} (or '{commas[0][0]}, {commas[0][1]}' for two peaks)")
    return pattern.sub(r"\1.\2", body)


_ENTRY = re.compile(
    rf"\s*(?:δ\s*)?(?P<a>{NUMBER})(?:{DASH}(?P<b>{NUMBER}))?\s*(?:ppm\b)?\s*"
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
    return make_peak(number(a), number(b) if b else None, read.integral, read.multiplicity, read.j,
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
_J_VALUES = re.compile(rf"^(?:{NUMBER}\s*(?:,|and|&|/)?\s*)+(?:Hz)?$", re.IGNORECASE)
_H_COUNT = re.compile(rf"^(?P<n>{NUMBER})\s*H$")
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
            js.extend(number(x) for x in re.findall(NUMBER, part))
            continue
        in_j = False
        count = _H_COUNT.match(part)
        if count:
            integral = number(count.group("n"))
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




# ------------------------------------------------------------------ 13C ----

# A decimal comma in a 13C list may be followed by ", " (170,9, 60,4): peaks are not written with H counts
_CARBON_DECIMAL_COMMA = re.compile(r"(?<![\w.,\-−])(\d+),(\d+)(?=$|[\s;()]|,\s)")
# J to another nucleus: J = 245 Hz, 1JCF = 245.1, JC-F 245, J(C,F) = 245, ²JCP = 12
_CARBON_J_LEAD = re.compile(r"^(?:\d|[¹²³⁴])?J\s*(?:_?\s*\(?[A-Z][a-z]?\s*[,\-–]?\s*[A-Z][a-z]?\)?)?\s*[=:]?\s*"
                            r"(?=[\d.])")
# the carbon type as DEPT or APT lists write it, spaces, dots, dashes and underscores removed, lower case
_CARBON_TYPE_WORDS = {
    "c": 0, "cq": 0, "qc": 0, "cquat": 0, "quat": 0, "quaternary": 0, "quaternaryc": 0, "cquaternary": 0,
    "ch": 1, "ch2": 2, "ch3": 3,
}
# the letters of an off-resonance decoupled list: the carbon's H split its line into n + 1
_OFF_RESONANCE = {"s": 0, "d": 1, "t": 2, "q": 3}
# a carbon count with or without a type: 2C, 2 C, 2 × CH, 2xCH3, CH × 2
_CARBON_COUNT = re.compile(r"^(?:(?P<n>\d+)\s*[×x*]?\s*(?P<t>[^\d\s×*].*)|(?P<t2>.*?\S)\s*[×x*]\s*(?P<n2>\d+))$")


def parse_carbon_text(text: str) -> CarbonSpectrum:
    """Read a 13C peak list written as in a paper.

    Parameters
    ----------
    text : str
        For example ``"13C NMR (101 MHz, CDCl3) δ 170.9, 60.4, 21.0, 14.2"``, ``"δC (CDCl3) 170.9 (C),
        60.4 (CH2)"`` or ``"128.5 (2C, CH), 77.2 (t, CDCl3)"``.  The header is optional
        (``13C NMR``, ``13C{1H} NMR``, ``δC``).  Inside the parentheses, in any order: the carbon
        type (``C``, ``Cq``, ``quaternary``, ``CH``, ``CH2``, ``CH3``), a carbon count (``2C``,
        ``2 × CH``), a splitting with its J (``d, J = 245 Hz``: coupling to F, P or D), and an
        assignment label (``C=O``, ``OCH3``, ``C-2``).  The letters s, d, t, q written without J
        are read as in an off-resonance list (C, CH, CH2, CH3), except in a proton-decoupled list
        (``13C{1H}``), where they stay splittings, and in a list that writes types elsewhere, where
        a lone ``q`` is a quaternary carbon and other letters are splittings.  Decimal commas
        (``170,9; 60,4``) are read as decimal points when every number uses them.

    Returns
    -------
    CarbonSpectrum

    Raises
    ------
    InputError
        A 1H header or H counts (``2H``), text that cannot be read as peaks, shifts outside
        -30 to 240 ppm, ranges, two carbon types for one line, or an empty list.

    Examples
    --------
    >>> spec = parse_carbon_text("δC (CDCl3) 170.9 (C=O), 128.5 (2C, CH), 21.0 (q)")
    >>> [(p.shift, p.dept, p.carbons, p.label) for p in spec.peaks], spec.solvent
    ([(170.9, None, None, 'C=O'), (128.5, 'CH', 2, ''), (21.0, 'C', None, '')], 'CDCl3')
    """
    head = _read_header(_tidy_text(text))
    if head.nucleus == "1H":
        raise InputError("this list's header names 1H; the peak list must be a 13C list")
    body = _decimal_commas(head.body, _CARBON_DECIMAL_COMMA)
    if not body.strip():
        raise InputError("the 13C peak list is empty; give peaks like '170.9 (C), 60.4 (CH2), 14.2 (CH3)'")
    rows = []
    for a, b, inside in _entries(body):
        if b:
            raise InputError(f"13C peak {a}-{b}: a 13C line has one shift, not a range; write '{a}, {b}'")
        rows.append((a, inside))
    return CarbonSpectrum(carbon_peaks(rows, head.decoupled), head.field, head.solvent)


def carbon_peaks(rows, decoupled: bool = False) -> tuple[CarbonPeak, ...]:
    """13C peaks from (shift text, text of the parentheses) pairs, read as :func:`parse_carbon_text`
    reads one list (the style of the letters s, d, t, q is decided over all rows); ``decoupled``:
    the list is proton-decoupled.  The file readers use this for their rows.

    >>> [(p.shift, p.dept) for p in carbon_peaks([("60.4", "t"), ("14.2", "q")])]
    [(60.4, 'CH2'), (14.2, 'CH3')]
    """
    read = []
    for shift, inside in rows:
        text = str(shift).strip().replace("−", "-")
        if not re.fullmatch(NUMBER, text):
            raise InputError(f"13C shift {text!r} is not a number")
        read.append((number(text), _carbon_inside(text, inside)))
    typed = any(r.n_h is not None for _, r in read)
    return tuple(_carbon_peak(shift, r, typed, decoupled) for shift, r in read)


class _CarbonInside(NamedTuple):
    n_h: int | None
    letters: str | None
    j: tuple[float, ...]
    carbons: int | None
    label: str


def _carbon_peak(shift: float, read: _CarbonInside, typed: bool, decoupled: bool) -> CarbonPeak:
    """The peak, with a splitting written without J read as the list's style says (see parse_carbon_text)."""
    n_h, letters = read.n_h, read.letters
    if letters and not read.j and n_h is None:
        mult = normalise_multiplicity(letters)
        if typed and mult == "q":
            n_h, letters = 0, None
        elif not typed and not decoupled and mult in _OFF_RESONANCE:
            n_h = _OFF_RESONANCE[mult]
    return make_carbon_peak(shift, n_h, read.label, read.carbons, letters, read.j)


def _carbon_type(text: str) -> int | None:
    """H on the carbon a type word names (``CH2`` 2, ``Cq`` 0), or None when the text is not one."""
    key = re.sub(r"[\s._()]", "", text.translate(str.maketrans("₀₁₂₃", "0123"))).lower()
    return _CARBON_TYPE_WORDS.get(key)


def _carbon_inside(shift: str, inside: str) -> _CarbonInside:
    """Read the parentheses of one 13C peak: type, carbon count, splitting with J, label, in any order."""
    types, letters, js, carbons, labels = [], None, [], None, []
    in_j = False
    for part in _top_level_parts(inside):
        if not part:
            continue
        lead = _CARBON_J_LEAD.match(part)
        if lead:
            part, in_j = part[lead.end():], True
        if in_j and _J_VALUES.match(part):
            js.extend(number(x) for x in re.findall(NUMBER, part))
            continue
        in_j = False
        count = _CARBON_COUNT.match(part)
        kind = _carbon_type(part)
        if _H_COUNT.match(part):
            raise InputError(f"13C peak at {shift}: {part!r} is an H count; this looks like a 1H list")
        if kind is not None:
            types.append(kind)
        elif count and _carbon_type(count.group("t") or count.group("t2")) is not None:
            carbons = int(count.group("n") or count.group("n2"))
            word = (count.group("t") or count.group("t2")).strip()
            if word.upper() != "C":   # 2C is a count only; 2 × CH a count and a type
                types.append(_carbon_type(word))
        elif part.lower() == "hz":
            continue
        elif letters is None and _is_multiplicity(part):
            letters = part
        elif _MULTIPLICITY_LIKE.match(part) and part == part.lower():
            normalise_multiplicity(part)  # raises with the spellings understood
        else:
            labels.append(part)
    if len(set(types)) > 1:
        names = ", ".join(("C", "CH", "CH2", "CH3")[t] for t in types)
        raise InputError(f"13C peak at {shift} gives two carbon types ({names}); write one peak per type, "
                         f"e.g. '{shift} (CH), {shift} (C)'")
    return _CarbonInside(types[0] if types else None, letters, tuple(js), carbons, ", ".join(labels))
