"""Match predicted signals to observed peaks and compute the misfit.

Every hydrogen of the formula is one row; every observed hydrogen (a peak of
normalised count n gives n columns) and every hydrogen allowed to be unobserved
is one column.  The Hungarian algorithm (H. W. Kuhn, Naval Res. Logist. Q.
1955, 2, 83, doi:10.1002/nav.3800020109; scipy's ``linear_sum_assignment``)
finds the cheapest one-to-one assignment.  So one observed peak can hold several
predicted classes (an overlapping aromatic multiplet), an exchangeable class may
go unobserved, and integrals are respected by construction.

The misfit of a candidate is

    misfit = S + I + M + J + C

    S = (1/H) Σ_protons min(((δ_obs - δ_pred) / σ)^2, z_cap)   shift residuals
    I = w_I · Σ_classes (protons not placed in the class's main peak)   integrals
    M = w_M · (Σ_classes multiplicity penalty (0, 0.3, 0.5 or 1; the lowest over the
                 predicted pattern with and without its couplings under hidden_j,
                 against the observed one with and without its couplings under
                 small_observed_j; nothing when the multiplicity was not reported)
               + 0.5 per sharp singlet holding two classes coupled to each other
               + 0.5 per multiplet holding nothing but one uncoupled class)
    J = w_J · Σ_classes coupling-constant penalty (0..1)           J values
               (an observed J under small_observed_j with no predicted partner is left out)
    C = w_C · (observed peaks left empty + predicted groups beyond one per peak)

δ_obs is the nearest point of the observed peak or range; σ is the
prediction's uncertainty.  Predicted signals placed in one peak form one group
when they lie within ``group_gap`` ppm (plus the peak's width) of each other,
as overlapping lines merge in a real spectrum; more groups in one peak mean the
candidate predicts more resolved signals than were seen.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cache
from itertools import pairwise
from typing import NamedTuple

import numpy as np
from scipy.optimize import linear_sum_assignment

from .spectra import Peak, coupling_groups


@dataclass(frozen=True)
class Settings:
    """Weights of the misfit (see the module docstring)."""

    z_cap: float = 9.0
    w_integral: float = 1.0
    w_multiplicity: float = 1.0
    w_coupling: float = 0.5
    w_count: float = 0.5
    group_gap: float = 0.12
    absent_exchangeable: float = 0.5
    absent_other: float = 25.0
    observed_exchanged: float = 4.0
    j_tolerance: float = 1.5
    coupled_singlet: float = 0.5
    lone_singlet_multiplet: float = 0.5
    hidden_j: float = 2.5
    """Predicted couplings below this many Hz may go unreported: a meta coupling makes a
    predicted dd that papers write as d (common practice); the pattern without them costs nothing."""
    small_observed_j: float = 3.0
    """Observed couplings below this many Hz (allylic, benzylic, meta, W: four- and five-bond
    couplings, common practice) may be missing from a first-order prediction: the observed pattern
    without them costs nothing, and such a J without a predicted partner adds no J penalty."""


DEFAULT_SETTINGS = Settings()


class Pairing(NamedTuple):
    """One predicted signal and the observed peak holding most of its protons."""

    signal: int
    peak: int | None          # None: not observed
    protons: int               # protons of the signal placed in that peak
    observed: float | None
    predicted: float
    z: float
    multiplicity_penalty: float
    coupling_penalty: float


class MisfitParts(NamedTuple):
    shift: float
    integral: float
    multiplicity: float
    coupling: float
    count: float

    @property
    def total(self) -> float:
        return self.shift + self.integral + self.multiplicity + self.coupling + self.count


class Match(NamedTuple):
    """The assignment of one candidate and its misfit."""

    misfit: float
    parts: MisfitParts
    pairings: tuple[Pairing, ...]


def _distance(signal_shift: float, peak: Peak) -> float:
    if peak.low <= signal_shift <= peak.high:
        return 0.0
    return min(abs(signal_shift - peak.low), abs(signal_shift - peak.high))


@cache
def multiplicity_penalty(observed: str | None, predicted: str, exchangeable: bool) -> float:
    """0 when the observed pattern fits the predicted first-order pattern, up to 1.

    An ``m`` on either side, or an observed multiplicity not reported (None),
    says nothing and costs nothing; a singlet against a
    class coupled to two or more H costs 1; one coupling partner too many or
    too few costs 0.5; the right number of partners in another grouping
    (``q`` against ``dt``) costs 0.3.
    """
    if exchangeable:
        return 0.0 if observed in (None, "s", "br s", "br", "m") else 0.5
    obs, pred = coupling_groups(observed), coupling_groups(predicted)
    if obs is None or pred is None:
        return 0.0
    n_obs, n_pred = sum(obs), sum(pred)
    if n_obs == n_pred:
        return 0.0 if sorted(obs) == sorted(pred) or len(obs) <= 1 and len(pred) <= 1 else 0.3
    if n_obs == 0 and n_pred >= 2:
        return 1.0
    return 0.5 if abs(n_obs - n_pred) == 1 else 1.0


_NAMES = {1: "d", 2: "t", 3: "q", 4: "quint", 5: "sext", 6: "sept"}


@cache
def without_small_couplings(multiplicity: str | None, j: tuple[float, ...], below: float) -> str | None:
    """The first-order pattern left when couplings under ``below`` Hz are not resolved.

    ``j`` holds one J per partner group, in the order of the pattern's letters (predicted
    patterns put the largest first; papers write J in the letters' order, ``dq, J = 15.6, 1.7 Hz``).
    Without one J per letter the pattern is returned as it is:
    ``without_small_couplings("dd", (7.8, 1.8), 2.5)`` gives ``"d"``.
    """
    groups = coupling_groups(multiplicity)
    if not groups or len(groups) != len(j):
        return multiplicity
    kept = [n for n, value in zip(groups, j) if value >= below]
    if not kept:
        return "s"
    if len(kept) == 1:
        return _NAMES.get(kept[0], "m")
    return "".join(_NAMES[n] for n in kept) if all(n <= 3 for n in kept) else "m"


def coupling_penalty(observed: tuple[float, ...], predicted: tuple[float, ...], tolerance: float,
                     small: float = 0.0) -> float:
    """Mean over observed J of how far the nearest predicted J lies beyond ``tolerance`` Hz, in 3 Hz steps.

    An observed J below ``small`` Hz with no predicted J within ``tolerance`` is a long-range
    coupling the prediction lacks: it is left out of the mean.

    >>> coupling_penalty((15.6, 1.7), (15.6,), 1.5, small=3.0)
    0.0
    """
    if not observed or not predicted:
        return 0.0
    gaps = [min(abs(j - p) for p in predicted) for j in observed]
    counted = [g for j, g in zip(observed, gaps) if not (j < small and g > tolerance)]
    if not counted:
        return 0.0
    return sum(min(1.0, max(0.0, g - tolerance) / 3.0) for g in counted) / len(counted)


def _mutually_coupled(signals, held: list[int]) -> bool:
    """True when two of the signals placed in one peak couple to each other with J >= 3 Hz:
    non-equivalent coupled H do not give a sharp singlet (common practice)."""
    inside = set(held)
    return any(c.signal in inside and c.signal != i and c.j >= 3.0
               for i in held for c in getattr(signals[i], "partners", ()))


def _groups(shifts: list[float], gap: float) -> int:
    if not shifts:
        return 0
    ordered = sorted(shifts)
    return 1 + sum(1 for a, b in pairwise(ordered) if b - a > gap)


def match(signals, peaks: tuple[Peak, ...], counts: tuple[int, ...], missing: int,
          exchange_absent: bool, settings: Settings = DEFAULT_SETTINGS) -> Match:
    """Assign predicted signals to observed peaks.

    Parameters
    ----------
    signals : sequence of predicted signals (``rank.predict.Signal``): shift,
        n_h, sigma, multiplicity, j, exchangeable.
    peaks : the observed peaks (solvent signals already dropped).
    counts : whole-number H per peak (a ``Normalisation``); all 0 when the
        list had no integrals, and then every peak may hold any number of H.
    missing : hydrogens of the formula not observed.
    exchange_absent : True in D2O or CD3OD, where OH/NH/COOH exchange away.

    Returns
    -------
    Match
    """
    rows = [i for i, s in enumerate(signals) for _ in range(s.n_h)]
    n_h = len(rows)
    no_integrals = not any(counts)
    if no_integrals:
        capacity = [n_h] * len(peaks)
        absent = n_h
    else:
        capacity = list(counts)
        absent = missing
    cols = [p for p, c in enumerate(capacity) for _ in range(c)] + [None] * absent

    n_sig, n_peaks = len(signals), len(peaks)
    shifts = np.array([sg.shift for sg in signals])
    sigmas = np.array([sg.sigma for sg in signals])
    lows = np.array([pk.low for pk in peaks])
    highs = np.array([pk.high for pk in peaks])
    distance = np.maximum(np.maximum(lows[None, :] - shifts[:, None], shifts[:, None] - highs[None, :]), 0.0)
    z2 = np.minimum((distance / sigmas[:, None]) ** 2, settings.z_cap)
    coarse = [without_small_couplings(sg.multiplicity, sg.j, settings.hidden_j) for sg in signals]
    seen = [{pk.multiplicity, without_small_couplings(pk.multiplicity, pk.j, settings.small_observed_j)}
            for pk in peaks]
    pen_mult = np.array([[min(multiplicity_penalty(o, p, sg.exchangeable) for o in forms
                              for p in (sg.multiplicity, rough))
                          for forms in seen] for sg, rough in zip(signals, coarse)]).reshape(n_sig, n_peaks)
    pen_j = np.array([[coupling_penalty(pk.j, sg.j, settings.j_tolerance, settings.small_observed_j)
                       if pk.j and sg.j else 0.0
                       for pk in peaks] for sg in signals]).reshape(n_sig, n_peaks)
    exchangeable = np.array([sg.exchangeable for sg in signals])
    n_per = np.array([sg.n_h for sg in signals], dtype=float)

    # signal-by-peak cost of one proton, then one row per proton and one column per slot
    per_peak = (z2 / max(n_h - missing, 1)
                + (settings.w_multiplicity * pen_mult + settings.w_coupling * pen_j) / n_per[:, None])
    if exchange_absent:
        per_peak = per_peak + settings.observed_exchanged * exchangeable[:, None]
    absent_cost = np.where(exchangeable, 0.0 if exchange_absent else settings.absent_exchangeable,
                           settings.absent_other)
    by_signal = np.hstack([np.repeat(per_peak, capacity, axis=1),
                           np.repeat(absent_cost[:, None], absent, axis=1)])
    cost = by_signal[rows]
    row_ind, col_ind = linear_sum_assignment(cost)

    placed: dict[int, dict[int | None, int]] = {}
    for r, c in zip(row_ind, col_ind):
        placed.setdefault(rows[r], {}).setdefault(cols[c], 0)
        placed[rows[r]][cols[c]] += 1

    pairings, shift_sum, integral, mult, coup = [], 0.0, 0.0, 0.0, 0.0
    by_peak: dict[int, list[float]] = {}
    members: dict[int, list[int]] = {}
    for i, s in enumerate(signals):
        where = placed.get(i, {None: s.n_h})
        main, protons = max(where.items(), key=lambda kv: (kv[1], kv[0] is not None))
        split = s.n_h - protons
        if split and getattr(s, "diastereotopic", False) and len(where) == 2 and None not in where:
            split = 0
        integral += split
        for p, k in where.items():
            if p is None:
                shift_sum += k * (0.0 if s.exchangeable else settings.z_cap)
            else:
                shift_sum += k * z2[i, p]
        if main is None:
            pairings.append(Pairing(i, None, protons, None, s.shift, 0.0, 0.0, 0.0))
            continue
        by_peak.setdefault(main, []).append(s.shift)
        members.setdefault(main, []).append(i)
        peak = peaks[main]
        z = (peak.shift - s.shift) / s.sigma if _distance(s.shift, peak) else 0.0
        mult += pen_mult[i, main]
        coup += pen_j[i, main]
        pairings.append(Pairing(i, main, protons, peak.shift, s.shift, z,
                                float(pen_mult[i, main]), float(pen_j[i, main])))
    mult += sum(settings.coupled_singlet for p, held in members.items()
                if peaks[p].multiplicity == "s" and _mutually_coupled(signals, held))
    mult += sum(settings.lone_singlet_multiplet for p, held in members.items()
                if peaks[p].multiplicity == "m" and len(held) == 1
                and signals[held[0]].multiplicity == "s" and not signals[held[0]].exchangeable)
    observed_h = max(n_h - missing, 1) if not no_integrals else max(n_h, 1)
    count = len(peaks) - len(by_peak) + sum(
        _groups(shifts, settings.group_gap + peaks[p].high - peaks[p].low) - 1 for p, shifts in by_peak.items()
    )
    parts = MisfitParts(
        shift=shift_sum / observed_h,
        integral=settings.w_integral * integral,
        multiplicity=settings.w_multiplicity * mult,
        coupling=settings.w_coupling * coup,
        count=settings.w_count * count,
    )
    return Match(round(parts.total, 6), parts, tuple(pairings))
