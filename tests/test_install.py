"""Packaging: the data folders install under names that shadow no module, and every data file is read
through importlib.resources, so an editable install and an installed wheel behave the same.

Building and installing a wheel takes minutes; `.ci/run` does that end to end. These checks read
pyproject.toml and the installed packages and take well under a second.
"""

from __future__ import annotations

import fnmatch
import importlib
from importlib.resources import as_file, files
from pathlib import Path

import pytest

try:
    import tomllib
except ImportError:  # Python 3.10
    tomllib = pytest.importorskip("tomli", reason="reading pyproject.toml on Python 3.10 needs tomli")

ROOT = Path(__file__).resolve().parent.parent
PYPROJECT = tomllib.loads((ROOT / "pyproject.toml").read_text(encoding="utf-8"))
SETUPTOOLS = PYPROJECT["tool"]["setuptools"]
PACKAGE_DATA: dict[str, list[str]] = SETUPTOOLS["package-data"]


def _source_folder(package: str) -> Path:
    """The folder of the source tree that pyproject's package-dir installs as ``package``."""
    mapping = SETUPTOOLS.get("package-dir", {})
    if package in mapping:
        return ROOT / mapping[package]
    return ROOT.joinpath(*package.split("."))


def _data_packages() -> list[str]:
    return [p for p in SETUPTOOLS["packages"] if p in PACKAGE_DATA]


def test_demo_command_module_is_not_shadowed_by_a_data_package():
    demo = importlib.import_module("rank.demo")
    assert Path(demo.__file__).name == "demo.py"
    assert callable(demo.run_demo)


@pytest.mark.parametrize("package", [p for p in SETUPTOOLS["packages"] if p != "rank"])
def test_data_package_name_is_taken_by_no_module(package):
    parent, _, leaf = package.rpartition(".")
    code = _source_folder(parent)
    assert not (code / f"{leaf}.py").exists(), f"{package} would hide {parent}/{leaf}.py once installed"
    assert _source_folder(package) == code / leaf or not (code / leaf).exists()


@pytest.mark.parametrize("package", _data_packages())
def test_every_packaged_data_file_reads_through_importlib_resources(package):
    folder = _source_folder(package)
    resources = files(package)
    for pattern in PACKAGE_DATA[package]:
        matched = sorted(folder.glob(pattern))
        assert matched, f"package-data pattern {pattern!r} of {package} matches no file in {folder}"
        for path in matched:
            assert resources.joinpath(path.name).read_bytes() == path.read_bytes(), path


@pytest.mark.parametrize("package", _data_packages())
def test_every_data_file_in_the_folder_is_packaged(package):
    folder = _source_folder(package)
    patterns = PACKAGE_DATA[package]
    left_out = [p.name for p in folder.iterdir()
                if p.is_file() and p.suffix != ".py"
                and not any(fnmatch.fnmatch(p.name, pat) for pat in patterns)]
    assert left_out == [], f"{folder.name}/ files a wheel would leave out: {left_out}"


def test_rule_tables_are_read_from_the_rules_package():
    from rank.tables import read_table, rules_dir, table_notes

    names = sorted(t.name for t in rules_dir().iterdir() if t.name.endswith(".tsv"))
    assert "valences.tsv" in names
    for name in names:
        table = name.removesuffix(".tsv")
        assert read_table(table), table
        assert table_notes(table), f"{name} names no source"


def test_demo_samples_and_peak_files_are_read_from_the_demo_package():
    from rank.demo import unknowns

    samples = unknowns()
    assert samples
    for u in samples:
        with as_file(u.peaks) as path:
            assert Path(path).is_file(), u.peaks


def test_license_files_named_in_pyproject_exist():
    named = PYPROJECT["project"]["license-files"]
    assert named
    for pattern in named:
        assert list(ROOT.glob(pattern)), pattern
