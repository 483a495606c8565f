"""The examples in the package's docstrings run and give what they show."""

from __future__ import annotations

import doctest
import importlib
import pkgutil

import pytest

import rank

MODULES = sorted(m.name for m in pkgutil.walk_packages(rank.__path__, "rank.")
                 if m.name not in ("rank.__main__",) and not m.name.startswith(("rank.rules", "rank.demo_data")))


@pytest.mark.parametrize("name", MODULES)
def test_docstring_examples_run(name):
    module = importlib.import_module(name)
    failed, _ = doctest.testmod(module, optionflags=doctest.ELLIPSIS | doctest.NORMALIZE_WHITESPACE)
    assert failed == 0, f"{name}: {failed} docstring examples failed"
