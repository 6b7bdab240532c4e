"""Every docstring example of the package runs and shows what it says.

The examples are collected from the *installed* package, module by module, so the same
test works whether featuresift is installed in place or into site-packages.
"""

from __future__ import annotations

import doctest
import importlib
import pkgutil

import pytest

import featuresift

MODULES = sorted(
    m.name for m in pkgutil.walk_packages(featuresift.__path__, "featuresift.")
    if m.name != "featuresift.__main__"
)


@pytest.mark.parametrize("name", ["featuresift", *MODULES])
def test_docstring_examples(name):
    module = importlib.import_module(name)
    finder = doctest.DocTestFinder(exclude_empty=True)
    runner = doctest.DocTestRunner(optionflags=doctest.ELLIPSIS)
    for test in finder.find(module, name):
        runner.run(test)
    result = runner.summarize(verbose=False)
    assert result.failed == 0, f"{result.failed} docstring example(s) failed in {name}"


def test_examples_are_found():
    # Guard against the collection silently finding nothing (e.g. a renamed package).
    finder = doctest.DocTestFinder(exclude_empty=True)
    total = sum(
        len(t.examples)
        for name in MODULES
        for t in finder.find(importlib.import_module(name), name)
    )
    assert total > 300
