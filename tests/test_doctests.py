"""The examples in the docstrings of the physics and economics modules, and in the README, run and give
what they say."""

from __future__ import annotations

import doctest
from pathlib import Path

import pytest

import lagsheet
from lagsheet.design import economics
from lagsheet.physics import correlations, radiation


@pytest.mark.parametrize("module", [correlations, radiation, economics])
def test_docstring_examples_hold(module):
    """Every doctest of the module passes, and there is at least one."""
    result = doctest.testmod(module)
    assert result.attempted > 0 and result.failed == 0


def test_readme_examples_hold():
    """The README's Python examples (lagsheet.size) run as doctests and pass, and there are some."""
    readme = Path(__file__).resolve().parents[1] / "README.md"
    result = doctest.testfile(str(readme), module_relative=False, globs={"lagsheet": lagsheet})
    assert result.attempted >= 5 and result.failed == 0
