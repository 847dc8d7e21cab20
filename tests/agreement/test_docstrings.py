"""The examples in the public docstrings run and give what they print."""

import doctest
import importlib

import pytest

MODULES = ["alpha", "bleu", "captions", "chrf", "interpret", "labels", "proportion", "rouge",
           "truth"]


@pytest.mark.parametrize("name", MODULES)
def test_docstring_examples(name):
    module = importlib.import_module(f"clipscribe.agreement.{name}")
    result = doctest.testmod(module, optionflags=doctest.ELLIPSIS)
    assert result.failed == 0 and result.attempted > 0
