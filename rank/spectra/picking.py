"""Peak picking: turn a processed spectrum trace into the peak list a chemist would write.

For 1H: reference the axis (TMS at 0, else the residual solvent line), fit the baseline and the noise, pick
lines (``scipy.signal.find_peaks``, parabolic interpolation of the centre), chain lines into signals,
integrate each signal on the baseline-corrected trace, and name first-order patterns from the line
positions and intensities (n+1 rule, and the coupling-tree reading of T. R. Hoye et al.,
J. Org. Chem. 1994, 59, 4096). Signals that share a coupling form spin systems (``networkx`` connected
components); a strongly coupled pair is given ``m``. Solvent, water, TMS, 13C satellites, spinning
sidebands and minor signals are dropped with a reason. For 13C: one line per peak, the solvent
multiplet dropped, DEPT-135 types matched by shift. Settings: ``rules/picking.tsv``.

>>> import numpy as np
>>> from rank.spectra.trace import Trace
>>> from rank.spectra.peaks import format_peaks
>>> ppm = np.linspace(10, 0, 20000)
>>> lorentz = lambda c, h: h / (1 + ((ppm - c) * 400 / 0.5) ** 2)
>>> y = lorentz(2.05, 3) + lorentz(7.26, 0.2) + np.random.default_rng(1).normal(0, 1e-4, ppm.size)
>>> picked = pick_proton(Trace(ppm, y, "1H", 400.0, "CDCl3"))
>>> format_peaks(picked.spectrum.peaks), [d.reason for d in picked.dropped]
('2.05 (s, 1.0H)', ['residual CDCl3'])
"""

from __future__ import annotations

import math
from dataclasses import dataclass, fields, replace
from functools import cache
from itertools import combinations, pairwise, product

import networkx as nx
import numpy as np
from scipy.ndimage import maximum_filter1d
from scipy.signal import find_peaks, peak_widths

from ..errors import InputError
from ..tables import read_table
from .peaks import (
    CARBON_SHIFT_RANGE,
    MULTIPLET_NAMES,
    SHIFT_RANGE,
    CarbonPeak,
    CarbonSpectrum,
    Dropped,
    Peak,
    PeakSource,
    Spectrum,
    coupling_groups,
    make_carbon_peak,
    make_peak,
    observation_rule,
)
from .solvents import DEFAULT_SOLVENT, Solvent, find_solvent
from .trace import Trace

__all__ = ["PickingSettings", "first_order", "pick_carbon", "pick_proton", "picking_settings"]


@dataclass(frozen=True)
class PickingSettings:
    """Thresholds and tolerances of peak picking; each field is a row of ``rules/picking.tsv``,
    where its meaning and source are written."""

    noise_k: float
    prominence_k: float
    min_line_fraction: float
    mask_k: float
    mask_dilate_hz: float
    baseline_blocks: int
    baseline_iterations: int
    line_merge_hz: float
    group_gap_hz: float
    adjacent_ratio_max: float
    integrate_widths: float
    integrate_broad_widths: float
    integrate_min_hz: float
    broad_factor: float
    broad_min_hz: float
    position_tolerance_hz: float
    position_tolerance_widths: float
    unit_tolerance: float
    mirror_ratio_max: float
    equal_j_hz: float
    min_j_hz: float
    extra_line_fraction: float
    max_spins: int
    strong_coupling_ratio: float
    second_order_note_ratio: float
    tms_window: float
    solvent_window: float
    solvent_min_fraction: float
    residual_span_hz: float
    carbon_tms_window: float
    carbon_solvent_window: float
    reference_k: float
    satellite_ratio_min: float
    satellite_ratio_max: float
    satellite_half_j_min_hz: float
    satellite_half_j_max_hz: float
    sideband_ratio_max: float
    sideband_tolerance_hz: float
    minor_fraction: float
    unit_budget: float
    unit_tolerance_h: float
    max_h_per_signal: int
    minor_unit_fraction: float
    water_window_broad: float
    water_max_h: float
    carbon_noise_k: float
    carbon_merge_hz: float
    carbon_minor_fraction: float
    carbon_broad_factor: float
    dept_tolerance_ppm: float
    dept_noise_k: float
    dept_min_fraction: float
    dept_ch_above: float
    dept_ch3_below: float


@cache
def picking_settings() -> PickingSettings:
    """The settings of ``rules/picking.tsv``.

    >>> picking_settings().group_gap_hz
    20.0
    """
    values = {r["id"]: r["value"] for r in read_table("picking")}
    kinds = {f.name: f.type for f in fields(PickingSettings)}
    return PickingSettings(**{name: int(values[name]) if kind == "int" else float(values[name])
                              for name, kind in kinds.items()})


NOT_TMS = "line near 0 that disagrees with the solvent reference: silicone grease or another Si-CH3 impurity"


# ---------------------------------------------------------------- baseline, noise and lines


@dataclass(frozen=True)
class _Prepared:
    """A trace on an ascending axis with its baseline removed."""

    ppm: np.ndarray
    y: np.ndarray           # baseline-corrected intensity
    noise: float
    hz_per_point: float


def _prepare(trace: Trace, s: PickingSettings) -> _Prepared:
    ppm = np.asarray(trace.ppm, dtype=float)
    y = np.asarray(trace.intensity, dtype=float)
    if ppm.ndim != 1 or ppm.size != y.size or ppm.size < 64:
        raise InputError(f"{trace.source or 'trace'}: a 1D spectrum of at least 64 points is needed")
    if ppm[0] > ppm[-1]:
        ppm, y = ppm[::-1], y[::-1]
    hz_per_point = (ppm[-1] - ppm[0]) / (ppm.size - 1) * trace.frequency_mhz
    baseline, noise = _baseline(y, hz_per_point, s)
    return _Prepared(ppm, y - baseline, noise, hz_per_point)


def _baseline(y: np.ndarray, hz_per_point: float, s: PickingSettings) -> tuple[np.ndarray, float]:
    """Baseline and noise from the signal-free points: block medians joined by straight lines, refitted
    after masking the points that stand off it (an iterative fit on signal-free points)."""
    n = y.size
    noise = 1.4826 * np.median(np.abs(np.diff(y) - np.median(np.diff(y)))) / math.sqrt(2)
    free = np.ones(n, dtype=bool)
    edges = np.linspace(0, n, s.baseline_blocks + 1).astype(int)
    dilate = max(1, round(s.mask_dilate_hz / hz_per_point))
    baseline = np.full(n, np.median(y))
    for _ in range(s.baseline_iterations):
        centres, levels = [], []
        for a, b in pairwise(edges):
            block = free[a:b]
            if block.sum() >= max(8, 0.1 * (b - a)):
                centres.append((a + b - 1) / 2)
                levels.append(np.median(y[a:b][block]))
        if len(centres) >= 2:
            baseline = np.interp(np.arange(n), centres, levels)
        residual = y - baseline
        noise = 1.4826 * np.median(np.abs(residual[free])) or noise or 1.0
        free = ~maximum_filter1d(np.abs(residual) > s.mask_k * noise, size=2 * dilate + 1)
        if free.sum() < 0.05 * n:
            break
    return baseline, float(noise)


@dataclass(frozen=True)
class _Line:
    ppm: float
    height: float
    width_hz: float       # full width at half height


def _lines(p: _Prepared, k: float, s: PickingSettings, sign: float = 1.0) -> list[_Line]:
    """Local maxima of ``sign * y`` above ``k`` noise units, centres by parabolic interpolation."""
    y = sign * p.y
    floor = max(k * p.noise, s.min_line_fraction * float(y.max(initial=0.0)))
    idx, _ = find_peaks(y, height=floor, prominence=s.prominence_k * p.noise)
    if idx.size == 0:
        return []
    widths = peak_widths(y, idx, rel_height=0.5)[0] * abs(p.hz_per_point)
    step = p.ppm[1] - p.ppm[0]
    out = []
    for i, w in zip(idx, widths):
        a, b, c = (y[i - 1], y[i], y[i + 1]) if 0 < i < y.size - 1 else (y[i], y[i], y[i])
        denom = a - 2 * b + c
        off = 0.5 * (a - c) / denom if denom < 0 else 0.0
        out.append(_Line(float(p.ppm[i] + off * step), float(b - 0.25 * (a - c) * off), float(w)))
    return out


# ---------------------------------------------------------------- referencing


def _reference(lines: list[_Line], solvent: Solvent | None, nucleus: str, noise: float, freq: float,
               s: PickingSettings) -> tuple[float, str, _Line | None]:
    """The shift correction (ppm) that puts TMS at 0, else the residual solvent at its table value; the note
    saying so; and a line near 0 not taken as TMS.

    A line near 0 is taken as TMS only when the solvent line, if found, agrees with it within the solvent
    table's tolerance; otherwise it may be silicone grease or another impurity, and the solvent line wins.
    """
    carbon = nucleus == "13C"
    tall = [ln for ln in lines if ln.height >= s.reference_k * noise]
    tms = _nearest(tall, 0.0, s.carbon_tms_window if carbon else s.tms_window)
    found, value = None, None
    if solvent is not None:
        value = (solvent.carbon[0] if solvent.carbon else None) if carbon else solvent.residual
        if value is not None:
            found = _solvent_line(tall, solvent, value, carbon, freq, s)
    tolerance = solvent.tolerance_carbon if carbon and solvent else solvent.tolerance_residual if solvent else 0
    if tms is not None and (found is None or abs((value - found.ppm) + tms.ppm) <= tolerance):
        note = f"referenced on TMS at 0 (line found at {tms.ppm:.4f} ppm; correction {-tms.ppm:+.4f} ppm)"
        return -tms.ppm, note, None
    if found is not None:
        shift = value - found.ppm
        doubt = (f"; the line at {tms.ppm:.3f} ppm disagrees with it and is not taken as TMS"
                 if tms is not None else "")
        return shift, (f"referenced on the residual {solvent.id} line at {value:.2f} ppm (found at "
                       f"{found.ppm:.4f}; correction {shift:+.4f} ppm){doubt}"), tms
    return 0.0, "no TMS or residual solvent line found: the file's own shift axis is kept", None


def _solvent_line(lines: list[_Line], solvent: Solvent, value: float, carbon: bool, freq: float,
                  s: PickingSettings, window: float | None = None) -> _Line | None:
    """The residual solvent line nearest its table value.

    1H: among the lines of at least ``solvent_min_fraction`` of the tallest in the window, an isolated one
    (no line of comparable height a coupling away) is preferred; else one that is not a line of a group
    reading as a first-order multiplet, so that a line of a compound multiplet near 7.26 is not taken for
    CHCl3. 13C: the centre line of the solvent
    multiplet, with outer lines J(C,D) / frequency away on both sides when the table gives J(C,D).
    """
    if window is None:
        window = s.carbon_solvent_window if carbon else s.solvent_window
    near = sorted((ln for ln in lines if abs(ln.ppm - value) <= window), key=lambda ln: abs(ln.ppm - value))
    if carbon and near and solvent.carbon_j_cd and solvent.carbon_j_cd[0] > 0:
        spacing = solvent.carbon_j_cd[0] / freq
        tolerance = 2 * s.carbon_merge_hz / freq
        centred = [ln for ln in near if all(any(abs(o.ppm - ln.ppm - side * spacing) <= tolerance for o in lines)
                                            for side in (-1, 1))]
        near = centred or near
    elif not carbon and solvent.residual_multiplicity == "s" and near:
        top = max(ln.height for ln in near)
        near = [ln for ln in near if ln.height >= s.solvent_min_fraction * top]
        isolated = [ln for ln in near if not any(
            o is not ln and _joined(*sorted((o, ln), key=lambda x: x.ppm), freq, s) for o in lines)]
        near = isolated or [ln for ln in near if not _in_first_order_multiplet(ln, lines, freq, s)]
    return near[0] if near else None


def _in_first_order_multiplet(line: _Line, lines: list[_Line], freq: float, s: PickingSettings) -> bool:
    """The line is one of a group of lines that reads as a first-order multiplet with it, or a small line set
    aside beside a multiplet."""
    group = next((g for g in _group(lines, freq, s) if any(x is line for x in g)), None)
    if group is None:
        return True
    return len(group) > 1 and first_order(tuple(x.ppm * freq for x in group), tuple(x.height for x in group),
                                          tuple(x.width_hz for x in group), s) is not None


def _nearest(lines: list[_Line], value: float, window: float) -> _Line | None:
    near = [ln for ln in lines if abs(ln.ppm - value) <= window]
    return min(near, key=lambda ln: abs(ln.ppm - value)) if near else None


def _shifted(trace: Trace, correction: float) -> Trace:
    return replace(trace, ppm=np.asarray(trace.ppm, dtype=float) + correction)


def _solvent_of(trace: Trace, solvent: str | None) -> Solvent | None:
    name = solvent or trace.solvent
    return find_solvent(name) if name else None


# ---------------------------------------------------------------- 1H signals


@dataclass(frozen=True)
class _Signal:
    """One group of lines: a multiplet, or a singlet."""

    lines: tuple[_Line, ...]
    low: float            # integration region, ppm
    high: float
    integral: float
    multiplicity: str = "m"
    j: tuple[float, ...] = ()
    centre: float = 0.0

    @property
    def peak_ppm(self) -> float:
        return self.centre or float(np.mean([ln.ppm for ln in self.lines]))


def _group(lines: list[_Line], freq: float, s: PickingSettings) -> list[list[_Line]]:
    """Chain neighbouring lines closer than a coupling and of comparable height into groups.

    A line much smaller than the multiplet it sits in (a long-range splitting, a wiggle, an impurity) is set
    aside without breaking the chain; set-aside lines inside a group's span are left in its integral, the
    others form groups of their own.
    """
    groups, aside = _chain(sorted(lines, key=lambda ln: ln.ppm), freq, s)
    outside = [ln for ln in aside if not any(g[0].ppm < ln.ppm < g[-1].ppm for g in groups)]
    if outside:
        groups += _chain(outside, freq, s)[0] if len(outside) < len(lines) else [[ln] for ln in outside]
    return sorted(groups, key=lambda g: g[0].ppm)


def _chain(lines: list[_Line], freq: float, s: PickingSettings) -> tuple[list[list[_Line]], list[_Line]]:
    groups: list[list[_Line]] = []
    aside: list[_Line] = []
    for ln in lines:
        last = groups[-1][-1] if groups else None
        if last is None or (ln.ppm - last.ppm) * freq > max(s.group_gap_hz, last.width_hz + ln.width_hz):
            groups.append([ln])
        elif _joined(last, ln, freq, s):
            groups[-1].append(ln)
        elif ln.height < last.height:
            aside.append(ln)
        else:
            group = groups[-1]
            while group and group[-1].height * s.adjacent_ratio_max < ln.height:
                aside.append(group.pop())
            if not group:
                groups.pop()
            if group and (ln.ppm - group[-1].ppm) * freq <= s.group_gap_hz and _joined(group[-1], ln, freq, s):
                group.append(ln)
            else:
                groups.append([ln])
    return groups, aside


def _joined(a: _Line, b: _Line, freq: float, s: PickingSettings) -> bool:
    """Two neighbouring lines (b after a) may be lines of one multiplet: a coupling apart and of comparable height."""
    gap = (b.ppm - a.ppm) * freq
    if gap > max(s.group_gap_hz, a.width_hz + b.width_hz):
        return False
    return max(a.height, b.height) <= s.adjacent_ratio_max * min(a.height, b.height)


def _integrate(groups: list[list[_Line]], p: _Prepared, freq: float, broad_hz: float, s: PickingSettings
               ) -> list[_Signal]:
    """Integrate each group from its outer lines out to a few line widths (fewer for a broad line, whose wide
    region would gather baseline errors), the regions of neighbours meeting at the lowest point of the trace
    between them."""
    bounds = []
    for g in groups:
        width = max(ln.width_hz for ln in g)
        widths = s.integrate_broad_widths if width > broad_hz else s.integrate_widths
        ext = max(s.integrate_min_hz, widths * width) / freq
        bounds.append([g[0].ppm - ext, g[-1].ppm + ext])
    for k in range(len(groups) - 1):
        if bounds[k][1] > bounds[k + 1][0]:
            i, j = np.searchsorted(p.ppm, [groups[k][-1].ppm, groups[k + 1][0].ppm])
            middle = (groups[k][-1].ppm + groups[k + 1][0].ppm) / 2
            valley = float(p.ppm[i + int(np.argmin(p.y[i:j]))]) if j > i else middle
            bounds[k][1] = bounds[k + 1][0] = valley
    cumulative = np.concatenate([[0.0], np.cumsum(p.y)])
    signals = []
    for g, (low, high) in zip(groups, bounds):
        i, j = np.searchsorted(p.ppm, [low, high])
        signals.append(_Signal(tuple(g), max(low, p.ppm[0]), min(high, p.ppm[-1]),
                               float(cumulative[j] - cumulative[i])))
    return signals


def _name(signal: _Signal, typical_width: float, freq: float, s: PickingSettings) -> _Signal:
    """Multiplicity, J and centre of one signal."""
    lines = signal.lines
    if len(lines) == 1:
        ln = lines[0]
        broad = ln.width_hz > max(s.broad_min_hz, s.broad_factor * typical_width)
        return replace(signal, multiplicity="br s" if broad else "s", centre=ln.ppm)
    fit = first_order(tuple(ln.ppm * freq for ln in lines), tuple(ln.height for ln in lines),
                      tuple(ln.width_hz for ln in lines), s)
    if fit is None:
        total = sum(ln.height for ln in lines)
        return replace(signal, multiplicity="m", centre=sum(ln.ppm * ln.height for ln in lines) / total)
    name, js, centre_hz = fit
    return replace(signal, multiplicity=name, j=js, centre=centre_hz / freq)


def first_order(positions_hz: tuple[float, ...], heights: tuple[float, ...], widths_hz: tuple[float, ...],
                settings: PickingSettings | None = None) -> tuple[str, tuple[float, ...], float] | None:
    """Read a first-order multiplet from its lines: the name (d, t, dd, dt, qd, ...), J per letter (largest
    first, Hz, 0.1) and the centre (Hz); None when no first-order pattern places every line.

    Mirror lines are averaged (removing the roof effect), intensities are counted in units of the outer line
    (the three whole numbers nearest each within ``unit_tolerance`` are tried, closest first), and the
    couplings are read in turn as the distance from the first line to the first line not yet explained by the
    couplings found so far (T. R. Hoye, P. R. Hanson, J. R. Vyvyan, J. Org. Chem. 1994, 59, 4096). The
    couplings are then refined by least squares over every line. When the lines do not fit, small extra lines
    (long-range couplings, impurities) inside the pattern, or tiny ones outside it, are left out in turn, up to
    ``extra_line_fraction`` of the intensity; last, heights times widths stand for the intensities.

    >>> first_order((0.0, 7.0, 14.0, 21.0), (1.0, 3.1, 2.9, 1.0), (1.0,) * 4)
    ('q', (7.0,), 10.5)
    >>> first_order((0.0, 2.0, 10.0, 12.0), (1.0, 1.0, 1.0, 1.0), (1.0,) * 4)
    ('dd', (10.0, 2.0), 6.0)
    """
    s = settings or picking_settings()
    f = np.asarray(positions_hz, dtype=float)
    h = np.asarray(heights, dtype=float)
    order = np.argsort(f)
    f, h = f[order], h[order]
    w = np.asarray(widths_hz, dtype=float)[order]
    tol = max(s.position_tolerance_hz, s.position_tolerance_widths * float(np.median(w)))
    fit = _first_order_lines(f, h, tol, s)
    for fraction in sorted({x for x in (h / h.max()) if x < 0.5}):
        if fit is not None:
            break
        keep = h > fraction * h.max()
        if h[~keep].sum() > s.extra_line_fraction * h.sum() or keep.sum() < 2:
            break
        inner = (f > f[keep].min()) & (f < f[keep].max())
        if not (inner | (h * s.adjacent_ratio_max < h[keep].min()))[~keep].all():
            continue    # an outer line of fair size continues the pattern: it is no extra line
        fit = _first_order_lines(f[keep], h[keep], tol, s)
    return fit or _first_order_lines(f, h * w, tol, s)


def _first_order_lines(f: np.ndarray, h: np.ndarray, tol: float, s: PickingSettings
                       ) -> tuple[str, tuple[float, ...], float] | None:
    centre = (f[0] + f[-1]) / 2
    if np.abs(f + f[::-1] - 2 * centre).max() > 2 * tol:
        return None
    if (np.maximum(h, h[::-1]) > s.mirror_ratio_max * np.minimum(h, h[::-1])).any():
        return None
    mirrored = (h + h[::-1]) / 2
    units = mirrored / mirrored[0]
    for counts in _unit_counts(units, s.unit_tolerance):
        total = int(counts.sum())
        spins = total.bit_length() - 1
        if total != 1 << spins or not 1 <= spins <= s.max_spins:
            continue
        tree = _coupling_tree(f, counts, spins, tol)
        if tree is None:
            continue
        js, middle = _refine(f, tree, spins)
        if min(js) >= s.min_j_hz:
            return _pattern_name(js, s) + (middle,)
    return None


def _unit_counts(units: np.ndarray, tolerance: float):
    """Whole-number intensities near ``units`` (mirror-symmetric), closest first."""
    half = (units.size + 1) // 2
    options = []
    for u in units[:half]:
        span = range(max(1, math.floor(u / (1 + tolerance))), math.ceil(u / (1 - tolerance)) + 1)
        near = sorted((c for c in span if abs(u - c) <= tolerance * c), key=lambda c: abs(u - c))[:3]
        if not near:
            return
        options.append(near)
    choices = [np.array(c) for c in product(*options)]
    choices.sort(key=lambda c: float(np.abs(c - units[:half]).sum()))
    for c in choices:
        yield np.concatenate([c, c[: units.size - half][::-1]])


def _coupling_tree(f: np.ndarray, counts: np.ndarray, spins: int, tol: float
                   ) -> list[tuple[int, tuple[int, ...]]] | None:
    """Assign every component of the multiplet to a line: (line index, the couplings summed) per component."""
    used = np.zeros_like(counts)
    used[0] = 1
    components: list[tuple[int, tuple[int, ...]]] = [(0, ())]
    js: list[float] = []
    for k in range(spins):
        free = np.nonzero(used < counts)[0]
        if free.size == 0:
            return None
        js.append(float(f[free[0]] - f[0]))
        added = []
        for _, subset in components:
            where = f[0] + sum(js[i] for i in subset) + js[k]
            line = int(np.argmin(np.abs(f - where)))
            if abs(f[line] - where) > tol or used[line] >= counts[line]:
                return None
            used[line] += 1
            added.append((line, subset + (k,)))
        components += added
    return components if (used == counts).all() else None


def _refine(f: np.ndarray, components: list[tuple[int, tuple[int, ...]]], spins: int) -> tuple[list[float], float]:
    """Least-squares couplings and centre from every component's line position."""
    a = np.zeros((len(components), spins + 1))
    b = np.zeros(len(components))
    for row, (line, subset) in enumerate(components):
        a[row, 0] = 1.0
        for k in subset:
            a[row, k + 1] = 1.0
        b[row] = f[line]
    solution = np.linalg.lstsq(a, b, rcond=None)[0]
    js = [float(x) for x in solution[1:]]
    return js, round(float(solution[0] + sum(js) / 2), 3)


def _pattern_name(js: list[float], s: PickingSettings) -> tuple[str, tuple[float, ...]]:
    """Group equal couplings (largest first) into the letters of the pattern; ``m`` when it has no name."""
    groups: list[list[float]] = []
    for j in sorted(js, reverse=True):
        if groups and groups[-1][0] - j <= s.equal_j_hz:
            groups[-1].append(j)
        else:
            groups.append([j])
    sizes = [len(g) for g in groups]
    values = tuple(round(float(np.mean(g)), 1) for g in groups)
    if len(groups) == 1:
        return (MULTIPLET_NAMES[sizes[0]], values) if sizes[0] in MULTIPLET_NAMES else ("m", ())
    if len(groups) > 4 or max(sizes) > 3:
        return "m", ()
    return "".join(MULTIPLET_NAMES[n] for n in sizes), values


def _strongly_coupled(signals: list[_Signal], freq: float, s: PickingSettings) -> tuple[list[_Signal], list[str]]:
    """Spin systems as connected components of signals sharing a coupling (networkx); signals of a pair whose
    shift difference in Hz is below ``strong_coupling_ratio`` times J are second order and become ``m``."""

    graph = nx.Graph()
    graph.add_nodes_from(range(len(signals)))
    for a, b in combinations(range(len(signals)), 2):
        shared = [(x + y) / 2 for x in signals[a].j for y in signals[b].j if abs(x - y) <= s.equal_j_hz]
        if shared:
            j = max(shared)
            ratio = abs(signals[a].peak_ppm - signals[b].peak_ppm) * freq / j
            graph.add_edge(a, b, j=j, ratio=ratio)
    notes, out = [], list(signals)
    for component in nx.connected_components(graph):
        if len(component) < 2:
            continue
        members = sorted(component, key=lambda i: -signals[i].peak_ppm)
        notes.append("spin system (shared J): " + ", ".join(f"{signals[i].peak_ppm:.2f} {signals[i].multiplicity}"
                                                            for i in members))
    for a, b, data in graph.edges(data=True):
        pair = f"{signals[a].peak_ppm:.2f} and {signals[b].peak_ppm:.2f} ppm (J = {data['j']:.1f} Hz, " \
               f"Δν/J = {data['ratio']:.1f})"
        if data["ratio"] < s.strong_coupling_ratio:
            for i in (a, b):
                out[i] = replace(out[i], multiplicity="m", j=())
            notes.append(f"strongly coupled: {pair}; read as m")
        elif data["ratio"] < s.second_order_note_ratio:
            notes.append(f"near second order: {pair}; shifts and J approximate")
    return out, notes


def _satellite_or_sideband(signals: list[_Signal], freq: float, s: PickingSettings) -> dict[int, str]:
    """Small signals placed as 13C satellites (±1J(C,H)/2) or spinning sidebands (a symmetric pair) of a bigger one."""
    reasons: dict[int, str] = {}
    for i, small in enumerate(signals):
        for big in signals:
            ratio = small.integral / big.integral if big.integral > 0 else 1.0
            offset = (small.peak_ppm - big.peak_ppm) * freq
            if s.satellite_ratio_min <= ratio <= s.satellite_ratio_max and \
                    s.satellite_half_j_min_hz <= abs(offset) <= s.satellite_half_j_max_hz:
                reasons[i] = f"13C satellite of {big.peak_ppm:.2f} ppm ({offset:+.0f} Hz, {100 * ratio:.2f} %)"
                break
            if ratio <= s.sideband_ratio_max and abs(offset) >= s.group_gap_hz and any(
                    other is not small and other.integral / big.integral <= s.sideband_ratio_max
                    and abs((other.peak_ppm - big.peak_ppm) * freq + offset) <= s.sideband_tolerance_hz
                    for other in signals):
                reasons[i] = f"spinning sideband of {big.peak_ppm:.2f} ppm ({offset:+.1f} Hz)"
                break
    return reasons


def _lorentzian(ppm: np.ndarray, line: _Line, freq: float) -> np.ndarray:
    half = max(line.width_hz, 1e-6) / 2 / freq
    return line.height / (1 + ((ppm - line.ppm) / half) ** 2)


def _reference_lines(lines: list[_Line], solvent: Solvent | None, broad_hz: float, freq: float, s: PickingSettings
                     ) -> tuple[list[_Line], list[tuple[_Line, str]]]:
    """Take out the sharp single lines of TMS and of a singlet residual solvent before grouping, so that a
    compound multiplet they fall into is read without them."""
    sharp = [ln for ln in lines if ln.width_hz < broad_hz]
    tolerance = observation_rule("tms_tolerance")
    near_zero = [ln for ln in sharp if abs(ln.ppm) <= tolerance]
    taken = [(min(near_zero, key=lambda ln: abs(ln.ppm)), "TMS reference")] if near_zero else []
    if solvent is not None and solvent.residual_multiplicity == "s":
        found = _solvent_line(sharp, solvent, solvent.residual, False, freq, s, solvent.tolerance_residual)
        if found is not None:
            taken.append((found, f"residual {solvent.id}"))
    gone = {id(ln) for ln, _ in taken}
    return [ln for ln in lines if id(ln) not in gone], taken


def pick_proton(trace: Trace, solvent: str | None = None, settings: PickingSettings | None = None) -> PeakSource:
    """The 1H peak list of a processed trace.

    Parameters
    ----------
    trace : Trace
        A processed 1H spectrum (real, frequency domain).
    solvent : str, optional
        Solvent name; default the trace's own. Without one no residual line is referenced on or dropped.
    settings : PickingSettings, optional
        Default :func:`picking_settings` (``rules/picking.tsv``).

    Returns
    -------
    PeakSource
        The signals with relative integrals (the smallest kept signal 1), multiplicity and J; what was dropped
        and why; notes on referencing and noise; the trace on the corrected axis.

    Raises
    ------
    InputError
        The trace is not 1H, or too short.
    """
    s = settings or picking_settings()
    if trace.nucleus != "1H":
        raise InputError(f"{trace.source or 'trace'} is a {trace.nucleus} spectrum; a 1H spectrum is needed here")
    chosen = _solvent_of(trace, solvent)
    freq = trace.frequency_mhz
    prepared = _prepare(trace, s)
    lines = _merged(_lines(prepared, s.noise_k, s), freq, s.line_merge_hz)
    correction, ref_note, not_tms = _reference(lines, chosen, "1H", prepared.noise, freq, s)
    prepared = replace(prepared, ppm=prepared.ppm + correction)
    lines = [replace(ln, ppm=ln.ppm + correction) for ln in lines if ln is not not_tms]
    typical = float(np.median([ln.width_hz for ln in lines])) if lines else 1.0
    broad_hz = max(s.broad_min_hz, s.broad_factor * typical)
    lines, taken = _reference_lines(lines, chosen, broad_hz, freq, s)
    y = prepared.y.copy()
    for ln, _ in taken:
        y -= _lorentzian(prepared.ppm, ln, freq)
    prepared = replace(prepared, y=y)
    if not_tms is not None:
        taken.append((replace(not_tms, ppm=not_tms.ppm + correction), NOT_TMS))
    dropped = [Dropped(make_peak(round(ln.ppm, 3), None, None, "s", ()), reason) for ln, reason in taken]
    inside = [ln for ln in lines if _in_range(ln.ppm)]
    groups = _group(inside, freq, s)
    signals = [_name(sig, typical, freq, s) for sig in _integrate(groups, prepared, freq, broad_hz, s)]
    signals, more, unit = _drop_signals(signals, chosen, freq, s)
    dropped += more
    signals, coupling_notes = _strongly_coupled(signals, freq, s)
    peaks = tuple(_peak(sig, unit) for sig in sorted(signals, key=lambda sig: -sig.peak_ppm))
    tallest = max((ln.height for ln in lines), default=0.0)
    noise_note = (f"noise {prepared.noise:.4g} (robust SD of signal-free points); tallest line "
                  f"{tallest / prepared.noise:.0f} times the noise; line width about {typical:.2f} Hz")
    notes = [ref_note, noise_note, *coupling_notes]
    if len(inside) < len(lines):
        notes.append(f"{len(lines) - len(inside)} line(s) outside -1 to 16 ppm ignored")
    spectrum = Spectrum(peaks, freq, chosen.id if chosen else None, "1H")
    return PeakSource(spectrum, tuple(dropped), tuple(notes), _shifted(trace, correction))


def _in_range(ppm: float) -> bool:
    return SHIFT_RANGE[0] <= ppm <= SHIFT_RANGE[1]


def _drop_signals(signals: list[_Signal], solvent: Solvent | None, freq: float, s: PickingSettings
                  ) -> tuple[list[_Signal], list[Dropped], float]:
    """Drop 13C satellites, spinning sidebands, residual solvent (multiplet solvents), minor signals, water, and
    signals holding less than ``minor_unit_fraction`` of one H.

    Returns the kept signals, the dropped ones and the integral of one H (:func:`_unit`).
    """
    reasons = _satellite_or_sideband(signals, freq, s)
    for i, sig in enumerate(signals):
        if i in reasons or solvent is None:
            continue
        span_hz = (sig.lines[-1].ppm - sig.lines[0].ppm) * freq
        solvent_like = sig.multiplicity in ("s", "br s", solvent.residual_multiplicity) or (
            solvent.residual_multiplicity != "s" and span_hz <= s.residual_span_hz)
        if solvent_like and abs(sig.peak_ppm - solvent.residual) <= solvent.tolerance_residual:
            reasons[i] = f"residual {solvent.id}"
    main = _main_integral([sig for i, sig in enumerate(signals) if i not in reasons])
    for i, sig in enumerate(signals):
        if i not in reasons and sig.integral < s.minor_fraction * main:
            reasons[i] = f"minor signal ({100 * sig.integral / main:.1f} % of the main signal): impurity or artefact"
    unit = _unit([sig.integral for i, sig in enumerate(signals) if i not in reasons], s)
    for i, sig in enumerate(signals):
        if i not in reasons and solvent is not None and sig.multiplicity in ("s", "br s"):
            off = abs(sig.peak_ppm - solvent.water)
            if off <= solvent.tolerance_water:
                reasons[i] = f"water in {solvent.id}"
            elif sig.multiplicity == "br s" and off <= s.water_window_broad and sig.integral < s.water_max_h * unit:
                reasons[i] = (f"water in {solvent.id}? (broad, {off:.2f} ppm from {solvent.water:.2f}, "
                              f"{sig.integral / unit:.2f} of the smallest signal)")
    for i, sig in enumerate(signals):
        if i not in reasons and sig.integral < s.minor_unit_fraction * unit:
            reasons[i] = f"minor signal ({sig.integral / unit:.2f} of one H unit): impurity or artefact"
    dropped = [Dropped(_peak(signals[i], unit), reason) for i, reason in sorted(reasons.items())]
    return [sig for i, sig in enumerate(signals) if i not in reasons], dropped, unit


def _unit(integrals: list[float], s: PickingSettings) -> float:
    """The integral of one H: the largest unit that reads the signals as whole numbers of H (each within
    ``unit_tolerance_h`` per H) except at most ``unit_budget`` of the total (impurities), refined as the
    median integral per H of the signals it reads."""
    values = [x for x in integrals if x > 0]
    if not values:
        return 1.0
    total = sum(values)
    for unit in sorted({x / n for x in values for n in range(1, s.max_h_per_signal + 1)}, reverse=True):
        counts = [round(x / unit) for x in values]
        read = [(x, n) for x, n in zip(values, counts) if n >= 1 and abs(x / unit - n) <= s.unit_tolerance_h * n]
        if total - sum(x for x, _ in read) <= s.unit_budget * total:
            return float(np.median([x / n for x, n in read]))
    return min(values)


def _main_integral(signals: list[_Signal]) -> float:
    """The integral-weighted median signal: the signal at which the running sum of integrals, smallest first,
    passes half the total (impurities barely move it)."""
    values = sorted(sig.integral for sig in signals if sig.integral > 0)
    if not values:
        return 1.0
    running = np.cumsum(values)
    return float(values[int(np.searchsorted(running, running[-1] / 2))])


def _peak(sig: _Signal, unit: float) -> Peak:
    integral = round(sig.integral / unit, 2) if unit > 0 and sig.integral > 0 else None
    integral = integral if integral else None
    j = tuple(x for x in sig.j if 0 < x <= 40)
    if sig.multiplicity == "m" and len(sig.lines) > 1:
        return make_peak(round(sig.lines[0].ppm, 3), round(sig.lines[-1].ppm, 3), integral, "m", ())
    return make_peak(round(sig.peak_ppm, 3), None, integral, sig.multiplicity, j if len(j) == len(sig.j) else ())


# ---------------------------------------------------------------- 13C


def pick_carbon(trace: Trace, solvent: str | None = None, dept135: Trace | None = None,
                settings: PickingSettings | None = None) -> PeakSource:
    """The 13C line list of a processed proton-decoupled trace, typed by a DEPT-135 trace when given.

    Parameters
    ----------
    trace : Trace
        A processed 13C spectrum.
    solvent : str, optional
        Solvent name; default the trace's own. Its 13C multiplet is referenced on and dropped.
    dept135 : Trace, optional
        A DEPT-135 spectrum of the same sample: CH and CH3 up, CH2 down, quaternary C absent. Its axis is
        corrected as the 13C trace's.
    settings : PickingSettings, optional
        Default :func:`picking_settings` (``rules/picking.tsv``).

    Returns
    -------
    PeakSource
        One line per peak; ``n_h`` from the DEPT-135: 2 for a down line, 0 for a line absent from it, and for
        an up line 1 or 3 only where the shift decides it (``dept_ch_above``, ``dept_ch3_below``), else None.

    Raises
    ------
    InputError
        The trace is not 13C, or the DEPT-135 trace is not a 13C spectrum.
    """
    s = settings or picking_settings()
    if trace.nucleus != "13C":
        raise InputError(f"{trace.source or 'trace'} is a {trace.nucleus} spectrum; a 13C spectrum is needed here")
    chosen = _solvent_of(trace, solvent)
    freq = trace.frequency_mhz
    prepared = _prepare(trace, s)
    lines = _merged(_lines(prepared, s.carbon_noise_k, s), freq, s.carbon_merge_hz)
    correction, ref_note, not_tms = _reference(lines, chosen, "13C", prepared.noise, freq, s)
    lines = [replace(ln, ppm=ln.ppm + correction) for ln in lines if ln is not not_tms]
    kept, dropped = [], []
    if not_tms is not None:
        dropped.append(Dropped(CarbonPeak(round(not_tms.ppm + correction, 2)), NOT_TMS))
    median = float(np.median([ln.height for ln in lines])) if lines else 0.0
    typical = float(np.median([ln.width_hz for ln in lines])) if lines else 0.0
    for ln in lines:
        reason = _carbon_drop_reason(ln, chosen, freq, s)
        if reason is None and ln.height < s.carbon_minor_fraction * median:
            reason = f"minor line ({100 * ln.height / median:.1f} % of the median line): impurity or artefact"
        elif reason is None and ln.width_hz > s.carbon_broad_factor * typical:
            reason = f"broad bump ({ln.width_hz:.0f} Hz wide, lines about {typical:.1f} Hz): baseline or artefact"
        if reason:
            dropped.append(Dropped(CarbonPeak(round(ln.ppm, 2)), reason))
        else:
            kept.append(ln)
    noise_note = (f"noise {prepared.noise:.4g} (robust SD of signal-free points); {len(kept)} lines above "
                  f"{s.carbon_noise_k:g} times the noise")
    notes = [ref_note, noise_note]
    types: list[int | None] = [None] * len(kept)
    if dept135 is not None:
        types, dept_notes = _dept_types(kept, dept135, correction, s)
        notes += dept_notes
    peaks = tuple(make_carbon_peak(round(ln.ppm, 2), n_h) for ln, n_h in
                  sorted(zip(kept, types), key=lambda pair: -pair[0].ppm))
    spectrum = CarbonSpectrum(peaks, freq, chosen.id if chosen else None)
    return PeakSource(spectrum, tuple(dropped), tuple(notes), _shifted(trace, correction))


def _merged(lines: list[_Line], freq: float, within_hz: float) -> list[_Line]:
    """One line per peak: maxima closer than ``within_hz`` (a flat or split top) are the tallest of them."""
    out: list[_Line] = []
    for ln in sorted(lines, key=lambda ln: ln.ppm):
        if out and (ln.ppm - out[-1].ppm) * freq <= within_hz:
            if ln.height > out[-1].height:
                out[-1] = ln
        else:
            out.append(ln)
    return out


def _carbon_drop_reason(ln: _Line, solvent: Solvent | None, freq: float, s: PickingSettings) -> str | None:
    """TMS, a line of the solvent's 13C multiplet (outer lines J(C,D) / frequency from its centre, within
    twice ``carbon_merge_hz``; the centre within the solvent table's tolerance), or out of range."""
    if not CARBON_SHIFT_RANGE[0] <= ln.ppm <= CARBON_SHIFT_RANGE[1]:
        return f"outside {CARBON_SHIFT_RANGE[0]:g} to {CARBON_SHIFT_RANGE[1]:g} ppm"
    tolerance = (solvent or find_solvent(DEFAULT_SOLVENT)).tolerance_carbon
    if abs(ln.ppm) <= tolerance:
        return "TMS reference"
    if solvent is None:
        return None
    outer_tolerance = 2 * s.carbon_merge_hz / freq
    for value, pattern, j in zip(solvent.carbon, solvent.carbon_multiplicity, solvent.carbon_j_cd):
        half = sum(coupling_groups(pattern) or ()) // 2
        if any(abs(ln.ppm - value - k * j / freq) <= outer_tolerance for k in range(-half, half + 1) if k):
            return f"residual {solvent.id} (outer line)"
        if abs(ln.ppm - value) <= tolerance:
            return f"residual {solvent.id}"
    return None


def _dept_types(lines: list[_Line], dept: Trace, correction: float, s: PickingSettings
                ) -> tuple[list[int | None], list[str]]:
    """H count of each 13C line from the DEPT-135 trace within ``dept_tolerance_ppm`` of it: the largest
    excursion there, when it passes ``dept_noise_k`` noise units and ``dept_min_fraction`` of the tallest DEPT
    line, is down (CH2) or up (CH or CH3, decided by shift windows only at the ends of the range, else None);
    otherwise the line is absent (C)."""
    if dept.nucleus != "13C":
        raise InputError(f"{dept.source or 'DEPT-135 trace'} is a {dept.nucleus} spectrum; a 13C DEPT-135 is needed")
    prepared = _prepare(dept, s)
    prepared = replace(prepared, ppm=prepared.ppm + correction)
    floor = max(s.dept_noise_k * prepared.noise, s.dept_min_fraction * float(np.abs(prepared.y).max()))
    types: list[int | None] = []
    undecided = []
    for ln in lines:
        a, b = np.searchsorted(prepared.ppm, [ln.ppm - s.dept_tolerance_ppm, ln.ppm + s.dept_tolerance_ppm])
        window = prepared.y[a:b]
        value = float(window[np.argmax(np.abs(window))]) if window.size else 0.0
        if abs(value) < floor:
            types.append(0)
        elif value < 0:
            types.append(2)
        else:
            kind = 1 if ln.ppm > s.dept_ch_above else 3 if ln.ppm < s.dept_ch3_below else None
            types.append(kind)
            if kind is None:
                undecided.append(f"{ln.ppm:.1f}")
    up = len(types) - types.count(2) - types.count(0)
    notes = [(f"DEPT-135 ({dept.source or 'trace'}): axis corrected by {correction:+.4f} ppm as the 13C trace; "
              f"{types.count(2)} down (CH2), {up} up (CH or CH3), {types.count(0)} absent (C)")]
    if undecided:
        notes.append(f"DEPT-135: up lines between {s.dept_ch3_below:g} and {s.dept_ch_above:g} ppm may be CH or "
                     f"CH3 and are left untyped: {', '.join(undecided)}")
    strong = [ln.ppm for sign in (1.0, -1.0) for ln in _lines(prepared, s.dept_noise_k, s, sign)
              if abs(ln.height) >= floor]
    unmatched = [x for x in strong if not any(abs(x - ln.ppm) <= s.dept_tolerance_ppm for ln in lines)]
    if unmatched:
        notes.append("DEPT-135 lines without a 13C line: " + ", ".join(f"{x:.1f}" for x in sorted(unmatched)))
    return types, notes
