"""The docstring examples of the objects, disk and demo modules run and print what they show."""

import doctest

import pytest
from fluxfunnel import demo, disk, objects


@pytest.mark.parametrize("module", [objects, disk, demo])
def test_docstring_examples(module):
    result = doctest.testmod(module, optionflags=doctest.ELLIPSIS)
    assert result.failed == 0
    assert module is demo or result.attempted > 5
