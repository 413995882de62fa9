"""Every example in a docstring of the package runs and prints what it shows."""

import doctest
import importlib
import pkgutil
import warnings

import pytest

import mechfit

MODULES = sorted(m.name for m in pkgutil.walk_packages(mechfit.__path__, "mechfit.")
                 if not m.name.endswith("__main__"))


@pytest.mark.parametrize("name", MODULES)
def test_docstring_examples(name):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        module = importlib.import_module(name)
        result = doctest.testmod(module, report=True,
                                 optionflags=doctest.ELLIPSIS | doctest.NORMALIZE_WHITESPACE)
    assert result.failed == 0, f"{result.failed} of {result.attempted} examples failed in {name}"
