"""How long 1H peak picking takes: a simulated spectrum of 64k and 128k points, and the real files.

    python benchmarks/picking_speed.py [--repeat N] [--spectra DIR]

The simulated spectrum holds 12 first-order multiplets and three singlets (Lorentzian lines, 400 MHz,
noise and a sloping baseline). Real files: every ``*/1h.dx`` under ``--spectra`` (default the test data,
``tests/data/spectra``), read with ``rank.spectra.trace.read_trace``; reading is not timed. Prints the least
wall time of ``--repeat`` runs (target: under 2 s for 64k points).
"""

from __future__ import annotations

import argparse
import time
from math import comb
from pathlib import Path

import numpy as np

from rank.spectra.peaks import format_peaks
from rank.spectra.picking import pick_proton
from rank.spectra.trace import Trace, read_trace

FIELD = 400.0


def simulated(points: int, seed: int = 1) -> Trace:
    """A 1H trace of ``points`` points from -1 to 12 ppm with chosen multiplets (not a real compound)."""
    rng = np.random.default_rng(seed)
    ppm = np.linspace(12.0, -1.0, points)
    hz = ppm * FIELD
    y = rng.normal(0, 2e-4, points) + 0.004 + 0.0008 * ppm
    signals = [(0.9 + 0.6 * k, 1 + k % 3, [(7.0 + 0.5 * k, 1 + k % 3)] + ([(2.0, 1)] if k % 4 == 0 else []))
               for k in range(12)] + [(7.26, 0.3, []), (1.56, 0.4, []), (0.0, 0.5, [])]
    for centre, n_h, couplings in signals:
        lines = [(centre * FIELD, float(n_h))]
        for j, n in couplings:
            lines = [(f + j * (m - n / 2), a * comb(n, m) / 2 ** n) for f, a in lines for m in range(n + 1)]
        for f, a in lines:
            y += a * 0.4 / np.pi / ((hz - f) ** 2 + 0.16)
    return Trace(ppm, y, "1H", FIELD, "CDCl3", "zg30", f"simulated {points}")


def timed(trace: Trace, repeat: int) -> tuple[float, object]:
    best, result = float("inf"), None
    for _ in range(repeat):
        start = time.perf_counter()
        result = pick_proton(trace)
        best = min(best, time.perf_counter() - start)
    return best, result


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeat", type=int, default=3)
    parser.add_argument("--spectra", default=str(Path(__file__).resolve().parents[1] / "tests" / "data" / "spectra"))
    args = parser.parse_args()
    for points in (65536, 131072):
        seconds, result = timed(simulated(points), args.repeat)
        print(f"simulated, {points} points: {seconds:.3f} s, {len(result.spectrum.peaks)} signals, "
              f"{len(result.dropped)} dropped")
    for path in sorted(Path(args.spectra).glob("*/1h.dx")):
        trace = read_trace(path, "1H")
        seconds, result = timed(trace, args.repeat)
        print(f"{path.parent.name}/1h.dx, {len(trace.ppm)} points: {seconds:.3f} s")
        print(f"    {format_peaks(result.spectrum.peaks)}")


if __name__ == "__main__":
    main()
