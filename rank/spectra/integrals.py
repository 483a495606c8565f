"""Integrals: whole-number H counts for the peaks, as written or scaled to the formula.

>>> from rank.spectra.text import parse_peak_text
>>> normalise(parse_peak_text("4.12 (2H), 2.05 (3H), 1.26 (3H)").peaks, 8, 0)[0].text
'2, 3, 3 H as written'
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from fractions import Fraction

from ..errors import InputError
from .peaks import Peak, observation_rule

__all__ = ["Normalisation", "exchangeable_bound", "normalise", "with_counts"]


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


def normalise(peaks: tuple[Peak, ...], hydrogens: int, max_missing: int,
              keep: int | None = None) -> list[Normalisation]:
    """Whole-number H counts for the peaks.

    H counts written as whole numbers (``3H``) on every peak are absolute: they
    are taken as written, and the formula's remaining hydrogens, at most
    ``max_missing`` of them, are exchangeable H left unreported.  Relative
    integrals (27.1, 40.5, 26.9; or any list not written as whole H counts) are
    scaled so that they sum to the formula's hydrogens, or to fewer when up to
    ``max_missing`` exchangeable H may be unobserved; every peak holds at least
    one H (the rounding tolerance and how many readings are kept are in
    ``rules/observe.tsv``); the rounding of a broad peak (``br``) is not held against a reading.
    The plausible choices are returned best first (smallest rounding residual, fewest missing H),
    so that the matching can decide between them.

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
        # a broad signal's area is unreliable (exchange with water, saturation; common practice): its
        # residual does not count against a reading, unless every peak is broad
        judged = [(r, c) for r, c, p in zip(raw, counts, peaks) if not p.broad] or list(zip(raw, counts))
        error = max(abs(r - c) / max(c, 1) ** 0.5 for r, c in judged)
        if error <= observation_rule("integral_rounding_tolerance"):
            options.append(Normalisation(tuple(counts), hydrogens - target, scale, error))
    options.sort(key=lambda o: (round(o.error, 1), o.missing))
    if not options:
        ratio = _smallest_ratio(given)
        raise InputError(
            f"integrals {', '.join(f'{g:g}' for g in given)} (about {ratio}) cannot be scaled to "
            f"whole numbers summing to the formula's {hydrogens} H"
        )
    return options[:int(observation_rule("readings_kept")) if keep is None else keep]


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


def exchangeable_bound(nitrogens: int, oxygens: int, sulfurs: int, hydrogens: int) -> int:
    """How many of a formula's H can be exchangeable H a list leaves unreported (``rules/observe.tsv``).

    >>> exchangeable_bound(3, 0, 1, 5)
    5
    """
    bound = (nitrogens * observation_rule("labile_h_per_n") + oxygens * observation_rule("labile_h_per_o")
             + sulfurs * observation_rule("labile_h_per_s"))
    return min(hydrogens, int(bound))
