"""The examples in the docstrings of every polisect module run and give what they show.

They run on the installed package (the one the other tests import), one test per module.
"""

import doctest
import importlib
import pkgutil

import numpy as np
import pytest

import polisect

MODULES = sorted(m.name for m in pkgutil.walk_packages(polisect.__path__, "polisect."))


@pytest.mark.parametrize("name", MODULES)
def test_docstring_examples(name):
    module = importlib.import_module(name)
    finder = doctest.DocTestFinder(exclude_empty=True)
    runner = doctest.DocTestRunner(optionflags=doctest.ELLIPSIS | doctest.NORMALIZE_WHITESPACE)
    for test in finder.find(module, name, globs={"np": np, **vars(module)}):
        runner.run(test)
    result = runner.summarize(verbose=False)
    assert result.failed == 0, f"{result.failed} docstring example(s) of {name} failed"
