"""Solvent signals: residual solvent, water and TMS, by value or by the chemist's label.

Values from ``rules/solvents.tsv`` (Gottlieb et al. 1997; Fulmer et al. 2010), labels
from ``rules/peak_labels.tsv``.

>>> find_solvent("chloroform-d").id
'CDCl3'
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from functools import cache

from ..errors import InputError
from ..tables import read_table
from .peaks import CarbonPeak, CarbonSpectrum, Dropped, Peak, observation_rule

__all__ = [
    "DEFAULT_SOLVENT", "Solvent", "drop_carbon_solvent_signals", "drop_labelled_peaks", "drop_solvent_signals",
    "find_solvent", "solvent_names",
]

DEFAULT_SOLVENT = "CDCl3"
"""The solvent assumed when neither the user nor the peak list names one."""


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
    carbon: tuple[float, ...] = ()
    """The solvent's own 13C signals, ppm (none for D2O)."""
    carbon_multiplicity: tuple[str, ...] = ()
    """The pattern of each 13C signal (coupling to D): t, quint, sept, or s."""
    carbon_j_cd: tuple[float, ...] = ()
    """The one-bond 13C-2H coupling of each 13C signal, Hz (0 for a carbon without D)."""
    tolerance_carbon: float = 0.25
    """ppm: how far an observed 13C line may sit from a solvent value and still be taken as it."""


def _floats(text: str) -> tuple[float, ...]:
    return tuple(float(x) for x in text.split(",") if x.strip())


@cache
def _solvents() -> dict[str, Solvent]:
    table = {}
    for r in read_table("solvents"):
        s = Solvent(r["id"], float(r["residual"]), r["residual_multiplicity"], float(r["water"]),
                    r["exchange"] == "yes", float(r["tolerance_residual"]),
                    float(r["tolerance_water"]), float(r["tms"]), _floats(r["carbon"]),
                    tuple(x.strip() for x in r["carbon_multiplicity"].split(",") if x.strip()),
                    _floats(r["carbon_j_cd"]), float(r["tolerance_carbon"]))
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
    if p.high - p.low >= observation_rule("single_peak_width"):
        return None
    unreported = p.multiplicity is None and p.integral is None
    singlet = p.multiplicity in ("s", "br s", "br") or unreported
    if (singlet or p.multiplicity == "m") and abs(p.shift - solvent.tms) <= observation_rule("tms_tolerance"):
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


_LINES = {"s": 1, "t": 3, "quint": 5, "sept": 7}


def drop_carbon_solvent_signals(spectrum: CarbonSpectrum, solvent: Solvent | str | None = None
                                ) -> tuple[CarbonSpectrum, tuple[Dropped, ...]]:
    """Remove the 13C lines of the solvent and of TMS, and lines labelled as solvent or reference.

    ``solvent`` is a :class:`Solvent` or its name; None takes the spectrum's own, else
    :data:`DEFAULT_SOLVENT`.  First the lines whose label is a solvent, water or reference name
    (``rules/peak_labels.tsv``, as :func:`drop_labelled_peaks`) go; then, by value, a line within the
    solvent's ``tolerance_carbon`` of one of its 13C signals (or of TMS at 0.00) that says nothing
    of its own: no carbon type, no carbon count and no label, or a written splitting equal to the
    solvent's (``77.2 (t)`` in CDCl3).  A line typed C, CH, CH2 or CH3, counted (``2C``) or
    labelled is the compound's own: the solvent carbons carry no H and papers rarely list them
    (common practice).  When the centre line of a solvent multiplet goes, its outer lines (spaced
    by J(C,D) / the 13C frequency, the spectrum's field) go too when written the same bare way.

    >>> spec, dropped = drop_carbon_solvent_signals(
    ...     CarbonSpectrum((CarbonPeak(170.9, 0), CarbonPeak(77.16), CarbonPeak(60.4, 2)), 101.0, "CDCl3"))
    >>> [p.shift for p in spec.peaks], [d.reason for d in dropped]
    ([170.9, 60.4], ['residual CDCl3'])
    """
    chosen = solvent if isinstance(solvent, Solvent) else find_solvent(solvent or spectrum.solvent
                                                                       or DEFAULT_SOLVENT)
    kept, labelled = drop_labelled_peaks(spectrum.peaks)
    reasons = [_carbon_reason(p, chosen) for p in kept]
    dropped_at = [p.shift for p, reason in zip(kept, reasons) if reason and reason.startswith("residual")]
    outer = _outer_lines(chosen, dropped_at, spectrum.field_mhz)
    out, by_value = [], []
    for p, reason in zip(kept, reasons):
        if reason is None and _bare(p) and any(abs(p.shift - x) <= 0.05 for x in outer):
            reason = f"residual {chosen.id} (outer line)"
        if reason:
            by_value.append(Dropped(p, reason))
        else:
            out.append(p)
    dropped = sorted(labelled + tuple(by_value), key=lambda d: spectrum.peaks.index(d.peak))
    return CarbonSpectrum(tuple(out), spectrum.field_mhz, spectrum.solvent), tuple(dropped)


def _bare(p: CarbonPeak) -> bool:
    """The line says nothing of its own: no type, count, label or splitting."""
    return p.n_h is None and p.carbons is None and not p.label and p.multiplicity is None


def _carbon_reason(p: CarbonPeak, solvent: Solvent) -> str | None:
    # TMS is a singlet, or a quartet in an off-resonance list
    plain_singlet = p.multiplicity in ("s", "q") and not p.j and p.carbons is None and not p.label
    if (_bare(p) or plain_singlet) and abs(p.shift - solvent.tms) <= solvent.tolerance_carbon:
        return "TMS reference"
    for value, pattern in zip(solvent.carbon, solvent.carbon_multiplicity):
        if abs(p.shift - value) > solvent.tolerance_carbon:
            continue
        own_pattern = p.multiplicity == pattern and not p.j and p.carbons is None and not p.label
        if _bare(p) or own_pattern:
            return f"residual {solvent.id}"
    return None


def _outer_lines(solvent: Solvent, centres: list[float], field_mhz: float | None) -> list[float]:
    """Where the outer lines of the solvent multiplets whose centre line was dropped lie (ppm), measured
    from the dropped centre line (the list's own referencing)."""
    if not field_mhz:
        return []
    lines = []
    for value, pattern, j in zip(solvent.carbon, solvent.carbon_multiplicity, solvent.carbon_j_cd):
        for centre in (c for c in centres if abs(c - value) <= solvent.tolerance_carbon):
            half = (_LINES.get(pattern, 1) - 1) // 2
            lines.extend(centre + k * j / field_mhz for k in range(-half, half + 1) if k)
    return lines


@cache
def _not_compound_labels() -> dict[str, str]:
    return {r["label"].lower(): r["kind"] for r in read_table("peak_labels")}


_LABEL_NOISE = re.compile(r"\b(?:residual|peak|signal|impurity|trace|in|of)\b", re.IGNORECASE)


def drop_labelled_peaks(peaks: tuple[Peak, ...]) -> tuple[tuple[Peak, ...], tuple[Dropped, ...]]:
    """Remove the peaks the chemist labelled as solvent, water or reference (``rules/peak_labels.tsv``).

    >>> from rank.spectra.text import parse_peak_text
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


