"""What group hints save: structures built and time with the groups placed as single vertices,
against the estimated size of the same default space without them.

Each run goes in a fresh subprocess so that its peak resident memory is its own.
Usage: python benchmarks/group_hints.py
"""

from __future__ import annotations

import json
import subprocess
import sys

# formula, groups (SMILES with * ports, copies), what the spectrum would show
RUNS = [
    ("C9H11NO2", [("CC*", 1), ("*c1ccc(*)cc1 *c1ccncc1", 1)], "ethyl 4-aminobenzoate: q/t and two 2H d"),
    ("C11H12O2", [("CC*", 1), ("*c1ccccc1", 1)], "ethyl cinnamate: q/t and 5 aromatic H"),
    ("C7H12O4", [("CC*", 2)], "diethyl malonate: 4H q with 6H t"),
    ("C13H10O", [("*c1ccccc1", 1)], "benzophenone: 10 aromatic H"),
    ("C10H14", [("CC(C)(C)*", 1), ("*c1ccccc1", 1)], "tert-butylbenzene"),
    ("C12H16O3", [("CCC*", 1), ("*c1ccccc1* *c1cccc(*)c1 *c1ccc(*)cc1 *c1ccccn1 *c1cccnc1 *c1ccncc1", 1)],
     "a butyl methoxybenzoate: sext/t and four aromatic H"),
]

_CHILD = r"""
import json, resource, sys, time
from rank.generate import IsomerStream
from rank.generate import Hint
formula, groups = sys.argv[1], json.loads(sys.argv[2])
hints = [Hint(f"group {i}", "benchmark", fragments=tuple(s.split()), copies=c) for i, (s, c) in enumerate(groups)]
plain = IsomerStream(formula, ceiling=0).estimate()
stream = IsomerStream(formula, hints=hints, ceiling=0)
start = time.perf_counter()
n = sum(1 for _ in stream)
seconds = time.perf_counter() - start
peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
print(json.dumps({"n": n, "built": stream.explored, "seconds": seconds, "plain": plain, "peak_mb": peak}))
"""


def main() -> None:
    print(f"{'formula':<9} {'kept':>7} {'built':>8} {'seconds':>8} {'without groups (est.)':>22} {'peak MB':>8}")
    for formula, groups, note in RUNS:
        out = subprocess.run([sys.executable, "-c", _CHILD, formula, json.dumps(groups)],
                             capture_output=True, text=True, check=True)
        r = json.loads(out.stdout)
        print(f"{formula:<9} {r['n']:>7,} {r['built']:>8,} {r['seconds']:>8.2f} {r['plain']:>22,.0f} "
              f"{r['peak_mb']:>8.0f}  {note}")


if __name__ == "__main__":
    main()
