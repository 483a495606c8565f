"""Scoring throughput, and a fingerprint that shows a faster scoring gives the same results.

A few C8-C10 compounds of the fit part of the open data (``benchmarks/data/open-spectra.tsv``) are
observed from their own 1H lists, each once with 1H only and once with its 13C list too.  The first
``--count`` isomers of each formula (``rank.generate.IsomerStream``, a fixed order) are generated
first, outside the timing, then every candidate is scored by ``rank.shortlist.score`` in this process,
one core.  Prints candidates per second of this process's CPU time (steadier than wall time on a shared
machine; ``--repeat N`` keeps the least of N passes, each against a fresh copy of the peak list so that
what the matcher keeps per peak list is not reused across passes) per case and in all, with and
without 13C.

The fingerprint is every candidate's misfit as the ranking rounds it (6 decimals, ``None`` for a
candidate the tables cannot predict) and the top 10 with ties, as the ranking keeps them, with the
candidates' SMILES.  ``--save FILE`` writes it (JSON), ``--check FILE`` scores the file's candidates
(so that a change to the generator does not change what is compared), compares and exits 1 on any
difference, naming the first ones.
``--profile`` runs cProfile over the scoring and prints the heaviest entries, cumulative and own time.

Where the time goes (microseconds per candidate, timed stage by stage outside cProfile on 4 x 1,000
candidates; the shared machine's speed varies by about 30 %, so compare columns measured side by side;
the last column re-measures the code of the second one and today's code side by side, best of two
rounds of three passes, so its own "before" differs from the second column's figures):

    stage                                          before   after (issue 13,   side by side: first steps
                                                            first steps)       -> screen, memos
    RDKit molecule from SMILES                      120       109                50 ->  46
    1H perception (perceive.py: graph, classes)     222       213               161 -> 149
    1H shifts (SMARTS table rows, arithmetic)       318       303               197 -> 128
    1H multiplets and signals                       ~0-20     ~0-20              42 ->  33
    13C prediction                                 1616      1030               974 -> 746
      of which: sp3 arithmetic ~500 (SMARTS rows of carbon_sp3_substituent ~115), environment
      codes ~200 before (each atom re-described for every code), _Molecule and ranks ~100
    1H assignment (match, Hungarian), 1 normalisation 190       176                60 ->  33
    13C assignment (match_carbons)                   70        66                30 ->  29

The screen (``rank.predict.screen``) skips every table row whose pattern needs a bond the molecule
lacks (of the 1H rows whose elements a molecule has, about 30 % are still searched, nearly all of them
matching, except the heteroaromatic parents, whose recursive SMARTS are not screened) and matches
one-atom and one-bond rows from the atom and bond descriptions; the matcher keeps each signal's costs
and each signal list's match per peak list (5 to 60 % of the candidates of these formulas repeat an
earlier candidate's 1H signal list exactly).  The
RDKit work left per candidate (SMILES parsing, reading atoms and bonds, ring information, hydrogens added
for the canonical ranks, the remaining substructure searches) is about 150 microseconds of the 1H total.

cProfile, own time, heaviest (after): NamedTuple construction (Term, Site, Partner, Pairing),
perceive._graph (RDKit reads), shortlist.score (includes RDKit MolFromSmiles), carbon _Arithmetic.add
and _sp3, Screen.features, EnvironmentGraph.codes, shifts._first_matches, round(), carbon terms.
Throughput, best of 3 rounds of 2 CPU-time passes of 4 x 2,000 candidates side by side (the code of
the first steps against today's): 1H only 1,564 -> 2,080/s; 1H+13C 553 -> 691/s.  The cyclic garbage
collector costs about 15-20 % of a run (scoring with it disabled is that much faster).

Usage: python benchmarks/scoring_speed.py [--count N] [--cases ID,...] [--save FILE] [--check FILE]
       [--profile] [--only 1h|13c] [--repeat N]
"""

from __future__ import annotations

import argparse
import cProfile
import dataclasses
import itertools
import json
import math
import pstats
import sys
import time
from pathlib import Path

from rank.bench import read_cases
from rank.formula import parse_formula
from rank.generate import IsomerStream
from rank.shortlist import _Best, observe, score
from rank.spectra import read_carbon_peaks, read_peaks

DATA = Path(__file__).resolve().parent / "data" / "open-spectra.tsv"
CASES = (
    "WMPDAIZRQDCGFH-UHFFFAOYSA-N",  # C8H8O2, 3-methoxybenzaldehyde
    "WSWPCNMLEVZGSM-UHFFFAOYSA-N",  # C9H13NO, 2-(2-methoxyphenyl)ethylamine
    "XMGQYMWWDOXHJM-JTQLQIEISA-N",  # C10H16, limonene
    "SNICXCGAKADSCV-UHFFFAOYSA-N",  # C10H14N2, nicotine
)
TOP = 10


def candidates(formula: str, count: int) -> list[str]:
    """The first ``count`` isomers of the formula, in the generator's fixed order."""
    stream = IsomerStream(parse_formula(formula), ceiling=0)
    return [iso.smiles for iso in itertools.islice(iter(stream), count)]


def run(jobs, profiler: cProfile.Profile | None, repeat: int = 1) -> tuple[dict, dict[str, tuple[int, float]]]:
    """Score every job's candidates; the fingerprint and (candidates, seconds) per mode, the seconds the
    least of ``repeat`` passes."""
    fingerprint, times = {}, {"1h": (0, 0.0), "13c": (0, 0.0)}
    for key, mode, observation, smiles in jobs:
        if profiler is not None:
            profiler.enable()
        seconds = math.inf
        for _ in range(repeat):
            fresh = dataclasses.replace(observation, peaks=(*observation.peaks,))   # a new tuple
            start = time.process_time()
            results = [score(s, fresh) for s in smiles]
            seconds = min(seconds, time.process_time() - start)
        if profiler is not None:
            profiler.disable()
        best = _Best(TOP)
        for r in results:
            if r is not None:
                best.add(r)
        fingerprint[key] = {
            "misfits": [None if r is None else r.misfit for r in results],
            "top": [[s.smiles, s.misfit] for s in best.items()],
            "smiles": smiles,
        }
        n, t = times[mode]
        times[mode] = (n + len(smiles), t + seconds)
        print(f"{key:<40} {len(smiles):>6} candidates {seconds:7.2f} s CPU {len(smiles) / seconds:8.0f} /s",
              flush=True)
    return fingerprint, times


def compare(found: dict, saved: dict) -> list[str]:
    """The differences between this run's fingerprint and a saved one (which may hold more cases), as lines."""
    lines = []
    for key in sorted(found):
        if key not in saved:
            lines.append(f"{key}: not in the saved fingerprint")
            continue
        a, b = found[key], saved[key]
        if len(a["misfits"]) != len(b["misfits"]):
            lines.append(f"{key}: {len(a['misfits'])} candidates, saved {len(b['misfits'])}")
        wrong = [i for i, (x, y) in enumerate(zip(a["misfits"], b["misfits"])) if x != y]
        if wrong:
            i = wrong[0]
            lines.append(f"{key}: {len(wrong)} misfits differ, first candidate {i}: {a['misfits'][i]} "
                         f"against {b['misfits'][i]}")
        if a["top"] != b["top"]:
            lines.append(f"{key}: top {TOP} differs: {a['top'][:3]} ... against {b['top'][:3]} ...")
    return lines


def main(argv: list[str]) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--count", type=int, default=2000, help="candidates per formula (default 2000)")
    parser.add_argument("--cases", default=",".join(CASES), help="open-data ids, comma-separated")
    parser.add_argument("--only", choices=("1h", "13c"), help="score only with 1H, or only with 1H and 13C")
    parser.add_argument("--repeat", type=int, default=1, help="time the least of this many passes (default 1)")
    parser.add_argument("--save", help="write the fingerprint to this JSON file")
    parser.add_argument("--check", help="compare with a fingerprint saved by --save; exit 1 on a difference")
    parser.add_argument("--profile", action="store_true", help="print a cProfile summary of the scoring")
    parser.add_argument("--top", type=int, default=30, help="profile entries to print (default 30)")
    args = parser.parse_args(argv)

    wanted = args.cases.split(",")
    by_id = {c.id: c for c in read_cases(str(DATA), "all")}
    saved = json.loads(Path(args.check).read_text(encoding="utf-8")) if args.check else {}
    jobs = []
    for case_id in wanted:
        case = by_id[case_id]
        formula = parse_formula(case.formula)
        spectrum = read_peaks(case.peaks)
        generated = None
        for mode in ("1h", "13c"):
            if args.only and mode != args.only:
                continue
            key = f"{case.formula} {mode} {case_id[:14]}"
            smiles = saved.get(key, {}).get("smiles")
            if smiles is None:
                generated = generated or candidates(case.formula, args.count)
                smiles = generated
            carbon = read_carbon_peaks(case.carbon) if mode == "13c" else None
            observation, _ = observe(formula, spectrum, case.solvent, carbon=carbon)
            jobs.append((key, mode, observation, smiles))

    profiler = cProfile.Profile() if args.profile else None
    fingerprint, times = run(jobs, profiler, args.repeat)
    for mode, (n, t) in times.items():
        if n:
            print(f"{'all ' + mode:<40} {n:>6} candidates {t:7.2f} s CPU {n / t:8.0f} /s")
    if profiler is not None:
        stats = pstats.Stats(profiler, stream=sys.stdout).strip_dirs()
        stats.sort_stats("cumulative").print_stats(args.top)
        stats.sort_stats("tottime").print_stats(args.top)
    if args.save:
        Path(args.save).write_text(json.dumps(fingerprint), encoding="utf-8")
        print(f"fingerprint written to {args.save}")
    if args.check:
        differences = compare(fingerprint, saved)
        for line in differences:
            print(line)
        print(f"fingerprint {'differs from' if differences else 'identical to'} {args.check}")
        return 1 if differences else 0
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
