"""The package's imports go one way: physics and io <- workbook <- design <- outputs <- commands <- cli.

Read from the source with ``ast`` (imports inside functions count too), so a shortcut taken
anywhere, even in a rarely run branch, fails here. ``errors`` and the package's own
``__init__`` sit below everything.
"""

from __future__ import annotations

import ast
from pathlib import Path

import lagsheet

SRC = Path(lagsheet.__file__).parent
# a layer may import its own and lower layers only
RANK = {"errors": 0, "physics": 1, "io": 1, "data": 1, "workbook": 2, "design": 3, "outputs": 4,
        "commands": 5, "cli": 6, "__main__": 7, "api": 6}


def _layer(module: str) -> str:
    """'lagsheet.design.select' -> 'design'; 'lagsheet' (its __init__) -> '' (below everything)."""
    parts = module.split(".")
    return parts[1] if len(parts) > 1 else ""


def _imports(path: Path, root: Path) -> set[str]:
    """The lagsheet modules ``path`` (under the package folder ``root``) imports, as absolute names."""
    here = list(path.relative_to(root.parent).parts[:-1])  # its package
    out = set()
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.ImportFrom):
            if node.level:
                base = here[:len(here) - (node.level - 1)]
                target = ".".join(base + ([node.module] if node.module else []))
            else:
                target = node.module or ""
            if target.startswith("lagsheet"):
                if node.module is None or target in ("lagsheet", *(f"lagsheet.{k}" for k in RANK)):
                    out |= {f"{target}.{a.name}" for a in node.names}
                else:
                    out.add(target)
        elif isinstance(node, ast.Import):
            out |= {a.name for a in node.names if a.name.startswith("lagsheet")}
    return out


def _violations(root: Path = SRC) -> list[str]:
    bad = []
    for path in sorted(root.rglob("*.py")):
        module = ".".join(path.relative_to(root.parent).with_suffix("").parts).removesuffix(".__init__")
        mine = _layer(module)
        if mine not in RANK:
            continue
        for target in _imports(path, root):
            theirs = _layer(target)
            if theirs and theirs in RANK and RANK[theirs] > RANK[mine]:
                bad.append(f"{module} imports {target}")
    return bad


def test_imports_go_one_way():
    assert _violations() == []


def test_every_module_has_a_layer():
    """A new top-level module or folder must be given its place in RANK."""
    tops = {p.stem if p.is_file() else p.name for p in SRC.iterdir()
            if (p.suffix == ".py" or (p.is_dir() and (p / "__init__.py").exists()))}
    assert tops - set(RANK) - {"__init__", "templates_data"} == set()


def test_the_check_catches_an_upward_import(tmp_path):
    """A physics module importing the selection, or a workbook module importing a command, is reported."""
    root = tmp_path / "lagsheet"
    for folder, text in (("physics", "from ..design import select\n"),
                         ("workbook", "import lagsheet.commands.fill\nfrom ..io import table\n")):
        (root / folder).mkdir(parents=True)
        (root / folder / "probe.py").write_text(text, encoding="utf-8")
    assert sorted(_violations(root)) == ["lagsheet.physics.probe imports lagsheet.design.select",
                                         "lagsheet.workbook.probe imports lagsheet.commands.fill"]
