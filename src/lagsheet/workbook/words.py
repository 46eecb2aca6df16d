"""'Did you mean ...?': the one place that finds the names nearest a misspelt one and words the hint.

Every message that suggests a name (a header, a setting, a material, a shape) goes through
:func:`suggest`, or through :func:`nearest` and :func:`did_you_mean` when it words the
suggestion itself; the matching is :func:`difflib.get_close_matches` on folded text.
"""

from __future__ import annotations

import difflib
from collections.abc import Callable, Iterable

from ..io.table import fold


def nearest(word: str, choices: Iterable[str], *, n: int = 2, cutoff: float = 0.6) -> list[str]:
    """Up to ``n`` of ``choices`` closest to ``word`` (folded), best first; none under ``cutoff``."""
    return difflib.get_close_matches(fold(word), list(choices), n=n, cutoff=cutoff)


def did_you_mean(shown: Iterable[str], form: str = "; {}") -> str:
    """'did you mean A, B?' put in ``form`` ('; {}' gives '; did you mean A, B?'); '' for none.

    >>> did_you_mean(["'pipe'", "'riser'"])
    "; did you mean 'pipe', 'riser'?"
    >>> did_you_mean([])
    ''
    """
    shown = list(shown)
    return form.format(f"did you mean {', '.join(shown)}?") if shown else ""


def suggest(word: str, choices: Iterable[str], *, n: int = 2, cutoff: float = 0.6,
            show: Callable[[str], str] = repr, form: str = "; {}") -> str:
    """The hint for a misspelt ``word``: its :func:`nearest` choices, each as ``show`` gives it,
    in :func:`did_you_mean`'s words; '' when none is close.

    >>> suggest("pipw", ["pipe", "riser", "vessel"])
    "; did you mean 'pipe'?"
    >>> suggest("elbow", ["pipe", "riser"], form=" ({})")
    ''
    """
    return did_you_mean(map(show, nearest(word, choices, n=n, cutoff=cutoff)), form)
