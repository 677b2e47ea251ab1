"""The examples in tracemill's docstrings run and print what they show (doctest)."""

from __future__ import annotations

import doctest
import importlib
import pkgutil
import warnings

import pytest

import tracemill

MODULES = sorted(
    m.name for m in pkgutil.walk_packages(tracemill.__path__, prefix="tracemill.")
    if m.name not in ("tracemill.__main__",)
)


@pytest.mark.parametrize("name", MODULES)
def test_docstring_examples(name: str) -> None:
    module = importlib.import_module(name)
    finder = doctest.DocTestFinder(exclude_empty=True)
    runner = doctest.DocTestRunner(
        optionflags=doctest.ELLIPSIS | doctest.NORMALIZE_WHITESPACE)
    tests = [t for t in finder.find(module, name, module=module) if t.examples]
    with warnings.catch_warnings():
        # Examples may show data-quality warnings on purpose; they are not failures here.
        warnings.simplefilter("ignore", tracemill.DataQualityWarning)
        for t in tests:
            runner.run(t)
    result = runner.summarize(verbose=False)
    assert result.failed == 0, f"{result.failed} docstring example(s) failed in {name}"


def test_public_classes_have_examples() -> None:
    missing = [n for n in ("EventLog", "TreeClassifier", "InductiveDiscovery")
               if ">>>" not in (getattr(tracemill, n).__doc__ or "")]
    assert not missing, missing
