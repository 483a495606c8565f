"""Where the project stands, in one command: generator throughput and memory, what group hints save,
predictor accuracy, identification figures on the known-answer set.

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
    section("isomer generator", [str(HERE / "generator.py")])
    section("group hints in the generator", [str(HERE / "group_hints.py")])
    section("shift predictor", [str(HERE / "predict_mae.py")])
    section("identification", [str(HERE / "identify.py"), "--workers", workers])
