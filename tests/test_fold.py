"""Header and sheet-name matching folds text (io.table.fold): spaces of every kind folded to one,
the ends stripped, lower case. fold splits with str.split(); the definition it must keep is the
regular expression's, re.sub(r"\\s+", " ", text).strip().lower()."""

from __future__ import annotations

import re
import sys

from lagsheet.io.table import fold


def _by_regex(text: str) -> str:
    return re.sub(r"\s+", " ", text).strip().lower()


def test_str_split_and_the_regular_expression_take_the_same_characters_for_spaces():
    by_regex = {cp for cp in range(sys.maxunicode + 1) if re.fullmatch(r"\s", chr(cp))}
    by_str = {cp for cp in range(sys.maxunicode + 1) if chr(cp).isspace()}
    assert by_regex == by_str and len(by_str) > 20


def test_fold_is_the_regular_expression_s_folding():
    spaces = [chr(cp) for cp in range(sys.maxunicode + 1) if chr(cp).isspace()]
    for ch in [*spaces, "_", "-", "\u200b", "\ufeff", "İ"]:
        text = f"{ch}Tag{ch}{ch}Ø{ch} x"
        assert fold(text) == _by_regex(text), hex(ord(ch))
    assert fold("  Operating\u00a0 temperature\t[°C] ") == "operating temperature [°c]"
    assert fold(None) == "" and fold(12.5) == "12.5"
