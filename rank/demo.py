"""The demo scenario: four invented unknowns, each identified end to end.

The samples, their formulas and peak files are in ``demo/`` (see its README),
installed as the package ``rank.demo_data`` and read through ``importlib.resources``.
Reports go to a new folder; an existing folder is never written into.
"""

from __future__ import annotations

import csv
from dataclasses import dataclass
from importlib.resources import as_file, files
from pathlib import Path
from typing import TYPE_CHECKING

from .report import report_html, terminal_text, write_whole_file
from .shortlist import Identifier, Shortlist

__all__ = ["DEMO_PACKAGE", "Unknown", "demo_dir", "fresh_folder", "run_demo", "unknowns"]

if TYPE_CHECKING:
    from importlib.resources.abc import Traversable

DEMO_PACKAGE = "rank.demo_data"


@dataclass(frozen=True)
class Unknown:
    sample: str
    formula: str
    peaks: Traversable
    carbon: Traversable | None
    note: str


def demo_dir() -> Traversable:
    """The packaged ``demo/`` folder (``rank.demo_data``)."""
    return files(DEMO_PACKAGE)


def unknowns() -> list[Unknown]:
    """The demo's samples from ``demo/unknowns.tsv``."""
    folder = demo_dir()
    lines = [ln for ln in (folder / "unknowns.tsv").read_text(encoding="utf-8").splitlines()
             if ln.strip() and not ln.startswith("#")]
    return [Unknown(r["sample"], r["formula"], folder / r["peaks"], folder / r["carbon"] if r["carbon"] else None,
                    r["note"])
            for r in csv.DictReader(lines, delimiter="\t")]


def fresh_folder(base: Path) -> Path:
    """``base``, or ``base-2``, ``base-3``, ... : the first name not yet taken."""
    candidate, n = base, 1
    while candidate.exists():
        n += 1
        candidate = base.with_name(f"{base.name}-{n}")
    return candidate


def run_demo(out: Path, top: int = 5, workers: int = 1, echo=print) -> list[tuple[Unknown, Shortlist, Path]]:
    """Identify every demo unknown, print its short list and write its HTML report into ``out``."""
    folder = fresh_folder(out)
    folder.mkdir(parents=True)
    done = []
    for u in unknowns():
        carbon = f", 13C from {u.carbon.name}" if u.carbon is not None else ""
        echo(f"=== {u.sample}: {u.note} ({u.formula}, peaks from {u.peaks.name}{carbon}) ===")
        with as_file(u.peaks) as peaks_file, as_file(u.carbon or u.peaks) as carbon_file:
            result = Identifier(top=top, workers=workers).identify(
                u.formula, str(peaks_file), carbon=str(carbon_file) if u.carbon is not None else None)
        echo(terminal_text(result))
        path = folder / f"{u.sample}.html"
        write_whole_file(str(path), report_html(result, title=f"{u.sample}: {u.note}"))
        done.append((u, result, path))
    echo(f"reports written to {folder}/")
    return done
