"""Render a short list: terminal text, JSON and CSV (the HTML report is in ``rank/report/html.py``).

Every number shown can be traced: a candidate's misfit is the sum of its parts,
and each assigned signal carries the arithmetic of its predicted shift.

JSON and CSV numbers carry the digits that mean something: shifts 0.001 ppm,
couplings 0.01 Hz, integrals 5 significant digits, z 0.01, penalties 0.0001,
confidence 0.0001. The misfit and its parts keep the 6 decimals the ranking
compares (equal misfits are ties), so the parts add up to the misfit shown.
"""

from __future__ import annotations

import json
import os
import secrets
from pathlib import Path

from ..errors import InputError
from ..shortlist import CAUTION, Candidate, Shortlist
from ..spectra import CarbonPeak, CarbonSpectrum

__all__ = [
    "CONFIDENCE_DECIMALS", "COUPLING_DECIMALS", "INTEGRAL_DIGITS", "MISFIT_DECIMALS", "PENALTY_DECIMALS",
    "SHIFT_DECIMALS", "Z_DECIMALS", "assignment_rows", "carbon_peak_json", "carbon_rows", "csv_text",
    "dropped_by_nucleus", "json_text", "peak_json", "peak_list_json", "terminal_text", "to_json", "write_whole_file"
]

SHIFT_DECIMALS = 3        # ppm
COUPLING_DECIMALS = 2     # Hz
INTEGRAL_DIGITS = 5       # significant digits; integrals may be relative or absolute
MISFIT_DECIMALS = 6       # the precision scoring rounds to (rank.match, rank.shortlist)
PENALTY_DECIMALS = 4
CONFIDENCE_DECIMALS = 4
Z_DECIMALS = 2


def _ppm(value: float | None) -> float | None:
    return None if value is None else round(value, SHIFT_DECIMALS)


def _significant(value: float | None, digits: int) -> float | None:
    return None if value is None else float(f"{value:.{digits}g}")


def assignment_rows(candidate: Candidate, result: Shortlist) -> list[dict]:
    """Signal-by-signal assignment of one candidate, predicted against observed."""
    s = candidate.scored
    rows = []
    for p in s.match.pairings:
        sig = s.signals[p.signal]
        peak = result.observation.peaks[p.peak] if p.peak is not None else None
        rows.append({
            "signal": p.signal,
            "predicted_shift": _ppm(sig.shift),
            "n_h": sig.n_h,
            "predicted_multiplicity": sig.multiplicity,
            "family": sig.family,
            "exchangeable": sig.exchangeable,
            "atoms": list(sig.atoms),
            "sigma": sig.sigma,
            "peak": p.peak,
            "observed_shift": None if peak is None else _ppm(peak.shift),
            "observed_multiplicity": None if peak is None else peak.multiplicity,
            "observed_label": None if peak is None else peak.label,
            "protons_in_peak": p.protons,
            "z": round(p.z, Z_DECIMALS),
            "multiplicity_penalty": round(p.multiplicity_penalty, PENALTY_DECIMALS),
            "coupling_penalty": round(p.coupling_penalty, PENALTY_DECIMALS),
            "explanation": sig.explanation,
        })
    return rows


def carbon_rows(candidate: Candidate, result: Shortlist) -> list[dict]:
    """Class-by-class 13C assignment of one candidate, predicted against observed; [] without a 13C list."""
    s = candidate.scored
    if s.carbon is None:
        return []
    rows = []
    for (k, line), z in zip(s.carbon.pairs, s.carbon.z):
        sig = s.carbon_signals[k]
        peak = result.observation.carbons[line] if line is not None else None
        rows.append({
            "signal": k,
            "predicted_shift": round(sig.shift, 2),
            "type": sig.dept,
            "carbons": len(sig.atoms),
            "family": sig.family,
            "atoms": list(sig.atoms),
            "sigma": sig.sigma,
            "line": line,
            "observed_shift": None if peak is None else round(peak.shift, 2),
            "observed_type": None if peak is None else peak.dept,
            "observed_label": None if peak is None else peak.label,
            "z": None if z is None else round(z, Z_DECIMALS),
            "explanation": sig.explanation,
        })
    return rows


def dropped_by_nucleus(result: Shortlist) -> tuple[list, list]:
    """The dropped 1H peaks and the dropped 13C lines, each with its reason."""
    carbon = [d for d in result.dropped if isinstance(d.peak, CarbonPeak)]
    return [d for d in result.dropped if not isinstance(d.peak, CarbonPeak)], carbon


def _carbon_json(c: Candidate) -> dict:
    s = c.scored
    if s.carbon is None:
        return {"carbon_misfit": None, "carbon_weight": None, "carbon_parts": None}
    return {"carbon_misfit": round(s.carbon_misfit, MISFIT_DECIMALS), "carbon_weight": s.carbon_weight,
            "carbon_parts": {k: round(v, MISFIT_DECIMALS) for k, v in s.carbon.parts._asdict().items()}}


def to_json(result: Shortlist) -> dict:
    """The short list in the documented JSON form; the 13C keys are empty or null without a 13C list."""
    obs = result.observation
    proton_dropped, carbon_dropped = dropped_by_nucleus(result)
    return {
        "formula": result.formula.hill,
        "dbe": result.formula.dbe,
        "explored": result.explored,
        "complete": result.complete,
        "estimated": None if result.estimated is None else round(result.estimated),
        "coverage": None if result.coverage is None else round(result.coverage, 4),
        "solvent": obs.solvent,
        "field_mhz": obs.field_mhz,
        "peaks_used": [peak_json(p) for p in obs.peaks],
        "peaks_dropped": [{**peak_json(d.peak), "reason": d.reason} for d in proton_dropped],
        "carbon_peaks_used": [carbon_peak_json(p) for p in obs.carbons],
        "carbon_peaks_dropped": [{**carbon_peak_json(d.peak), "reason": d.reason} for d in carbon_dropped],
        "normalisations": [{"counts": list(n.counts), "missing": n.missing, "error": round(n.error, PENALTY_DECIMALS)}
                           for n in obs.normalisations],
        "hints": [{"name": h.name, "copies": h.copies, "evidence": h.evidence,
                   "removed": result.hinted.get(h.name, 0)}
                  for h in result.hints],
        "limits": [{"name": lim.name, "claim": lim.claim, "evidence": lim.evidence, "tolerance": lim.tolerance,
                    "removed": result.hinted.get(lim.name, 0)} for lim in result.limits],
        "searched_first": [{"name": h.name, "copies": h.copies, "evidence": h.evidence} for h in result.guesses],
        "candidates_file_skipped_lines": result.skipped_inputs,
        "candidates_file_note": result.candidates_file_note(),
        "candidates_other_formula": result.other_formula,
        "candidates": [
            {
                "rank": c.rank,
                "smiles": c.smiles,
                "inchikey": c.inchikey,
                "misfit": round(c.misfit, MISFIT_DECIMALS),
                "confidence": round(c.confidence, CONFIDENCE_DECIMALS),
                "tied": c.tied,
                "proton_misfit": round(c.scored.proton_misfit, MISFIT_DECIMALS),
                "parts": {k: round(v, MISFIT_DECIMALS) for k, v in c.scored.match.parts._asdict().items()},
                **_carbon_json(c),
                "normalisation": {"counts": list(c.scored.normalisation.counts),
                                  "missing": c.scored.normalisation.missing},
                "reason": c.reason,
                "assignment": assignment_rows(c, result),
                "carbon_assignment": carbon_rows(c, result),
            }
            for c in result.candidates
        ],
        "caution": CAUTION,
    }


def peak_json(p) -> dict:
    """One observed peak as JSON: shift, low, high, integral, multiplicity, J, label."""
    return {"shift": _ppm(p.shift), "low": _ppm(p.low), "high": _ppm(p.high),
            "integral": _significant(p.integral, INTEGRAL_DIGITS),
            "multiplicity": p.multiplicity, "j": [round(j, COUPLING_DECIMALS) for j in p.j],
            "label": p.label}


def carbon_peak_json(p: CarbonPeak) -> dict:
    """One observed 13C line as JSON: shift, type (C, CH, CH2, CH3 or null), carbons written, label."""
    return {"shift": round(p.shift, 2), "type": p.dept, "carbons": p.carbons, "label": p.label}


def peak_list_json(source) -> dict:
    """A peak list as read or picked (a :class:`rank.spectra.PeakSource`) as JSON: nucleus, solvent,
    field, the peaks, and the peaks picking dropped with the reason, and its notes."""
    spectrum = source.spectrum
    carbon = isinstance(spectrum, CarbonSpectrum)
    as_json = carbon_peak_json if carbon else peak_json
    return {"nucleus": "13C" if carbon else "1H", "solvent": spectrum.solvent, "field_mhz": spectrum.field_mhz,
            "peaks": [as_json(p) for p in spectrum.peaks],
            "dropped": [{**(carbon_peak_json(d.peak) if isinstance(d.peak, CarbonPeak) else peak_json(d.peak)),
                         "reason": d.reason} for d in source.dropped],
            "notes": list(source.notes)}


def _peak_caption(p) -> str:
    """``4.12 (q) 2H [OCH2]``: the peak as read, with its H count and the chemist's label."""
    text = f"{p.caption} {p.integral:g}H" if p.integral else p.caption
    return f"{text} [{p.label}]" if p.label else text


def write_whole_file(path: str, text: str, force: bool = False) -> None:
    """Write the whole text or nothing: into a hidden file beside the target, then renamed over it.

    A path that exists but is not a regular file (``/dev/null``, a pipe) is written directly.
    """
    target = Path(path)
    try:
        if target.exists() and not target.is_file():
            with open(target, "w", encoding="utf-8") as out:
                out.write(text)
            return
        part = target.with_name(f".{target.name}.{secrets.token_hex(4)}.part")
        try:
            with open(part, "x", encoding="utf-8") as out:
                out.write(text)
            if target.exists() and not force:
                raise InputError(f"{path} exists; choose another name or pass --force to replace it")
            os.replace(part, target)
        finally:
            part.unlink(missing_ok=True)
    except OSError as exc:
        raise InputError(f"cannot write {path}: {exc.strerror or exc}; choose another path") from None


def json_text(result: Shortlist) -> str:
    return json.dumps(to_json(result), indent=2, ensure_ascii=False) + "\n"


def csv_text(result: Shortlist) -> str:
    frame = result.to_frame()
    decimals = {c: MISFIT_DECIMALS for c in frame.columns if c not in ("rank", "smiles", "inchikey", "tied",
                                                                        "reason", "confidence")}
    decimals["confidence"] = CONFIDENCE_DECIMALS
    return frame.round(decimals).to_csv(index=False)


def terminal_text(result: Shortlist, detail: int = 1) -> str:
    """A table of the candidates, then the assignment of the best ``detail`` candidates."""
    obs = result.observation
    lines = [f"CAUTION: {CAUTION}", ""]
    lines.append(f"formula {result.formula.hill} (DBE {result.formula.dbe}), solvent {obs.solvent}, "
                 f"{obs.field_mhz:g} MHz")
    lines.append("peaks used: " + "; ".join(_peak_caption(p) for p in obs.peaks))
    if obs.carbons:
        lines.append("13C lines used: " + "; ".join(p.caption + (f" [{p.label}]" if p.label else "")
                                                    for p in obs.carbons))
    proton_dropped, carbon_dropped = dropped_by_nucleus(result)
    for d in proton_dropped:
        lines.append(f"dropped: {d.peak.caption} ({d.reason})")
    for d in carbon_dropped:
        lines.append(f"dropped 13C: {d.peak.caption} ({d.reason})")
    norm = result.candidates[0].scored.normalisation if result.candidates else obs.normalisations[0]
    lines.append(f"integrals: {norm.text}")
    for h in result.hints:
        removed = result.hinted.get(h.name, 0)
        lines.append(f"hint: {h.claim} from {h.evidence}; removed about {removed:,} structures "
                     "(--no-hints turns hints off)")
    for lim in result.limits:
        removed = result.hinted.get(lim.name, 0)
        tolerance = f", allowing {lim.tolerance}" if lim.tolerance else ""
        lines.append(f"limit: {lim.claim} ({lim.evidence}{tolerance}); removed about {removed:,} structures "
                     "(--no-hints turns limits off)")
    for h in result.guesses:
        lines.append(f"searched first: {h.claim} from {h.evidence} (a guess the list does not prove: the rest "
                     "of the space is searched after it)")
    if result.skipped_inputs:
        lines.append(f"candidates file: {result.skipped_inputs} unreadable lines skipped")
    if result.other_formula:
        lines.append(f"candidates file: {result.other_formula} structures with another formula left out")
    if result.candidates_file_note():
        lines.append(result.candidates_file_note())
    state = "complete" if result.complete else "INCOMPLETE (budget spent: the truth may be missing)"
    if not result.complete and result.coverage is not None:
        state += (f"; {result.searched_text} searched, the likeliest first; each confidence is among the "
                  "candidates scored only")
    lines.append(f"{result.explored:,} candidates scored; search {state}")
    lines.append("")
    if not result.candidates:
        lines.append("no candidate fits the formula and the constraints")
        return "\n".join(lines) + "\n"
    width = max(len(c.smiles) for c in result.candidates)
    lines.append(f"{'rank':>5}  {'SMILES':<{width}}  {'misfit':>7}  {'conf.':>6}  reason")
    for c in result.candidates:
        rank = f"{c.rank}{'=' if c.tied else ''}"
        lines.append(f"{rank:>5}  {c.smiles:<{width}}  {c.misfit:7.3f}  {c.confidence:6.1%}  {c.reason}")
    for c in result.candidates[:detail]:
        lines.append("")
        parts = c.scored.match.parts
        proton = (f"shift {parts.shift:.3f} + integrals {parts.integral:.3f} + multiplicities {parts.multiplicity:.3f}"
                  f" + J {parts.coupling:.3f} + signal count {parts.count:.3f}"
                  + (f" + rounding {c.scored.normalisation.error:.3f}" if c.scored.normalisation.error else ""))
        if c.scored.carbon is not None:
            proton = (f"1H {c.scored.proton_misfit:.3f} ({proton}) + 13C {c.scored.carbon_weight:g} × "
                      f"{c.scored.carbon.misfit:.3f}")
        lines.append(f"assignment of rank {c.rank}, {c.smiles}: misfit {c.misfit:.3f} = {proton}")
        lines.append(f"  {'obs δ':>6} {'mult':<5} {'pred δ':>6} {'nH':>3} {'mult':<5} {'z':>5}  arithmetic")
        for row in assignment_rows(c, result):
            obs_shift = "absent" if row["observed_shift"] is None else f"{row['observed_shift']:.2f}"
            obs_mult = row["observed_multiplicity"] or "-"
            lines.append(f"  {obs_shift:>6} {obs_mult:<5} {row['predicted_shift']:6.2f} {row['n_h']:>3} "
                         f"{row['predicted_multiplicity']:<5} {row['z']:5.1f}  {row['explanation']}")
        lines.extend(_carbon_lines(c, result))
    return "\n".join(lines) + "\n"


def _carbon_lines(c: Candidate, result: Shortlist) -> list[str]:
    """The 13C assignment of one candidate as terminal lines; none without a 13C list."""
    if c.scored.carbon is None:
        return []
    p = c.scored.carbon.parts
    total = (f"13C assignment: {c.scored.carbon.misfit:.3f} = (shift {p.shift:.3f} + type {p.type:.3f} + shared "
             f"lines {p.overlap:.3f} + unplaced {p.unplaced:.3f} + empty lines {p.empty:.3f}), each per carbon class")
    lines = [total,
             f"  {'obs δ':>6} {'type':<4} {'pred δ':>6} {'type':<4} {'nC':>3} {'z':>5}  arithmetic"]
    rows = carbon_rows(c, result)
    for row in rows:
        obs_shift = "absent" if row["observed_shift"] is None else f"{row['observed_shift']:.1f}"
        z = "-" if row["z"] is None else f"{row['z']:.1f}"
        lines.append(f"  {obs_shift:>6} {row['observed_type'] or '-':<4} {row['predicted_shift']:6.1f} "
                     f"{row['type']:<4} {row['carbons']:>3} {z:>5}  {row['explanation']}")
    placed = {row["line"] for row in rows}
    for i, peak in enumerate(result.observation.carbons):
        if i not in placed:
            lines.append(f"  {peak.shift:6.1f} {peak.dept or '-':<4} {'':>6} {'':<4} {'':>3} {'':>5}  empty line")
    return lines
