"""The examples in fluxfunnel.vertical's docstrings run and print what they say."""

import doctest

import fluxfunnel.vertical


def test_docstring_examples():
    result = doctest.testmod(fluxfunnel.vertical, optionflags=doctest.ELLIPSIS | doctest.NORMALIZE_WHITESPACE)
    assert result.attempted >= 8
    assert result.failed == 0
