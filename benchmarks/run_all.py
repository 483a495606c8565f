"""Where the project stands, in one command: real data first (the held-out part of the open data set:
predictor error, library mode, formula mode up to C8 on a fixed sample), then generator throughput and
memory, what group hints save, and the recalled known-answer set.

Usage: python benchmarks/run_all.py [--workers N]   (identification uses 2 workers by default)
"""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

HERE = Path(__file__).resolve().parent


def section(title: str, args: list[str]) -> None:
    print(f"\n=== {title} ===", flush=True)
    subprocess.run([sys.executable, *args], check=True)


if __name__ == "__main__":
    workers = sys.argv[sys.argv.index("--workers") + 1] if "--workers" in sys.argv else "2"
    data = HERE / "data"
    section("predictor on held-out real compounds", [str(HERE / "predict_open.py")])
    section("library mode, held-out real compounds",
            ["-m", "rank", "bench", str(data / "open-spectra.tsv"), "--part", "held-out",
             "--library", str(data / "open-structures-by-formula.tsv"), "--workers", workers])
    section("formula mode, held-out real compounds up to C8 (fixed sample of 80, 10 s each)",
            ["-m", "rank", "bench", str(data / "open-spectra.tsv"), "--part", "held-out", "--carbons", "1-8",
             "--sample", "80", "--budget", "10", "--workers", workers])
    section("isomer generator", [str(HERE / "generator.py")])
    section("group hints in the generator", [str(HERE / "group_hints.py")])
    section("shift predictor", [str(HERE / "predict_mae.py")])
    section("identification, recalled known-answer set", [str(HERE / "identify.py"), "--workers", workers])
