"""Observed peaks: the values every reader produces and every later stage uses.

A :class:`Peak` is one observed signal (shift or range, integral, multiplicity,
J, the chemist's label); a :class:`Spectrum` is a list of them with what the
header or file says about the experiment.

>>> p = make_peak(4.12, None, 2.0, "q", (7.1,), "OCH2", True)
>>> p.caption, format_peaks([p])
('4.12 (q)', '4.12 (q, J = 7.1 Hz, 2H, OCH2)')
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from functools import cache
from typing import TYPE_CHECKING

from ..errors import InputError
from ..tables import read_table

if TYPE_CHECKING:
    from .trace import Trace

__all__ = [
    "CARBON_SHIFT_RANGE",
    "CARBON_TYPES",
    "DASH",
    "DEFAULT_FIELD_MHZ",
    "MULTIPLET_NAMES",
    "NUMBER",
    "SHIFT_RANGE",
    "CarbonPeak",
    "CarbonSpectrum",
    "Dropped",
    "Peak",
    "PeakSource",
    "Spectrum",
    "coupling_groups",
    "format_carbon_peaks",
    "format_peaks",
    "make_carbon_peak",
    "make_peak",
    "normalise_multiplicity",
    "number",
    "observation_rule",
]

SHIFT_RANGE = (-1.0, 16.0)
CARBON_SHIFT_RANGE = (-30.0, 240.0)
"""13C shifts accepted (ppm): ketones reach about 220, iodomethane lies near -24 (the open data's
CH3I row), Si(CH3) carbons near -5; a value outside is a typing slip or a 1H list (common practice)."""
CARBON_TYPES = {0: "C", 1: "CH", 2: "CH2", 3: "CH3"}
"""The carbon type (DEPT name) of a carbon with n H."""
_SIMPLE = {"s": 0, "d": 1, "t": 2, "q": 3, "quint": 4, "sext": 5, "sept": 6}
MULTIPLET_NAMES = {n: name for name, n in _SIMPLE.items() if n}
"""The first-order multiplet of n equivalent partners (n+1 rule): 1 d, 2 t, 3 q, 4 quint, 5 sext, 6 sept."""
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
DEFAULT_FIELD_MHZ = 400.0
"""The spectrometer frequency assumed when neither the user nor the peak list gives one (MHz)."""


@cache
def observation_rule(name: str) -> float:
    """A rule of thumb for reading peak lists, from ``rules/observe.tsv`` (KeyError if absent).

    >>> observation_rule("tms_tolerance")
    0.02
    """
    return {r["id"]: float(r["value"]) for r in read_table("observe")}[name]


# a number as written in a peak list, and the dash of a range
NUMBER = r"[-−]?\d+(?:\.\d+)?"
DASH = r"\s*[-–—]\s*"


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
class CarbonPeak:
    """One observed 13C line.

    Attributes
    ----------
    shift : ppm.
    n_h : H on the carbon when the list says (DEPT or APT type ``C``/``Cq``, ``CH``, ``CH2``, ``CH3``,
        or the letters s, d, t, q of an off-resonance list): 0, 1, 2 or 3; None when not given.
    label : the chemist's assignment written with the peak (``C=O``, ``OCH3``, ``C-2``), or "".
    carbons : carbons in this one line when written (``2C``, ``2 × CH``); None when not given.
    multiplicity : a splitting written that is not an H count: coupling to 19F, 31P or D in a
        proton-decoupled list (``d, J = 245 Hz``), normalised as for 1H; None when not written.
    j : its coupling constants in Hz, as given.
    """

    shift: float
    n_h: int | None = None
    label: str = ""
    carbons: int | None = None
    multiplicity: str | None = None
    j: tuple[float, ...] = ()

    @property
    def dept(self) -> str | None:
        """The carbon type ``C``, ``CH``, ``CH2`` or ``CH3``; None when the list does not say."""
        return None if self.n_h is None else CARBON_TYPES[self.n_h]

    @property
    def caption(self) -> str:
        """Short text for the peak: its shift and type, e.g. ``60.4 (CH2)``."""
        return f"{self.shift:.1f} ({self.dept})" if self.dept else f"{self.shift:.1f}"


@dataclass(frozen=True)
class CarbonSpectrum:
    """A 13C peak list with the field (13C frequency, MHz) and solvent its header or file gives."""

    peaks: tuple[CarbonPeak, ...]
    field_mhz: float | None = None
    solvent: str | None = None


@dataclass(frozen=True)
class Dropped:
    """A peak (1H :class:`Peak` or 13C :class:`CarbonPeak`) taken out as solvent, water or reference,
    with the reason."""

    peak: Peak | CarbonPeak
    reason: str



@dataclass(frozen=True, eq=False)
class PeakSource:
    """A peak list with what reading it involved.

    Attributes
    ----------
    spectrum : the peaks read or picked (a :class:`Spectrum`, or a :class:`CarbonSpectrum` for 13C).
    dropped : peaks picked from a trace and left out, with the reason (solvent, water, TMS, 13C
        satellites, spinning sidebands); empty for a typed list, whose solvent peaks are dropped later.
    notes : how the list was obtained from a trace (referencing, picking), one sentence each.
    trace : the spectrum picked from, re-referenced; None for a typed list.
    """

    spectrum: Spectrum | CarbonSpectrum
    dropped: tuple[Dropped, ...] = ()
    notes: tuple[str, ...] = ()
    trace: Trace | None = None


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

    >>> from rank.spectra.text import parse_peak_text
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


def number(text: str) -> float:
    return float(text.replace("−", "-"))


def make_peak(a: float, b: float | None, integral: float | None, mult: str | None, j: tuple[float, ...],
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


def make_carbon_peak(shift: float, n_h: int | None = None, label: str = "", carbons: int | None = None,
                     multiplicity: str | None = None, j: tuple[float, ...] = ()) -> CarbonPeak:
    """A checked :class:`CarbonPeak`: InputError for a shift outside :data:`CARBON_SHIFT_RANGE`, a
    carbon count below 1, or a J outside 0 to 500 Hz."""
    low, high = CARBON_SHIFT_RANGE
    if not low <= shift <= high:
        raise InputError(f"13C shift {shift:g} ppm is outside {low:g} to {high:g} ppm")
    if carbons is not None and carbons < 1:
        raise InputError(f"13C peak at {shift:g} ppm: a carbon count of {carbons} must be at least 1")
    if any(x <= 0 or x > 500 for x in j):
        raise InputError(f"13C peak at {shift:g} ppm: J values must lie between 0 and 500 Hz")
    mult = None if multiplicity is None else normalise_multiplicity(multiplicity)
    return CarbonPeak(round(shift, 4), n_h, label, carbons, mult, j)


def format_carbon_peaks(peaks) -> str:
    """The 13C peaks in the paper style :func:`~rank.spectra.text.parse_carbon_text` reads back.

    >>> format_carbon_peaks([CarbonPeak(170.9, 0, "C=O"), CarbonPeak(128.5, 1, "", 2), CarbonPeak(21.0)])
    '170.9 (C, C=O), 128.5 (2C, CH), 21.0'
    """
    return ", ".join(_format_carbon_peak(p) for p in peaks)


def _format_carbon_peak(p: CarbonPeak) -> str:
    where = f"{p.shift:.1f}" if round(p.shift, 1) == p.shift else f"{p.shift:.4f}".rstrip("0")
    inside = []
    if p.multiplicity:
        inside.append(p.multiplicity)
    if p.j:
        inside.append("J = " + ", ".join(f"{j:g}" for j in p.j) + " Hz")
    if p.carbons is not None:
        inside.append(f"{p.carbons}C")
    if p.dept:
        inside.append(p.dept)
    if p.label:
        inside.append(p.label)
    return f"{where} ({', '.join(inside)})" if inside else where
