"""No function in src/lagsheet is longer than 60 lines of code.

A function's length is counted from its ``def`` line to its last line, leaving out its
docstring, blank lines and lines holding only a comment (a nested function counts in its
parent too). Functions in files being redesigned are allowlisted in PENDING with their
current length; the list may only shrink: an entry that is no longer over the limit, or
no longer exists, fails too, so that it is taken off.
"""

from __future__ import annotations

import ast
import io
import tokenize
from pathlib import Path

import lagsheet

LIMIT = 60
SRC = Path(lagsheet.__file__).parent

# Functions over the limit in files being rewritten by the sizing-layer redesign (design/select.py,
# design/process.py, design/lines.py, outputs/*): their current length. This must be empty when
# the redesign lands; never add to it.
PENDING: dict[str, int] = {}

_NOT_CODE = {tokenize.COMMENT, tokenize.NL, tokenize.NEWLINE, tokenize.INDENT, tokenize.DEDENT,
             tokenize.ENCODING, tokenize.ENDMARKER}


def _code_lines(text: str) -> set[int]:
    """Line numbers holding code: some token that is no comment or line break (a token over
    several lines, such as a long string, marks each of them)."""
    lines: set[int] = set()
    for tok in tokenize.generate_tokens(io.StringIO(text).readline):
        if tok.type not in _NOT_CODE:
            lines.update(range(tok.start[0], tok.end[0] + 1))
    return lines


def function_lengths(text: str, module: str = "") -> dict[str, int]:
    """'module.Class.function' -> lines of code of every function and method in ``text``."""
    code = _code_lines(text)
    out: dict[str, int] = {}

    def visit(node: ast.AST, prefix: str) -> None:
        for child in ast.iter_child_nodes(node):
            if isinstance(child, (ast.FunctionDef, ast.AsyncFunctionDef)):
                doc: set[int] = set()
                first = child.body[0]
                if isinstance(first, ast.Expr) and isinstance(first.value, ast.Constant) \
                        and isinstance(first.value.value, str):
                    doc = set(range(first.lineno, first.end_lineno + 1))
                span = set(range(child.lineno, child.end_lineno + 1))
                out[f"{prefix}{child.name}"] = len((span & code) - doc)
                visit(child, f"{prefix}{child.name}.")
            elif isinstance(child, ast.ClassDef):
                visit(child, f"{prefix}{child.name}.")
            else:
                visit(child, prefix)

    visit(ast.parse(text), f"{module}." if module else "")
    return out


def _all_lengths(root: Path = SRC) -> dict[str, int]:
    out: dict[str, int] = {}
    for path in sorted(root.rglob("*.py")):
        module = ".".join(path.relative_to(root).with_suffix("").parts)
        out.update(function_lengths(path.read_text(encoding="utf-8"), module))
    return out


def _too_long(lengths: dict[str, int]) -> str:
    """'' when every function not in PENDING is within the limit; else the sentence naming them."""
    long = {name: n for name, n in lengths.items() if n > LIMIT and name not in PENDING}
    named = ", ".join(f"{k} ({v})" for k, v in sorted(long.items(), key=lambda kv: -kv[1]))
    return f"split these functions (lines of code > {LIMIT}): {named}" if long else ""


def test_no_function_is_longer_than_the_limit():
    message = _too_long(_all_lengths())
    assert not message, message


def test_the_pending_list_only_shrinks():
    lengths = _all_lengths()
    gone = sorted(name for name in PENDING if name not in lengths)
    short = sorted(name for name in PENDING if name in lengths and lengths[name] <= LIMIT)
    grown = sorted(f"{name} ({lengths[name]} > {PENDING[name]})" for name in PENDING
                   if name in lengths and lengths[name] > PENDING[name])
    assert not gone, f"no longer exist: take them off PENDING: {', '.join(gone)}"
    assert not short, f"now within {LIMIT} lines: take them off PENDING: {', '.join(short)}"
    assert not grown, f"grew past their allowance in PENDING: {', '.join(grown)}"


def _planted(statements: int) -> str:
    body = "".join(f"    x{k} = {k}\n    # a comment\n\n" for k in range(statements - 2))
    return ('def planted(a):\n    """A docstring\n\n    over several lines."""\n'
            f"{body}    return a\n\n\nclass K:\n    def short(self):\n        return 1\n")


def test_the_count_leaves_out_docstring_blanks_and_comments():
    # def line + (statements - 2) assignments + return = statements lines of code
    assert function_lengths(_planted(LIMIT), "m") == {"m.planted": LIMIT, "m.K.short": 2}
    text = 'def f():\n    s = """\n\n    # not a comment\n    """\n    return s\n'
    assert function_lengths(text) == {"f": 6}  # a long string's lines are code, blank or not


def test_a_planted_long_function_is_named(tmp_path):
    (tmp_path / "sub").mkdir()
    (tmp_path / "sub" / "planted.py").write_text(_planted(LIMIT + 1), encoding="utf-8")
    (tmp_path / "fits.py").write_text(_planted(LIMIT), encoding="utf-8")
    message = _too_long(_all_lengths(tmp_path))
    assert message == f"split these functions (lines of code > {LIMIT}): sub.planted.planted ({LIMIT + 1})"
