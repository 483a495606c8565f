"""Read the chemistry tables in ``rules/``: tab-separated, ``#`` comment lines first.

The folder ``rules/`` is installed as the package ``rank.rules`` and read through
``importlib.resources``, so an editable install and an installed wheel read the
same files in the same way.

>>> rows = read_table("valences")
>>> rows[0]["element"], rows[0]["valence"]
('C', '4')
"""

from __future__ import annotations

import csv
from functools import cache
from importlib.resources import files
from typing import TYPE_CHECKING

__all__ = ["RULES_PACKAGE", "read_table", "rules_dir", "table_notes"]

if TYPE_CHECKING:
    from importlib.resources.abc import Traversable

RULES_PACKAGE = "rank.rules"


def rules_dir() -> Traversable:
    """The packaged ``rules/`` folder (``rank.rules``), readable with ``/``, ``read_text`` and ``iterdir``.

    Use ``importlib.resources.as_file`` where a real file system path is needed.
    """
    return files(RULES_PACKAGE)


def _table_text(name: str) -> str:
    return (rules_dir() / f"{name}.tsv").read_text(encoding="utf-8")


@cache
def _load(name: str) -> tuple[tuple[str, ...], tuple[tuple[str, ...], ...]]:
    lines = [ln for ln in _table_text(name).splitlines() if ln.strip()]
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
    return [ln.lstrip("# ").rstrip() for ln in _table_text(name).splitlines() if ln.startswith("#")]
