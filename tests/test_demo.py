"""The demo: every unknown of demo/unknowns.tsv identified end to end, a report each, nothing overwritten."""

from __future__ import annotations

import contextlib
import csv
import io
import re
from pathlib import Path

import pytest
from rdkit import Chem

from rank.cli import main
from rank.shortlist import CAUTION

DEMO = Path(__file__).resolve().parent.parent / "demo"

# The compounds whose CDCl3 spectra the demo's peak lists reproduce (handbook spectra, from memory).
TRUE_COMPOUND = {
    "LEM-26-0417": "CC(=O)c1ccc(C)cc1",        # 4-methylacetophenone
    "LEM-26-0422": "CCCCOCCO",                 # 2-butoxyethanol
    "LEM-26-0429": "COC(C)(C)C",               # tert-butyl methyl ether
    "LEM-26-0431": "Cc1ccc([N+](=O)[O-])cc1",  # 4-nitrotoluene
}


def _samples() -> list[dict]:
    lines = [ln for ln in (DEMO / "unknowns.tsv").read_text(encoding="utf-8").splitlines()
             if ln.strip() and not ln.startswith("#")]
    return list(csv.DictReader(lines, delimiter="\t"))


def _run(out: Path) -> tuple[int, str]:
    buffer = io.StringIO()
    with contextlib.redirect_stdout(buffer):
        code = main(["demo", "--out", str(out)])
    return code, buffer.getvalue()


def _blocks(stdout: str) -> dict[str, str]:
    """The printed output of each sample, from its '=== sample' line to the next."""
    parts = re.split(r"^=== (\S+): .*===$", stdout, flags=re.MULTILINE)
    return dict(zip(parts[1::2], parts[2::2], strict=True))


def _first_ranked(block: str) -> str:
    return re.search(r"^\s+1=?\s+(\S+)\s", block, flags=re.MULTILINE).group(1)


@pytest.fixture(scope="module")
def first_run(tmp_path_factory):
    out = tmp_path_factory.mktemp("demo") / "reports"
    code, stdout = _run(out)
    return out, code, stdout


def test_demo_exits_zero_and_names_its_folder(first_run):
    out, code, stdout = first_run
    assert code == 0
    assert f"reports written to {out}/" in stdout


def test_demo_writes_one_report_per_sample(first_run):
    out, _, _ = first_run
    samples = _samples()
    assert 3 <= len(samples) <= 5
    assert {s["sample"] for s in samples} == set(TRUE_COMPOUND)
    assert sorted(p.name for p in out.iterdir()) == sorted(f"{s['sample']}.html" for s in samples)
    for s in samples:
        html = (out / f"{s['sample']}.html").read_text(encoding="utf-8")
        assert html.startswith("<!DOCTYPE html>")
        assert s["sample"] in html and s["formula"] in html
        assert "<script" not in html.lower()


def test_demo_prints_each_short_list_and_the_caution(first_run):
    _, _, stdout = first_run
    blocks = _blocks(stdout)
    assert list(blocks) == [s["sample"] for s in _samples()]
    for sample, block in blocks.items():
        assert f"CAUTION: {CAUTION}" in block, sample
        assert re.search(r"^\s+rank\s+SMILES\s+misfit", block, flags=re.MULTILINE), sample
        assert _first_ranked(block), sample


@pytest.mark.parametrize("sample", sorted(TRUE_COMPOUND))
def test_demo_sample_true_compound_ranks_first(first_run, sample):
    _, _, stdout = first_run
    best = _first_ranked(_blocks(stdout)[sample])
    assert Chem.CanonSmiles(best) == Chem.CanonSmiles(TRUE_COMPOUND[sample])


def test_second_run_writes_a_new_folder_and_leaves_the_first_untouched(first_run):
    out, _, _ = first_run
    before = {p.name: (p.read_bytes(), p.stat().st_mtime_ns) for p in out.iterdir()}
    code, stdout = _run(out)
    second = out.with_name(f"{out.name}-2")
    assert code == 0
    assert f"reports written to {second}/" in stdout
    assert sorted(p.name for p in second.iterdir()) == sorted(before)
    after = {p.name: (p.read_bytes(), p.stat().st_mtime_ns) for p in out.iterdir()}
    assert after == before
