"""Molecular formulas: parsing and the degree of unsaturation.

>>> f = parse_formula("C4H8O2")
>>> f.hill, f.dbe, f.heavy_atoms
('C4H8O2', 1, 6)
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from fractions import Fraction

from .errors import InputError

__all__ = ["ELEMENTS", "HALOGENS", "Formula", "parse_formula"]

ELEMENTS = ("C", "H", "N", "O", "S", "P", "F", "Cl", "Br", "I")
HALOGENS = ("F", "Cl", "Br", "I")
_TOKEN = re.compile(r"([A-Z][a-z]?)(\d*)")


@dataclass(frozen=True)
class Formula:
    """Element counts of a neutral molecule.

    Attributes
    ----------
    counts : tuple of (element, count) in Hill order, hydrogen included.
    """

    counts: tuple[tuple[str, int], ...]

    def __getitem__(self, element: str) -> int:
        return dict(self.counts).get(element, 0)

    @property
    def hill(self) -> str:
        """Hill-order formula text (C, H, then the rest alphabetically)."""
        return "".join(f"{el}{n if n > 1 else ''}" for el, n in self.counts)

    @property
    def heavy_atoms(self) -> int:
        return sum(n for el, n in self.counts if el != "H")

    @property
    def dbe(self) -> int:
        """Degree of unsaturation, DBE = C - (H + X)/2 + (N + P)/2 + 1."""
        return int(_dbe(dict(self.counts)))

    def minus(self, taken: dict[str, int]) -> Formula | None:
        """The formula left after taking ``taken`` (element counts) out; None if it does not hold them."""
        left = dict(self.counts)
        for el, n in taken.items():
            left[el] = left.get(el, 0) - n
        if any(n < 0 for n in left.values()):
            return None
        return Formula(_hill_order({el: n for el, n in left.items() if n > 0}))


def _dbe(c: dict[str, int]) -> Fraction:
    halogens = sum(c.get(x, 0) for x in HALOGENS)
    return (
        c.get("C", 0)
        - Fraction(c.get("H", 0) + halogens, 2)
        + Fraction(c.get("N", 0) + c.get("P", 0), 2)
        + 1
    )


def _hill_order(counts: dict[str, int]) -> tuple[tuple[str, int], ...]:
    if "C" in counts:
        first = [el for el in ("C", "H") if el in counts]
    else:
        first = []
    rest = sorted(el for el in counts if el not in first)
    return tuple((el, counts[el]) for el in first + rest)


def parse_formula(text: str) -> Formula:
    """Parse a molecular formula written in any element order.

    Parameters
    ----------
    text : str
        For example ``"C6H5Br"``, ``"CH3NO2"`` or ``"ClC2H5"``; an element may
        appear more than once (``"CH3CH2OH"``) and the counts are added.

    Returns
    -------
    Formula

    Raises
    ------
    InputError
        Unknown element, malformed text, no heavy atom, or a degree of
        unsaturation that is negative or not a whole number.
    """
    raw = text.strip() if isinstance(text, str) else ""
    if not raw:
        raise InputError("empty formula: give element symbols with counts, e.g. C4H8O2")
    pos, counts = 0, {}
    for m in _TOKEN.finditer(raw):
        if m.start() != pos:
            break
        el, num = m.group(1), m.group(2)
        if el not in ELEMENTS:
            raise InputError(
                f"formula {raw!r}: unknown element {el!r}; known are {', '.join(ELEMENTS)}"
            )
        n = int(num) if num else 1
        if n == 0:
            raise InputError(f"formula {raw!r}: count 0 for {el}; leave the element out")
        counts[el] = counts.get(el, 0) + n
        pos = m.end()
    if pos != len(raw):
        raise InputError(
            f"formula {raw!r}: cannot read {raw[pos:]!r}; write it like C4H8O2 (symbols, counts)"
        )
    if not any(el != "H" for el in counts):
        raise InputError(f"formula {raw!r} has no heavy atom")
    dbe = _dbe(counts)
    if dbe.denominator != 1:
        raise InputError(
            f"formula {raw!r}: degree of unsaturation {float(dbe):g} is not whole; "
            "check the hydrogen count (a neutral closed-shell molecule is needed)"
        )
    if dbe < 0:
        raise InputError(f"formula {raw!r}: degree of unsaturation {dbe} is negative; too many H")
    return Formula(_hill_order(counts))
