"""A self-contained HTML report of a short list: no network, no scripts, no external fonts.

For each of the top candidates: its 2D structure (RDKit SVG) with every proton
class in its own colour, the observed peaks as a stick spectrum against the
predicted one in the same colours (ppm decreasing to the right, as spectra are
drawn), the assignment with the increment arithmetic, and the misfit's parts.
When the peaks were picked from a spectrum file, the measured trace is drawn
faintly under the observed sticks. All text that came from the user is escaped.
"""

from __future__ import annotations

import math
import re
from collections.abc import Callable, Sequence
from html import escape

import numpy as np
from rdkit import Chem
from rdkit.Chem.Draw import rdMolDraw2D

from ..shortlist import CAUTION, Candidate, Shortlist
from ..spectra import Trace
from .text import assignment_rows, carbon_rows, dropped_by_nucleus

__all__ = ["PALETTE", "TRACE_POINTS", "carbon_stick_svg", "report_html", "stick_svg", "structure_svg", "trace_polyline"]

TRACE_POINTS = 3000
"""Most points of a measured trace drawn in a stick spectrum: the trace inside the drawn window is cut
into TRACE_POINTS / 2 runs and each run drawn by its lowest and highest point, so no peak is lost."""

PALETTE = ("#1f77b4", "#d62728", "#2ca02c", "#9467bd", "#ff7f0e", "#17becf", "#8c564b",
           "#e377c2", "#bcbd22", "#7f7f7f", "#393b79", "#ad494a", "#637939", "#843c39")

_STYLE = """
body{font-family:system-ui,-apple-system,'Segoe UI',sans-serif;margin:2em auto;max-width:1100px;color:#222;
padding:0 1em}
h1{font-size:1.5em;margin-bottom:.2em} h2{font-size:1.2em;margin-top:2em;border-bottom:1px solid #ccc}
.caution{background:#fff4e5;border:1px solid #f0a020;padding:.8em 1em;border-radius:4px}
table{border-collapse:collapse;margin:.5em 0;font-size:.92em}
td,th{border:1px solid #ddd;padding:.25em .5em;text-align:left}
th{background:#f4f4f4} td.num{text-align:right;font-variant-numeric:tabular-nums}
.card{display:flex;flex-wrap:wrap;gap:1em;align-items:flex-start}
.swatch{display:inline-block;width:.9em;height:.9em;border-radius:2px;vertical-align:middle;margin-right:.3em}
.muted{color:#666} code{font-size:.95em} .legend{max-width:640px;font-size:.85em;margin:.2em 0}
td.class{white-space:nowrap}
"""


# The browser itself refuses any load: nothing but the inline style is allowed.
_POLICY = "default-src 'none'; style-src 'unsafe-inline'"


def _color(i: int) -> str:
    return PALETTE[i % len(PALETTE)]


def _hex_rgb(color: str, tint: float = 0.0) -> tuple[float, float, float]:
    """The colour as RGB fractions, mixed with ``tint`` parts of white."""
    return tuple(c + (1 - c) * tint for c in (int(color[k:k + 2], 16) / 255 for k in (1, 3, 5)))


# Highlights on the structure are a little lighter than the sticks so that atom
# labels (OH, NH) drawn over them stay legible; the hue is the same.
_STRUCTURE_TINT = 0.3


def structure_svg(candidate: Candidate, size: int = 300) -> str:
    """The candidate drawn by RDKit, each proton class's atoms highlighted in its colour.

    The highlights are the stick colours lightened a little.  An atom that
    carries two classes (the two H of a terminal =CH2, a diastereotopic CH2)
    is drawn with both colours.

    Parameters
    ----------
    candidate : Candidate
        A ranked candidate; its predicted signals give the classes, in order.
    size : int
        Width and height of the drawing in pixels.

    Returns
    -------
    str
        An inline ``<svg>`` element (no XML declaration).
    """
    mol = rdMolDraw2D.PrepareMolForDrawing(Chem.MolFromSmiles(candidate.smiles))
    colors: dict[int, list[tuple[float, float, float]]] = {}
    for i, sig in enumerate(candidate.scored.signals):
        rgb = _hex_rgb(_color(i), _STRUCTURE_TINT)
        for a in sig.atoms:
            if rgb not in colors.setdefault(a, []):
                colors[a].append(rgb)
    drawer = rdMolDraw2D.MolDraw2DSVG(size, size)
    opts = drawer.drawOptions()
    opts.addAtomIndices = False
    opts.clearBackground = False
    drawer.DrawMoleculeWithHighlights(mol, "", colors, {}, {}, {})
    drawer.FinishDrawing()
    svg = drawer.GetDrawingText()
    # the drawing uses neither prefix; without them the only namespace left is SVG's own
    return _UNUSED_NAMESPACES.sub("", svg[svg.index("<svg"):])


_UNUSED_NAMESPACES = re.compile(r"\s+xmlns:(?:rdkit|xlink)='[^']*'")


def _observed_heights(candidate: Candidate, result: Shortlist) -> list[int]:
    """H count drawn for each observed peak.

    The candidate's whole-number integral; without integrals, the protons its
    assignment places in the peak; 1 for a peak it leaves empty.
    """
    counts = candidate.scored.normalisation.counts
    placed: dict[int, int] = {}
    for p in candidate.scored.match.pairings:
        if p.peak is not None:
            placed[p.peak] = placed.get(p.peak, 0) + p.protons
    heights = []
    for i, _ in enumerate(result.observation.peaks):
        count = counts[i] if i < len(counts) else 0
        heights.append(count or placed.get(i, 0) or 1)
    return heights


def stick_svg(candidate: Candidate, result: Shortlist, width: int = 640, height: int = 244,
              trace: Trace | None = None) -> str:
    """Observed sticks above the baseline, predicted sticks below, coloured by proton class.

    Stick heights are H counts on one scale; the ppm axis decreases to the right,
    as spectra are drawn.  Observed peaks no predicted signal was assigned to are
    grey; dropped peaks (solvent, water, reference) are grey and dashed.

    Parameters
    ----------
    candidate : Candidate
        The candidate whose predicted signals and assignment are drawn.
    result : Shortlist
        The identification the candidate belongs to (observed and dropped peaks).
    width, height : int
        Size of the drawing in pixels.
    trace : Trace, optional
        The measured spectrum the peaks were picked from, drawn faintly in the observed half.

    Returns
    -------
    str
        An inline ``<svg>`` element.
    """
    peaks = result.observation.peaks
    signals = candidate.scored.signals
    dropped = [d.peak for d in dropped_by_nucleus(result)[0]]
    shifts = [p.high for p in peaks + tuple(dropped)] + [p.low for p in peaks + tuple(dropped)]
    shifts += [s.shift for s in signals]
    high = max(10.0, max(shifts) + 0.5)
    low = min(0.0, min(shifts) - 0.5)
    left, right, top, mid, axis = 70, width - 16, 14, 110, 210

    def x(ppm: float) -> float:
        return left + (high - ppm) / (high - low) * (right - left)

    owner: dict[int, int] = {}
    for p in candidate.scored.match.pairings:
        if p.peak is not None:
            owner.setdefault(p.peak, p.signal)
    observed = _observed_heights(candidate, result)
    scale = (mid - top - 6) / max(observed + [s.n_h for s in signals] + [1])
    parts = [(f'<svg xmlns="http://www.w3.org/2000/svg" width="{width}" height="{height}" '
              f'viewBox="0 0 {width} {height}" role="img" aria-label="stick spectrum" font-size="11">')]
    tick = math.floor(high)
    while tick >= low:
        xt = f"{x(tick):.1f}"
        parts.append(f'<line x1="{xt}" y1="{top}" x2="{xt}" y2="{axis}" stroke="#eee"/>'
                     f'<line x1="{xt}" y1="{axis}" x2="{xt}" y2="{axis + 4}" stroke="#444"/>'
                     f'<text x="{xt}" y="{axis + 16}" text-anchor="middle">{tick}</text>')
        tick -= 1
    parts.append(_baselines(left, right, mid, axis, height, "δ / ppm"))
    if trace is not None:
        parts.append(trace_polyline(trace, x, (low, high), (top, mid)))
    parts.extend(_dropped_stick(x(p.shift), mid, scale, p.caption) for p in dropped)
    for i, p in enumerate(peaks):
        color = _color(owner[i]) if i in owner else "#999"
        h = observed[i] * scale
        if p.high - p.low > 0.01:
            parts.append(f'<rect x="{x(p.high):.1f}" y="{mid - h:.1f}" width="{x(p.low) - x(p.high):.1f}" '
                         f'height="{h:.1f}" fill="{color}" opacity="0.35"/>')
        parts.append(f'<line x1="{x(p.shift):.1f}" y1="{mid}" x2="{x(p.shift):.1f}" y2="{mid - h:.1f}" '
                     f'stroke="{color}" stroke-width="2"><title>{escape(p.caption)}, {observed[i]}H</title></line>')
    for i, s in enumerate(signals):
        h = s.n_h * scale
        parts.append(f'<line x1="{x(s.shift):.1f}" y1="{mid}" x2="{x(s.shift):.1f}" y2="{mid + h:.1f}" '
                     f'stroke="{_color(i)}" stroke-width="2"><title>{s.shift:.2f} ppm, {s.n_h}H '
                     f'{escape(s.multiplicity)}</title></line>')
    parts.append("</svg>")
    return "".join(parts)


def trace_polyline(trace: Trace, x: Callable[[float], float], window: tuple[float, float],
                   band: tuple[float, float], points: int = TRACE_POINTS) -> str:
    """A measured trace as one SVG ``<polyline>`` inside a stick spectrum.

    Parameters
    ----------
    trace : the spectrum.
    x : the drawing's ppm-to-pixel map.
    window : (low, high) ppm drawn; the rest of the trace is left out.
    band : (top, baseline) pixel rows: the tallest point reaches ``top``, the trace's median sits on the
        baseline; points below it are drawn on it.
    points : most points drawn (:data:`TRACE_POINTS`).

    Returns
    -------
    str
        The ``<polyline>`` element, or "" when no point lies in the window.
    """
    ppm, y = np.asarray(trace.ppm, dtype=float), np.asarray(trace.intensity, dtype=float)
    inside = (ppm >= window[0]) & (ppm <= window[1])
    ppm, y = ppm[inside], y[inside]
    if len(ppm) < 2:
        return ""
    runs = max(1, points // 2)
    if len(ppm) > points:
        size = len(ppm) // runs
        cut = size * runs
        blocks = y[:cut].reshape(runs, size)
        lowest, highest = blocks.argmin(axis=1), blocks.argmax(axis=1)
        starts = np.arange(runs) * size
        chosen = np.sort(np.concatenate([starts + lowest, starts + highest]))
        ppm, y = ppm[chosen], y[chosen]
    base, peak = float(np.median(y)), float(y.max())
    top, bottom = band
    level = np.clip((y - base) / (peak - base), 0.0, 1.0) if peak > base else np.zeros_like(y)
    rows = bottom - level * (bottom - top)
    coordinates = " ".join(f"{x(float(a)):.1f},{float(b):.1f}" for a, b in zip(ppm, rows, strict=True))
    return (f'<polyline points="{coordinates}" fill="none" stroke="#8aa" stroke-width="0.7" '
            f'opacity="0.8"><title>measured spectrum ({escape(trace.source)})</title></polyline>')


def _baselines(left: int, right: int, mid: int, axis: int, height: int, unit: str) -> str:
    """The observed/predicted baseline, the ppm axis line and their labels of a stick spectrum."""
    return (f'<line x1="{left}" y1="{mid}" x2="{right}" y2="{mid}" stroke="#444"/>'
            f'<line x1="{left}" y1="{axis}" x2="{right}" y2="{axis}" stroke="#444"/>'
            f'<text x="{right}" y="{height - 2}" text-anchor="end">{unit}</text>'
            f'<text x="{left - 6}" y="{mid - 6}" text-anchor="end">observed</text>'
            f'<text x="{left - 6}" y="{mid + 15}" text-anchor="end">predicted</text>')


def _dropped_stick(at: float, mid: int, scale: float, caption: str) -> str:
    """A grey dashed stick for a dropped peak (solvent, water, reference)."""
    return (f'<line x1="{at:.1f}" y1="{mid}" x2="{at:.1f}" y2="{mid - scale:.1f}" stroke="#999" stroke-width="2" '
            f'stroke-dasharray="3 2"><title>{escape(caption)}, dropped</title></line>')


def carbon_stick_svg(candidate: Candidate, result: Shortlist, width: int = 640, height: int = 200,
                     trace: Trace | None = None) -> str:
    """Observed 13C lines above the baseline, the candidate's predicted carbon classes below.

    Heights are carbons (a line written as 2C, a class of equivalent carbons); a predicted class
    has the colour of its observed line's first class, grey when unplaced; an observed line no
    class took is grey, a dropped line grey and dashed.  The ppm axis decreases to the right.  A
    measured ``trace`` (the 13C spectrum the lines were picked from) is drawn faintly above.
    """
    lines, signals = result.observation.carbons, candidate.scored.carbon_signals
    dropped = [d.peak for d in dropped_by_nucleus(result)[1]]
    shifts = [p.shift for p in lines] + [p.shift for p in dropped] + [s.shift for s in signals]
    high = max(220.0, max(shifts) + 5)
    low = min(0.0, min(shifts) - 5)
    left, right, top, mid, axis = 70, width - 16, 14, 90, 170

    def x(ppm: float) -> float:
        return left + (high - ppm) / (high - low) * (right - left)

    line_of = dict(candidate.scored.carbon.pairs)
    owner: dict[int, int] = {}
    for k, line in candidate.scored.carbon.pairs:
        if line is not None:
            owner.setdefault(line, k)
    observed = [p.carbons or 1 for p in lines]
    scale = (mid - top - 6) / max(observed + [len(s.atoms) for s in signals] + [1])
    parts = [(f'<svg xmlns="http://www.w3.org/2000/svg" width="{width}" height="{height}" '
              f'viewBox="0 0 {width} {height}" role="img" aria-label="13C stick spectrum" font-size="11">')]
    for tick in range(int(math.floor(high / 20) * 20), int(low) - 1, -20):
        xt = f"{x(tick):.1f}"
        parts.append(f'<line x1="{xt}" y1="{top}" x2="{xt}" y2="{axis}" stroke="#eee"/>'
                     f'<line x1="{xt}" y1="{axis}" x2="{xt}" y2="{axis + 4}" stroke="#444"/>'
                     f'<text x="{xt}" y="{axis + 16}" text-anchor="middle">{tick}</text>')
    parts.append(_baselines(left, right, mid, axis, height, "δC / ppm"))
    if trace is not None:
        parts.append(trace_polyline(trace, x, (low, high), (top, mid)))
    parts.extend(_dropped_stick(x(p.shift), mid, scale, p.caption) for p in dropped)
    for i, p in enumerate(lines):
        color = _color(owner[i]) if i in owner else "#999"
        h = observed[i] * scale
        parts.append(f'<line x1="{x(p.shift):.1f}" y1="{mid}" x2="{x(p.shift):.1f}" y2="{mid - h:.1f}" '
                     f'stroke="{color}" stroke-width="2"><title>{escape(p.caption)}</title></line>')
    for k, s in enumerate(signals):
        line = line_of.get(k)
        color = _color(owner[line]) if line is not None else "#999"
        parts.append(f'<line x1="{x(s.shift):.1f}" y1="{mid}" x2="{x(s.shift):.1f}" '
                     f'y2="{mid + len(s.atoms) * scale:.1f}" stroke="{color}" stroke-width="2">'
                     f'<title>{s.shift:.1f} ppm, {escape(s.dept)}, {len(s.atoms)} C</title></line>')
    parts.append("</svg>")
    return "".join(parts)


def _carbon_section(c: Candidate, result: Shortlist, trace: Trace | None = None) -> str:
    """The 13C part of a candidate's section: misfit parts, stick spectrum, assignment; "" without 13C."""
    match = c.scored.carbon
    if match is None:
        return ""
    p = match.parts
    rows = []
    for row in carbon_rows(c, result):
        obs = "not observed" if row["observed_shift"] is None else f"{row['observed_shift']:.1f}"
        z = "" if row["z"] is None else f"{row['z']:.1f}"
        rows.append(f"<tr><td>{escape(row['family'])}</td><td class='num'>{obs}</td>"
                    f"<td>{escape(row['observed_type'] or '')}</td><td class='num'>{row['predicted_shift']:.1f}</td>"
                    f"<td>{escape(row['type'])}</td><td class='num'>{row['carbons']}</td><td class='num'>{z}</td>"
                    f"<td><code>{escape(row['explanation'])}</code></td></tr>")
    return (
        f"<h3>13C: {c.scored.carbon_weight:g} × {match.misfit:.3f} = {c.scored.carbon_misfit:.3f} of the misfit</h3>"
        f"<div>{carbon_stick_svg(c, result, trace=trace)}<p class='muted legend'>{_CARBON_LEGEND}"
        f"{_TRACE_LEGEND if trace else ''}</p></div>"
        "<table><tr><th>13C misfit part (per carbon class)</th><th>value</th></tr>"
        f"<tr><td>shift residuals</td><td class='num'>{p.shift:.3f}</td></tr>"
        f"<tr><td>type (DEPT)</td><td class='num'>{p.type:.3f}</td></tr>"
        f"<tr><td>classes sharing a line</td><td class='num'>{p.overlap:.3f}</td></tr>"
        f"<tr><td>classes without a line</td><td class='num'>{p.unplaced:.3f}</td></tr>"
        f"<tr><td>empty lines</td><td class='num'>{p.empty:.3f}</td></tr></table>"
        "<table><tr><th>carbon</th><th>observed δC</th><th>obs. type</th><th>predicted δC</th><th>type</th>"
        "<th>nC</th><th>z</th><th>arithmetic</th></tr>" + "".join(rows) + "</table>"
    )


_CARBON_LEGEND = ("13C lines observed above, the candidate's carbon classes predicted below, heights in carbons; "
                  "a class has its line's colour, grey when no line took it. Grey line: no class assigned; dashed: "
                  "dropped.")

_TRACE_LEGEND = " Faint line: the measured spectrum the peaks were picked from."

_LEGEND = ("Observed above the line, predicted below, heights in H; each colour is one proton class of the "
           "structure and the table. Grey: observed peak with no class assigned; dashed: dropped peak.")


def _candidate_section(c: Candidate, result: Shortlist, trace: Trace | None = None,
                       carbon_trace: Trace | None = None) -> str:
    parts = c.scored.match.parts
    rows = []
    for row in assignment_rows(c, result):
        obs = "not observed" if row["observed_shift"] is None else f"{row['observed_shift']:.2f}"
        obs_mult = escape(row["observed_multiplicity"] or "")
        rows.append(
            f"<tr><td class='class'><span class='swatch' style='background:{_color(row['signal'])}'></span>"
            f"{escape(row['family'])}</td><td class='num'>{obs}</td><td>{obs_mult}</td>"
            f"<td class='num'>{row['predicted_shift']:.2f}</td><td class='num'>{row['n_h']}</td>"
            f"<td>{escape(row['predicted_multiplicity'])}</td><td class='num'>{row['z']:.1f}</td>"
            f"<td><code>{escape(row['explanation'])}</code></td></tr>")
    tie = " (tied)" if c.tied else ""
    return (
        f"<h2>Rank {c.rank}{tie}: <code>{escape(c.smiles)}</code></h2>"
        f"<p class='muted'>InChIKey {escape(c.inchikey)} · misfit {c.misfit:.3f} · confidence "
        f"{c.confidence:.1%} · {escape(c.reason)}</p>"
        f"<div class='card'><div>{structure_svg(c)}</div><div>{stick_svg(c, result, trace=trace)}"
        f"<p class='muted legend'>{_LEGEND}{_TRACE_LEGEND if trace else ''}</p></div></div>"
        "<table><tr><th>misfit part</th><th>value</th></tr>"
        f"<tr><td>shift residuals</td><td class='num'>{parts.shift:.3f}</td></tr>"
        f"<tr><td>integrals</td><td class='num'>{parts.integral:.3f}</td></tr>"
        f"<tr><td>multiplicities</td><td class='num'>{parts.multiplicity:.3f}</td></tr>"
        f"<tr><td>coupling constants</td><td class='num'>{parts.coupling:.3f}</td></tr>"
        f"<tr><td>signal count</td><td class='num'>{parts.count:.3f}</td></tr>"
        f"<tr><td>integral rounding</td><td class='num'>{c.scored.normalisation.error:.3f}</td></tr></table>"
        "<table><tr><th>class</th><th>observed δ</th><th>obs.</th><th>predicted δ</th><th>nH</th>"
        "<th>pred.</th><th>z</th><th>arithmetic</th></tr>" + "".join(rows) + "</table>"
        + _carbon_section(c, result, carbon_trace)
    )


def report_html(result: Shortlist, title: str | None = None, shown: int = 5, trace: Trace | None = None,
                carbon_trace: Trace | None = None, notes: Sequence[str] = ()) -> str:
    """The whole report as one HTML document; ``trace`` and ``carbon_trace``, the measured 1H and 13C
    spectra the peaks were picked from, are drawn under the observed sticks, and ``notes`` (how they were
    picked) are listed with the input."""
    obs = result.observation
    norm = result.candidates[0].scored.normalisation if result.candidates else obs.normalisations[0]
    heading = escape(title or f"peakrank short list for {result.formula.hill}")
    used = "".join(
        f"<tr><td class='num'>{p.shift:.2f}</td><td>{escape(p.caption)}</td>"
        f"<td class='num'>{'' if p.integral is None else f'{p.integral:g}'}</td>"
        f"<td>{escape(', '.join(f'{j:g}' for j in p.j))}</td><td>{escape(p.label)}</td></tr>" for p in obs.peaks)
    dropped = "".join(f"<li>{escape(d.peak.caption)}: {escape(d.reason)}</li>" for d in result.dropped)
    carbons = "".join(f"<tr><td class='num'>{p.shift:.1f}</td><td>{escape(p.dept or '')}</td>"
                      f"<td class='num'>{p.carbons or ''}</td><td>{escape(p.label)}</td></tr>" for p in obs.carbons)
    hints = "".join(f"<li>{escape(h.claim)} from {escape(h.evidence)}: removed about "
                    f"{result.hinted.get(h.name, 0):,} structures</li>" for h in result.hints)
    hints += "".join(f"<li>{escape(lim.claim)} ({escape(lim.evidence)}): removed about "
                     f"{result.hinted.get(lim.name, 0):,} structures</li>" for lim in result.limits)
    summary = "".join(
        f"<tr><td class='num'>{c.rank}{'=' if c.tied else ''}</td><td><code>{escape(c.smiles)}</code></td>"
        f"<td class='num'>{c.misfit:.3f}</td><td class='num'>{c.confidence:.1%}</td>"
        f"<td>{escape(c.reason)}</td></tr>" for c in result.candidates)
    state = "complete" if result.complete else "incomplete: the run stopped early and the truth may be missing"
    if not result.complete and result.coverage is not None:
        state += (f"; {result.searched_text} searched, the likeliest first; each confidence is among the "
                  "candidates scored only")
    body = (
        f"<h1>{heading}</h1>"
        f"<p class='caution'><strong>Caution.</strong> {escape(CAUTION)}</p>"
        "<h2>Input</h2>"
        f"<p>Formula <strong>{escape(result.formula.hill)}</strong>, DBE {result.formula.dbe}; "
        f"solvent {escape(obs.solvent)}; {obs.field_mhz:g} MHz; integrals "
        f"{escape(norm.text)}.</p>"
        "<table><tr><th>δ / ppm</th><th>peak</th><th>H</th><th>J / Hz</th><th>label</th></tr>" + used + "</table>"
        + ("<table><tr><th>δC / ppm</th><th>type</th><th>C</th><th>label</th></tr>" + carbons + "</table>"
           if carbons else "")
        + (f"<p>Dropped:</p><ul>{dropped}</ul>" if dropped else "<p>No peak dropped.</p>")
        + ("<p>Picked from the spectrum files:</p><ul>" + "".join(f"<li>{escape(n)}</li>" for n in notes) + "</ul>"
           if notes else "")
        + (f"<p>Hints and limits applied (turn off with --no-hints):</p><ul>{hints}</ul>" if hints else "")
        + f"<p>{result.explored:,} candidates scored; search {escape(state)}.</p>"
        "<h2>Short list</h2><table><tr><th>rank</th><th>SMILES</th><th>misfit</th><th>confidence</th>"
        "<th>reason</th></tr>" + summary + "</table>"
        + "".join(_candidate_section(c, result, trace, carbon_trace) for c in result.candidates[:shown])
        + f"<p class='caution'>{escape(CAUTION)}</p>"
    )
    return ("<!DOCTYPE html><html lang='en'><head><meta charset='utf-8'>"
            f"<meta http-equiv='Content-Security-Policy' content=\"{_POLICY}\">"
            f"<title>{heading}</title><style>{_STYLE}</style></head><body>{body}</body></html>\n")
