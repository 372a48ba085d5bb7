"""The command line sits on top: no library module imports ``eftsieve.cli``, and the
verbs hold no physics or statistics (they import no numerics)."""

from __future__ import annotations

import ast
from pathlib import Path

SRC = Path(__file__).parents[2] / "src" / "eftsieve"
#: ``python -m eftsieve``: an entry point like ``[project.scripts]``, not a library module
ENTRY_POINT = SRC / "__main__.py"


def _imports(path: Path) -> set[str]:
    """Every module a file imports, at module level or inside functions."""
    names: set[str] = set()
    for node in ast.walk(ast.parse(path.read_text(), str(path))):
        if isinstance(node, ast.Import):
            names.update(a.name for a in node.names)
        elif isinstance(node, ast.ImportFrom) and node.module:
            names.add(node.module)
            names.update(f"{node.module}.{a.name}" for a in node.names)
    return names


def test_no_library_module_imports_the_cli():
    offenders = []
    for path in SRC.rglob("*.py"):
        if "cli" in path.relative_to(SRC).parts[:1] or path == ENTRY_POINT:
            continue
        bad = sorted(n for n in _imports(path) if n == "eftsieve.cli"
                     or n.startswith("eftsieve.cli."))
        if bad:
            offenders.append(f"{path.relative_to(SRC)}: {', '.join(bad)}")
    assert offenders == []


def test_the_scan_sees_a_planted_import(tmp_path):
    planted = tmp_path / "planted.py"
    planted.write_text("def f():\n    from eftsieve.cli.main import main\n")
    assert "eftsieve.cli.main" in _imports(planted)


def test_the_verbs_import_no_numerics():
    numerics = ("numpy", "scipy", "cvxpy", "emcee", "pandas")
    for path in (SRC / "cli").glob("*.py"):
        used = {n.split(".")[0] for n in _imports(path)}
        assert not used & set(numerics), f"{path.name} imports {used & set(numerics)}"
