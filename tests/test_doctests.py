"""The examples in the docstrings of the physics and economics modules run and give what they say."""

from __future__ import annotations

import doctest

import pytest

from lagsheet.design import economics
from lagsheet.physics import correlations, radiation


@pytest.mark.parametrize("module", [correlations, radiation, economics])
def test_docstring_examples_hold(module):
    """Every doctest of the module passes, and there is at least one."""
    result = doctest.testmod(module)
    assert result.attempted > 0 and result.failed == 0
