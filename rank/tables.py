"""Read the chemistry tables in ``rules/``: tab-separated, ``#`` comment lines first.

>>> rows = read_table("valences")
>>> rows[0]["element"], rows[0]["valence"]
('C', '4')
"""

from __future__ import annotations

import csv
from functools import cache
from pathlib import Path

_SOURCE_RULES = Path(__file__).resolve().parent.parent / "rules"
_PACKAGED_RULES = Path(__file__).resolve().parent / "rules"


def rules_dir() -> Path:
    """The folder holding the tables: the source tree's ``rules/`` or the installed copy."""
    return _SOURCE_RULES if _SOURCE_RULES.is_dir() else _PACKAGED_RULES


@cache
def _load(name: str) -> tuple[tuple[str, ...], tuple[tuple[str, ...], ...]]:
    path = rules_dir() / f"{name}.tsv"
    lines = [ln for ln in path.read_text(encoding="utf-8").splitlines() if ln.strip()]
    body = [ln for ln in lines if not ln.startswith("#")]
    rows = list(csv.reader(body, delimiter="\t", quoting=csv.QUOTE_NONE))
    header, data = tuple(rows[0]), rows[1:]
    for r in data:
        if len(r) > len(header):
            raise ValueError(f"rules/{name}.tsv: row {r[0]!r} has {len(r)} fields, the header {len(header)}")
    fixed = tuple(tuple(r + [""] * (len(header) - len(r))) for r in data)
    return header, fixed


def read_table(name: str) -> list[dict[str, str]]:
    """Rows of ``rules/<name>.tsv`` as dictionaries keyed by the header line."""
    header, data = _load(name)
    return [dict(zip(header, row)) for row in data]


def table_notes(name: str) -> list[str]:
    """The comment lines heading a table (its sources)."""
    path = rules_dir() / f"{name}.tsv"
    return [
        ln.lstrip("# ").rstrip()
        for ln in path.read_text(encoding="utf-8").splitlines()
        if ln.startswith("#")
    ]
