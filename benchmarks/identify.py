"""Identification figures on the known-answer set: top-1, top-3, top-10, MRR, time per compound,
the misses, and the calibration of the confidence.

Usage: python benchmarks/identify.py [--workers N] [--no-hints] [--fit] [--only ID ...]
(the same as ``peakrank bench benchmarks/known.tsv ...``).
"""

from __future__ import annotations

import sys
from pathlib import Path

from rank.cli import main

KNOWN = Path(__file__).resolve().parent / "known.tsv"

if __name__ == "__main__":
    raise SystemExit(main(["bench", str(KNOWN), *sys.argv[1:]]))
