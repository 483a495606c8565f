"""Peak lists as papers print them: ``1H NMR (400 MHz, CDCl3) δ 4.12 (q, J = 7.1 Hz, 2H), …``.

>>> spec = parse_peak_text("1H NMR (400 MHz, CDCl3) δ 4.12 (q, J = 7.1 Hz, 2H), 2.05 (s, 3H)")
>>> spec.field_mhz, spec.solvent, [p.multiplicity for p in spec.peaks]
(400.0, 'CDCl3', ['q', 's'])
"""

from __future__ import annotations

import re
from typing import NamedTuple

from ..errors import InputError
from .peaks import DASH, NUMBER, Peak, Spectrum, make_peak, normalise_multiplicity, number
from .solvents import find_solvent

__all__ = ["parse_peak_text"]

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


