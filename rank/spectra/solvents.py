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
from .peaks import Dropped, Peak, observation_rule

__all__ = [
    "DEFAULT_SOLVENT", "Solvent", "drop_labelled_peaks", "drop_solvent_signals", "find_solvent",
    "solvent_names"
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


