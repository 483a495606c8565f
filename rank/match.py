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
               + coupled_singlet per sharp singlet holding two classes coupled to each
                 other by coupled_singlet_min_j Hz or more
               + lone_singlet_multiplet per multiplet holding nothing but one uncoupled class)
    J = w_J · Σ_classes coupling-constant penalty (0..1: the gap beyond j_tolerance Hz
               in j_step Hz steps; an observed J under small_observed_j with no predicted
               partner is left out)
    C = w_C · (observed peaks left empty + predicted groups beyond one per peak)

δ_obs is the nearest point of the observed peak or range (0 residual inside a range); σ is the
prediction's uncertainty.  Predicted signals placed in one peak form one group
when they lie within ``group_gap`` ppm (plus the peak's width) of each other,
as overlapping lines merge in a real spectrum; more groups in one peak mean the
candidate predicts more resolved signals than were seen.

>>> from rank.predict import predict_smiles
>>> from rank.spectra import parse_peak_text
>>> peaks = parse_peak_text("4.12 (q, J = 7.1 Hz, 2H), 2.05 (s, 3H), 1.26 (t, J = 7.1 Hz, 3H)").peaks
>>> m = match(predict_smiles("CCOC(C)=O"), peaks, (2, 3, 3), 0, False)
>>> [(p.peak, round(p.z, 2)) for p in m.pairings], float(m.misfit)
([(0, 0.17), (1, 0.0), (2, 0.0)], 0.006944)
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from functools import cache
from itertools import pairwise
from typing import TYPE_CHECKING, NamedTuple, Protocol

import numpy as np
from scipy.optimize import linear_sum_assignment

from .spectra import MULTIPLET_NAMES, CarbonPeak, Peak, coupling_groups

if TYPE_CHECKING:
    from .predict import Signal

__all__ = [
    "BROAD_OBSERVED",
    "DEFAULT_CARBON_SETTINGS",
    "DEFAULT_SETTINGS",
    "CarbonClass",
    "CarbonMatch",
    "CarbonParts",
    "CarbonSettings",
    "Match",
    "MisfitParts",
    "Pairing",
    "Settings",
    "coupling_penalty",
    "match",
    "match_carbons",
    "multiplicity_penalty",
    "without_small_couplings",
]


@dataclass(frozen=True)
class Settings:
    """Weights and tolerances of the misfit (see the module docstring); each field says its unit."""

    z_cap: float = 9.0
    """Largest squared residual one proton adds to S (a 3 σ miss): one far-off shift does not swamp the rest."""
    w_integral: float = 1.0
    """Weight of I, per proton placed outside its class's main peak."""
    w_multiplicity: float = 1.0
    """Weight of M."""
    w_coupling: float = 0.5
    """Weight of J."""
    w_count: float = 0.5
    """Weight of C, per empty peak or extra group in a peak."""
    group_gap: float = 0.12
    """ppm: predicted signals placed in one peak closer than this (plus the peak's width) form one group."""
    absent_exchangeable: float = 0.5
    """Cost of one exchangeable proton left unobserved (OH, NH, SH, COOH are often broad or missing).
    Checked on the fit part of the open data, whose lists leave every exchangeable H out: library-mode
    top-1 was 81.7-81.9 % for any cost from 0 to 4 (2,346 compounds, before the σ refit), because the
    written H counts already say how many H are unobserved and every candidate must leave that many
    out; the cost only orders candidates with different numbers of labile H, so it stays small."""
    absent_other: float = 25.0
    """Cost of one C-H proton left unobserved."""
    observed_exchanged: float = 4.0
    """Cost of one exchangeable proton placed in a peak in a solvent that exchanges it away (D2O, CD3OD)."""
    j_tolerance: float = 1.5
    """Hz: an observed J within this of the nearest predicted J costs nothing."""
    j_step: float = 3.0
    """Hz: beyond ``j_tolerance``, an observed J's coupling penalty grows by 1 per this many Hz, up to 1,
    so a miss of ``j_tolerance + j_step`` Hz or more costs the whole penalty (a scoring choice of this
    program, not a chemical constant)."""
    coupled_singlet: float = 0.5
    """Multiplicity penalty of a sharp singlet holding two classes coupled to each other."""
    coupled_singlet_min_j: float = 3.0
    """Hz: two classes in one singlet count as coupled to each other from this J up; non-equivalent H
    coupled by a few Hz or more do not give a sharp singlet (common practice)."""
    lone_singlet_multiplet: float = 0.5
    """Multiplicity penalty of a multiplet holding nothing but one uncoupled class."""
    hidden_j: float = 2.5
    """Predicted couplings below this many Hz may go unreported: a meta coupling makes a
    predicted dd that papers write as d (common practice); the pattern without them costs nothing."""
    small_observed_j: float = 3.0
    """Observed couplings below this many Hz (allylic, benzylic, meta, W: four- and five-bond
    couplings, common practice) may be missing from a first-order prediction: the observed pattern
    without them costs nothing, and such a J without a predicted partner adds no J penalty."""


DEFAULT_SETTINGS = Settings()


class Pairing(NamedTuple):
    """One predicted signal and the observed peak holding most of its protons.

    Attributes
    ----------
    signal : index of the predicted signal.
    peak : index of the peak; None when the signal was left unobserved.
    protons : protons of the signal placed in that peak.
    observed : the peak's shift (the centre of a range), ppm; None when unobserved.
    predicted : the signal's predicted shift, ppm.
    z : the residual scored for this peak, in units of the signal's σ: signed, observed minus
        predicted, measured from the nearest point of the peak (its edge for a range, 0 inside
        it); S adds min(z², ``z_cap``) per proton placed there.  0 when unobserved.
    multiplicity_penalty : the multiplicity penalty of the signal in that peak (before ``w_multiplicity``).
    coupling_penalty : the coupling-constant penalty (before ``w_coupling``).
    """

    signal: int
    peak: int | None
    protons: int
    observed: float | None
    predicted: float
    z: float
    multiplicity_penalty: float
    coupling_penalty: float


class MisfitParts(NamedTuple):
    """The weighted parts S, I, M, J and C of the misfit (see the module docstring)."""

    shift: float
    integral: float
    multiplicity: float
    coupling: float
    count: float

    @property
    def total(self) -> float:
        """S + I + M + J + C."""
        return self.shift + self.integral + self.multiplicity + self.coupling + self.count


class Match(NamedTuple):
    """The assignment of one candidate and its misfit."""

    misfit: float
    parts: MisfitParts
    pairings: tuple[Pairing, ...]


@cache
def multiplicity_penalty(observed: str | None, predicted: str, exchangeable: bool) -> float:
    """0 when the observed pattern fits the predicted first-order pattern, up to 1.

    An ``m`` on either side, or an observed multiplicity not reported (None),
    says nothing and costs nothing; a singlet against a
    class coupled to two or more H costs 1; one coupling partner too many or
    too few costs 0.5; the right number of partners in another grouping
    (``q`` against ``dt``) costs 0.3.  An observed broad pattern (``br s``, ``br d``) costs at most
    ``BROAD_OBSERVED``: exchange between rotamers (the N-alkyl groups of amides) or a
    quadrupolar neighbour broadens lines until couplings no longer show (common practice).
    """
    if exchangeable:
        return 0.0 if observed in (None, "s", "br s", "br", "m") else 0.5
    obs, pred = coupling_groups(observed), coupling_groups(predicted)
    if obs is None or pred is None:
        return 0.0
    n_obs, n_pred = sum(obs), sum(pred)
    if n_obs == n_pred:
        penalty = 0.0 if sorted(obs) == sorted(pred) or len(obs) <= 1 and len(pred) <= 1 else 0.3
    elif n_obs == 0 and n_pred >= 2:
        penalty = 1.0
    else:
        penalty = 0.5 if abs(n_obs - n_pred) == 1 else 1.0
    return min(penalty, BROAD_OBSERVED) if observed.startswith("br") else penalty


BROAD_OBSERVED = 0.3
"""Largest multiplicity penalty of an observed broad signal against a non-exchangeable class."""


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
        return MULTIPLET_NAMES.get(kept[0], "m")
    return "".join(MULTIPLET_NAMES[n] for n in kept) if all(n <= 3 for n in kept) else "m"


@cache
def _observed(peaks: tuple[Peak, ...], small_j: float) -> tuple[np.ndarray, np.ndarray, tuple[frozenset, ...]]:
    """Per spectrum, computed once: the peaks' lower and upper edges, and each peak's observed
    pattern with and without its couplings under ``small_j`` Hz."""
    forms = tuple(frozenset({pk.multiplicity, without_small_couplings(pk.multiplicity, pk.j, small_j)})
                  for pk in peaks)
    return np.array([pk.low for pk in peaks]), np.array([pk.high for pk in peaks]), forms


@cache
def _pattern_penalty(observed: frozenset, predicted: str, rough: str, exchangeable: bool) -> float:
    """The lowest multiplicity penalty over the observed forms and the predicted pattern with and
    without its small couplings."""
    return min(multiplicity_penalty(o, p, exchangeable) for o in observed for p in (predicted, rough))


def coupling_penalty(observed: tuple[float, ...], predicted: tuple[float, ...], tolerance: float,
                     small: float = 0.0, step: float = DEFAULT_SETTINGS.j_step) -> float:
    """Mean over observed J of how far the nearest predicted J lies beyond ``tolerance`` Hz, in ``step`` Hz steps.

    Each observed J costs min(1, max(0, gap - tolerance) / step).  An observed J below ``small``
    Hz with no predicted J within ``tolerance`` is a long-range coupling the prediction lacks:
    it is left out of the mean.

    >>> coupling_penalty((15.6, 1.7), (15.6,), 1.5, small=3.0)
    0.0
    >>> coupling_penalty((10.5,), (16.5,), 1.5)
    1.0
    """
    if not observed or not predicted:
        return 0.0
    gaps = [min(abs(j - p) for p in predicted) for j in observed]
    counted = [g for j, g in zip(observed, gaps) if not (j < small and g > tolerance)]
    if not counted:
        return 0.0
    return sum(min(1.0, max(0.0, g - tolerance) / step) for g in counted) / len(counted)


def _mutually_coupled(signals: Sequence[Signal], held: list[int], min_j: float) -> bool:
    """True when two of the signals placed in one peak couple to each other with J >= ``min_j`` Hz:
    non-equivalent coupled H do not give a sharp singlet (common practice)."""
    inside = set(held)
    return any(c.signal in inside and c.signal != i and c.j >= min_j
               for i in held for c in signals[i].partners)


def _group_count(shifts: list[float], gap: float) -> int:
    """How many groups shifts fall into when neighbours closer than ``gap`` ppm merge."""
    if not shifts:
        return 0
    ordered = sorted(shifts)
    return 1 + sum(1 for a, b in pairwise(ordered) if b - a > gap)


class _SignalCosts(NamedTuple):
    """One signal's scores against each peak, and its row of the proton-by-slot cost matrix."""

    residual: np.ndarray          # per peak: (nearest point of the peak - shift) / sigma
    z2: np.ndarray                # per peak: min(residual ** 2, z_cap)
    multiplicity: np.ndarray      # per peak: multiplicity penalty
    coupling: np.ndarray          # per peak: coupling penalty
    row: np.ndarray               # cost of one proton in each slot of a peak or of absence


class _Costs(NamedTuple):
    """Signal-by-peak scores, and the proton-by-slot cost matrix the assignment minimises."""

    signals: list[_SignalCosts]   # per signal
    matrix: np.ndarray            # one row per proton, one column per slot of a peak or per absence
    rows: list[int]               # the signal of each row
    columns: list[int | None]     # the peak of each column (None: unobserved)


class _Memo:
    """What was worked out against one observed peak list and settings: each signal's costs and each
    signal list's :class:`Match` (both pure functions of what their keys hold)."""

    def __init__(self, peaks: tuple[Peak, ...], settings: Settings) -> None:
        self.peaks = peaks
        self.settings = settings
        self.signals: dict[tuple, _SignalCosts] = {}
        self.matches: dict[tuple, Match] = {}


_MEMO_LISTS = 4
"""Peak lists whose memo is kept (the oldest is dropped)."""
_MEMO_SIZE = 4096
"""Entries a memo's table holds before it is emptied, so that memory stays flat in long runs."""
_MEMOS: dict[tuple[int, int], _Memo] = {}


def _memo(peaks: tuple[Peak, ...], settings: Settings) -> _Memo:
    """The memo of this peak list and settings (the memo holds both, so their ids are not reused)."""
    key = (id(peaks), id(settings))
    memo = _MEMOS.get(key)
    if memo is None or memo.peaks is not peaks or memo.settings is not settings:
        if len(_MEMOS) >= _MEMO_LISTS:
            del _MEMOS[next(iter(_MEMOS))]
        memo = _MEMOS[key] = _Memo(peaks, settings)
    return memo


def _remember(table: dict, key: tuple, value):
    """Keep ``value`` under ``key``, emptying the table first when it is full; return ``value``."""
    if len(table) >= _MEMO_SIZE:
        table.clear()
    table[key] = value
    return value


def _signal_costs(memo: _Memo, sg: Signal, capacity: list[int], absent: int, scale: int,
                  exchange_absent: bool) -> _SignalCosts:
    """The costs of one signal against the peaks, a pure function of the fields in its key."""
    key = (sg.shift, sg.sigma, sg.n_h, sg.multiplicity, sg.j, sg.exchangeable, tuple(capacity), absent, scale,
           exchange_absent)
    found = memo.signals.get(key)
    if found is not None:
        return found
    peaks, settings = memo.peaks, memo.settings
    shift, sigma = np.array([[sg.shift]]), np.array([[sg.sigma]])
    lows, highs, seen = _observed(peaks, settings.small_observed_j)
    nearest = np.clip(shift, lows[None, :], highs[None, :])
    residual = (nearest - shift) / sigma
    z2 = np.minimum(residual ** 2, settings.z_cap)
    rough = without_small_couplings(sg.multiplicity, sg.j, settings.hidden_j)
    pen_mult = np.array([[_pattern_penalty(forms, sg.multiplicity, rough, sg.exchangeable) for forms in seen]])
    pen_j = np.array([[coupling_penalty(pk.j, sg.j, settings.j_tolerance, settings.small_observed_j,
                                        settings.j_step)
                       if pk.j and sg.j else 0.0
                       for pk in peaks]])
    per_peak = z2 / scale + (settings.w_multiplicity * pen_mult + settings.w_coupling * pen_j) / float(sg.n_h)
    if exchange_absent:
        per_peak = per_peak + settings.observed_exchanged * sg.exchangeable
    if sg.exchangeable:
        absent_cost = 0.0 if exchange_absent else settings.absent_exchangeable
    else:
        absent_cost = settings.absent_other
    row = np.concatenate([np.repeat(per_peak[0], capacity), np.full(absent, absent_cost)])
    costs = _SignalCosts(residual[0], z2[0], pen_mult[0], pen_j[0], row)
    return _remember(memo.signals, key, costs)


def _cost_matrix(signals: Sequence[Signal], memo: _Memo, counts: tuple[int, ...], missing: int,
                 exchange_absent: bool) -> _Costs:
    """Cost of placing one proton of each signal in each peak, or leaving it unobserved.

    A peak of count n offers n slots (every peak offers one per proton when there are no integrals);
    ``missing`` slots (every proton's, without integrals) stand for unobserved protons.  Each entry is
    the signal's shift score over the observed protons plus its multiplicity and coupling penalties
    shared among its protons.
    """
    rows = [i for i, s in enumerate(signals) for _ in range(s.n_h)]
    n_h = len(rows)
    if not any(counts):
        capacity, absent = [n_h] * len(memo.peaks), n_h
    else:
        capacity, absent = list(counts), missing
    columns = [p for p, c in enumerate(capacity) for _ in range(c)] + [None] * absent
    scale = max(n_h - missing, 1)
    per_signal = [_signal_costs(memo, sg, capacity, absent, scale, exchange_absent) for sg in signals]
    matrix = np.array([per_signal[i].row for i in rows]).reshape(n_h, len(columns))
    return _Costs(per_signal, matrix, rows, columns)


def _decode(costs: _Costs) -> dict[int, dict[int | None, int]]:
    """Protons of each signal placed in each peak (None: unobserved) by the cheapest assignment,
    peaks in the order first reached."""
    placed: dict[int, dict[int | None, int]] = {}
    for r, c in zip(*linear_sum_assignment(costs.matrix)):
        where = placed.setdefault(costs.rows[r], {})
        peak = costs.columns[c]
        where[peak] = where.get(peak, 0) + 1
    return placed


def _score(signals: Sequence[Signal], peaks: tuple[Peak, ...], placed: dict[int, dict[int | None, int]],
           costs: _Costs, observed_h: int, settings: Settings) -> Match:
    """The misfit of an assignment, its parts and one :class:`Pairing` per signal."""
    pairings, shift_sum, integral, mult, coup = [], 0.0, 0.0, 0.0, 0.0
    members: dict[int, list[int]] = {}   # peak -> the signals whose main peak it is
    for i, s in enumerate(signals):
        where = placed.get(i, {None: s.n_h})
        main, protons = max(where.items(), key=lambda kv: (kv[1], kv[0] is not None))
        split = s.n_h - protons
        if split and s.diastereotopic and len(where) == 2 and None not in where:
            split = 0   # a diastereotopic CH2 seen as two signals
        integral += split
        for p, k in where.items():
            if p is None:
                shift_sum += k * (0.0 if s.exchangeable else settings.z_cap)
            else:
                shift_sum += k * costs.signals[i].z2[p]
        if main is None:
            pairings.append(Pairing(i, None, protons, None, s.shift, 0.0, 0.0, 0.0))
            continue
        members.setdefault(main, []).append(i)
        own = costs.signals[i]
        mult += own.multiplicity[main]
        coup += own.coupling[main]
        pairings.append(Pairing(i, main, protons, peaks[main].shift, s.shift, float(own.residual[main]),
                                float(own.multiplicity[main]), float(own.coupling[main])))
    mult += sum(settings.coupled_singlet for p, held in members.items()
                if peaks[p].multiplicity == "s" and _mutually_coupled(signals, held, settings.coupled_singlet_min_j))
    mult += sum(settings.lone_singlet_multiplet for p, held in members.items()
                if peaks[p].multiplicity == "m" and len(held) == 1
                and signals[held[0]].multiplicity == "s" and not signals[held[0]].exchangeable)
    count = len(peaks) - len(members) + sum(
        _group_count([signals[i].shift for i in held], settings.group_gap + peaks[p].high - peaks[p].low) - 1
        for p, held in members.items()
    )
    parts = MisfitParts(
        shift=shift_sum / observed_h,
        integral=settings.w_integral * integral,
        multiplicity=settings.w_multiplicity * mult,
        coupling=settings.w_coupling * coup,
        count=settings.w_count * count,
    )
    return Match(round(parts.total, 6), parts, tuple(pairings))


def match(signals: Sequence[Signal], peaks: tuple[Peak, ...], counts: tuple[int, ...], missing: int,
          exchange_absent: bool, settings: Settings = DEFAULT_SETTINGS) -> Match:
    """Assign predicted signals to observed peaks and score the assignment.

    Parameters
    ----------
    signals : sequence of rank.predict.Signal
        The predicted signals (shift, n_h, sigma, multiplicity, j, exchangeable, partners,
        diastereotopic are read).
    peaks : tuple of rank.spectra.Peak
        The observed peaks (solvent signals already dropped).
    counts : tuple of int
        Whole-number H per peak (a ``Normalisation``); all 0 when the list had no integrals,
        and then every peak may hold any number of H.
    missing : int
        Hydrogens of the formula not observed.
    exchange_absent : bool
        True in D2O or CD3OD, where OH/NH/COOH exchange away.
    settings : Settings
        Weights and tolerances; default :data:`DEFAULT_SETTINGS`.

    Returns
    -------
    Match
        The misfit (rounded to 6 decimals), its parts and one pairing per signal.

    Notes
    -----
    One row per predicted proton, one column per observed proton or allowed absence; the
    cheapest one-to-one assignment is found by the Hungarian algorithm (scipy's
    ``linear_sum_assignment``), then scored (module docstring).  The result is a pure function of
    what it reads, so a signal list already matched against the same peak list (the same object) and
    settings is answered from a bounded memo, as is each signal's row of costs.

    References
    ----------
    H. W. Kuhn, "The Hungarian method for the assignment problem", Naval Res. Logist. Q. 1955,
    2, 83. doi:10.1002/nav.3800020109
    """
    memo = _memo(peaks, settings)
    key = (counts, missing, exchange_absent,
           tuple((s.shift, s.n_h, s.sigma, s.multiplicity, s.j, s.exchangeable, s.diastereotopic, s.partners)
                 for s in signals))
    found = memo.matches.get(key)
    if found is not None:
        return found
    costs = _cost_matrix(signals, memo, counts, missing, exchange_absent)
    placed = _decode(costs)
    n_h = len(costs.rows)
    observed_h = max(n_h, 1) if not any(counts) else max(n_h - missing, 1)
    return _remember(memo.matches, key, _score(signals, peaks, placed, costs, observed_h, settings))


# ------------------------------------------------------------------ 13C ----
#
# One row per predicted carbon class (symmetry-equivalent carbons share one line), one column per
# slot: each observed line offers a first slot and a second one (two classes in one line: accidental
# overlap) at extra cost, and each class may stay unplaced.  The misfit is a mean per class, every
# part in units of one class's squared residual:
#
#     misfit = S + T + O + U + E,  each part divided by n, the number of classes
#
#     S = Σ_placed classes min(((δ_obs - δ_pred) / σ)^2, z_cap)                     shift residuals
#     T = type_mismatch · classes placed in a line whose written type (C, CH, CH2, CH3) is another
#         (infinite by default: never; a line without a type accepts any class)
#     O = overlap · lines holding two classes (none when the line's written carbon count is 2 or more)
#     U = Σ_unplaced classes (unplaced_quaternary for a C, unplaced_protonated for CH, CH2, CH3)
#     E = empty_line · observed lines holding no class
#
# E enters the assignment as a reward of ``empty_line`` for a line's first slot, so one Hungarian
# assignment finds the cheapest total: filling a line saves E, a second class in it does not.


class CarbonClass(Protocol):
    """What :func:`match_carbons` reads of a predicted carbon signal (``rank.predict.carbon.CarbonSignal``)."""

    shift: float        # ppm
    n_h: int            # H on each carbon of the class: 0, 1, 2 or 3
    sigma: float        # ppm, the prediction's uncertainty
    atoms: Sequence[int]  # the equivalent carbons: they share one line


@dataclass(frozen=True)
class CarbonSettings:
    """Weights of the 13C misfit (see :func:`match_carbons` and the comment above :class:`CarbonClass`).

    Every cost is in units of one class's squared residual ((δ_obs - δ_pred) / σ)², and the misfit
    divides the sum by the number of classes, so the trade-offs (place a class far off, leave it
    unplaced, share a line, leave a line empty) are the same for small and large molecules.  The
    values are choices of this program, not chemical constants.
    """

    z_cap: float = 9.0
    """Largest squared residual one class adds to S (a 3 σ miss), as ``Settings.z_cap`` for 1H: one far-off
    shift does not swamp the rest."""
    type_mismatch: float = math.inf
    """Cost of a class placed in a line typed otherwise (C, CH, CH2, CH3 by DEPT, APT or off-resonance
    letters): infinite, never, since a written type is an observation of the H on that carbon; a finite
    value lets a caller soften it for lists whose types may be slips."""
    overlap: float = 2.0
    """Cost of a second class in one line (as a 1.4 σ miss): two inequivalent carbons within a list's
    0.1 ppm are common among aromatic CH (accidental overlap; common practice), but each one makes the
    candidate's count of distinct carbons fit less well."""
    unplaced_quaternary: float = 4.0
    """Cost of a class without H left with no line (as a 2 σ miss): quaternary carbons relax slowly and
    gain no NOE, so their lines are weak and often missing from lists (common practice)."""
    unplaced_protonated: float = 9.0
    """Cost of a CH, CH2 or CH3 class left with no line, equal to ``z_cap``: these lines are strong and
    seldom missed, so such a class always takes a free line of its type, however far."""
    empty_line: float = 4.0
    """Cost of an observed line that holds no class (as a 2 σ miss): more lines than the candidate's
    distinct carbons means its symmetry is wrong (solvent lines are dropped before matching)."""
    weight: float = 4.0
    """Factor on the 13C misfit where it joins the 1H misfit of a candidate (``rank.shortlist.score``).
    Fitted in library mode on the fit part of the open data (``benchmarks/fit_carbon_weight.py``, 2,346
    compounds, 13C environment correction left out as in-sample): top-1 92.8 % at 0.5, 93.9 % at 1,
    94.6 % at 2, 95.1 % at 3, 95.2 % at 4 and 6, 94.9 % at 8."""


DEFAULT_CARBON_SETTINGS = CarbonSettings()


class CarbonParts(NamedTuple):
    """The parts of the 13C misfit, each divided by the number of classes: S (shift), T (type),
    O (overlap), U (unplaced classes) and E (empty lines), each shown on its own."""

    shift: float
    type: float
    overlap: float
    unplaced: float
    empty: float

    @property
    def total(self) -> float:
        """S + T + O + U + E."""
        return self.shift + self.type + self.overlap + self.unplaced + self.empty


class CarbonMatch(NamedTuple):
    """The assignment of one candidate's carbon classes to the observed 13C lines and its misfit.

    Attributes
    ----------
    misfit : (S + T + O + U + E) / number of classes, rounded to 6 decimals.
    parts : the five parts.
    pairs : (class index, line index or None when unplaced) per predicted class, in order.
    z : per class, (observed - predicted) / σ of its line; None when unplaced.
    """

    misfit: float
    parts: CarbonParts
    pairs: tuple[tuple[int, int | None], ...]
    z: tuple[float | None, ...] = ()


_NEVER = 1e9   # a cost no assignment takes while an unplaced slot is open (every class has one)


def match_carbons(signals: Sequence[CarbonClass], peaks: tuple[CarbonPeak, ...],
                  settings: CarbonSettings = DEFAULT_CARBON_SETTINGS) -> CarbonMatch:
    """Assign predicted carbon classes to observed 13C lines and score the assignment.

    Parameters
    ----------
    signals : sequence of rank.predict.carbon.CarbonSignal
        One per symmetry class of carbon: ``shift``, ``n_h``, ``sigma`` and ``atoms`` are read.
    peaks : tuple of rank.spectra.CarbonPeak
        The observed lines, solvent already dropped; ``n_h`` (the written type) and ``carbons`` are read.
    settings : CarbonSettings
        Weights; default :data:`DEFAULT_CARBON_SETTINGS`.

    Returns
    -------
    CarbonMatch

    Notes
    -----
    Rows are classes; columns are two slots per line and one unplaced slot per class.  Slot costs:
    first slot min(z², z_cap) - empty_line, second slot min(z², z_cap) + overlap, either plus
    ``type_mismatch`` against a line typed otherwise; unplaced slot ``unplaced_quaternary`` or
    ``unplaced_protonated``.  The cheapest assignment (Hungarian algorithm, scipy's
    ``linear_sum_assignment``) plus empty_line per line, divided by the number of classes, is the
    misfit.  Pure and deterministic.

    Examples
    --------
    >>> from typing import NamedTuple
    >>> class C(NamedTuple):
    ...     shift: float
    ...     n_h: int
    ...     sigma: float
    ...     atoms: tuple
    >>> from rank.spectra import parse_carbon_text
    >>> ethyl_acetate = [C(171.1, 0, 2.0, (1,)), C(60.5, 2, 2.0, (3,)), C(21.0, 3, 2.0, (0,)), C(14.2, 3, 2.0, (4,))]
    >>> m = match_carbons(ethyl_acetate, parse_carbon_text("170.9 (C), 60.4 (CH2), 21.0 (CH3), 14.2 (CH3)").peaks)
    >>> m.pairs, m.misfit
    (((0, 0), (1, 1), (2, 2), (3, 3)), 0.003125)

    References
    ----------
    H. W. Kuhn, "The Hungarian method for the assignment problem", Naval Res. Logist. Q. 1955,
    2, 83. doi:10.1002/nav.3800020109
    """
    n, m = len(signals), len(peaks)
    if n == 0:
        parts = CarbonParts(0.0, 0.0, 0.0, 0.0, settings.empty_line * m)
        return CarbonMatch(round(parts.total, 6), parts, (), ())   # no class: each empty line counts whole
    shifts = np.array([s.shift for s in signals], dtype=float)
    sigmas = np.array([s.sigma for s in signals], dtype=float)
    observed = np.array([p.shift for p in peaks], dtype=float).reshape(1, m)
    residual = (observed - shifts[:, None]) / sigmas[:, None]
    z2 = np.minimum(residual ** 2, settings.z_cap)
    crossed = np.array([[p.n_h is not None and p.n_h != s.n_h for p in peaks] for s in signals],
                       dtype=bool).reshape(n, m)
    type_cost = np.where(crossed, min(settings.type_mismatch, _NEVER), 0.0)
    shared = np.array([0.0 if (p.carbons or 0) >= 2 else settings.overlap for p in peaks]).reshape(1, m)
    unplaced = np.array([settings.unplaced_quaternary if s.n_h == 0 else settings.unplaced_protonated
                         for s in signals])
    first = z2 + type_cost - settings.empty_line
    second = z2 + type_cost + shared
    absent = np.full((n, n), _NEVER)
    np.fill_diagonal(absent, unplaced)
    rows, cols = linear_sum_assignment(np.hstack([first, second, absent]))

    where: dict[int, int | None] = {}
    shift_part = type_part = overlap_part = unplaced_part = 0.0
    for r, c in zip(rows.tolist(), cols.tolist()):
        if c >= 2 * m:
            where[r] = None
            unplaced_part += unplaced[r]
            continue
        p = c % m
        where[r] = p
        shift_part += z2[r, p]
        if crossed[r, p]:
            type_part += settings.type_mismatch
        if c >= m:
            overlap_part += shared[0, p]
    empty = m - len({p for p in where.values() if p is not None})
    parts = CarbonParts(float(shift_part) / n, float(type_part) / n, float(overlap_part) / n,
                        float(unplaced_part) / n, settings.empty_line * empty / n)
    pairs = tuple((i, where[i]) for i in range(n))
    z = tuple(None if p is None else float(residual[i, p]) for i, p in pairs)
    return CarbonMatch(round(parts.total, 6), parts, pairs, z)
