"""The package's shape: no import cycles, no theory knowledge outside theories/.

The import graph counts every import, at module level, inside functions and under
``if TYPE_CHECKING`` (a cycle hidden behind a function-level import is still a cycle).
The name scan reads string literals and identifiers (not comments or docstrings) of
every module outside ``eftsieve/theories/``.
"""

from __future__ import annotations

import ast
import io
import tokenize
from pathlib import Path

import pytest

SRC = Path(__file__).resolve().parents[2] / "src" / "eftsieve"


def module_name(path: Path, root: Path = SRC) -> str:
    rel = path.relative_to(root.parent).with_suffix("")
    parts = list(rel.parts)
    if parts[-1] == "__init__":
        parts = parts[:-1]
    return ".".join(parts)


def import_graph(root: Path = SRC) -> dict[str, set[str]]:
    """Module -> the eftsieve modules it imports (any depth of the importing code)."""
    modules = {module_name(p, root): p for p in root.rglob("*.py")}
    graph: dict[str, set[str]] = {m: set() for m in modules}
    for mod, path in modules.items():
        for node in ast.walk(ast.parse(path.read_text(), str(path))):
            targets: list[str] = []
            if isinstance(node, ast.Import):
                targets = [a.name for a in node.names]
            elif isinstance(node, ast.ImportFrom) and node.module and node.level == 0:
                # "from pkg import name": name may be a submodule
                targets = [f"{node.module}.{a.name}" for a in node.names] + [node.module]
            for t in targets:
                while t and t not in modules:
                    t = t.rpartition(".")[0]
                if t.startswith("eftsieve") and t != mod and not mod.startswith(t + "."):
                    graph[mod].add(t)
    return graph


def find_cycle(graph: dict[str, set[str]]) -> list[str] | None:
    """One import cycle as a list of modules, or None."""
    state: dict[str, int] = {}
    stack: list[str] = []

    def visit(m: str) -> list[str] | None:
        state[m] = 1
        stack.append(m)
        for n in sorted(graph.get(m, ())):
            if state.get(n) == 1:
                return stack[stack.index(n):] + [n]
            if n not in state:
                found = visit(n)
                if found:
                    return found
        state[m] = 2
        stack.pop()
        return None

    for m in sorted(graph):
        if m not in state:
            found = visit(m)
            if found:
                return found
    return None


def test_no_import_cycles():
    cycle = find_cycle(import_graph())
    assert cycle is None, " -> ".join(cycle or [])


def test_the_cycle_finder_finds_a_planted_cycle(tmp_path):
    pkg = tmp_path / "eftsieve"
    (pkg / "sub").mkdir(parents=True)
    (pkg / "__init__.py").write_text("")
    (pkg / "sub" / "__init__.py").write_text("")
    (pkg / "a.py").write_text("def f():\n    from eftsieve.sub import b\n")
    (pkg / "sub" / "b.py").write_text("from eftsieve import a\n")
    assert find_cycle(import_graph(pkg)) is not None
    (pkg / "sub" / "b.py").write_text("import numpy\n")
    assert find_cycle(import_graph(pkg)) is None


def test_no_library_module_imports_the_command_line():
    graph = import_graph()
    # eftsieve.__main__ (``python -m eftsieve``) is an entry point like the console
    # script, not a library module: it only calls eftsieve.cli.main.main
    bad = sorted(m for m, deps in graph.items()
                 if not m.startswith("eftsieve.cli") and m != "eftsieve.__main__"
                 and any(d.startswith("eftsieve.cli") for d in deps))
    assert bad == []


def theory_words() -> set[str]:
    """Every registered theory name (and its module spelling) and every convention name."""
    from eftsieve.theories import REGISTRY, get_theory

    words = set()
    for name in REGISTRY:
        words |= {name, name.replace("-", "_")}
        words |= set(get_theory(name).conventions)
    return words


def code_words(path: Path) -> set[str]:
    """String literals (docstrings excluded) and identifiers of a module."""
    text = path.read_text()
    docstrings = set()
    for node in ast.walk(ast.parse(text)):
        if isinstance(node, (ast.Module, ast.ClassDef, ast.FunctionDef, ast.AsyncFunctionDef)):
            doc = ast.get_docstring(node, clean=False)
            if doc is not None and node.body:
                docstrings.add(node.body[0].lineno)
    out = set()
    for tok in tokenize.generate_tokens(io.StringIO(text).readline):
        if tok.type == tokenize.NAME:
            out.add(tok.string)
        elif tok.type == tokenize.STRING and tok.start[0] not in docstrings:
            out |= {w.strip(".,:;()[]{}'\"") for w in tok.string.split()}
    return out


def names_outside_theories(root: Path = SRC) -> list[str]:
    words = theory_words()
    hits = []
    for path in sorted(root.rglob("*.py")):
        rel = path.relative_to(root)
        if rel.parts[0] == "theories":
            continue
        found = sorted(words & code_words(path))
        if found:
            hits.append(f"{rel}: {', '.join(found)}")
    return hits


def test_no_theory_or_convention_name_outside_theories():
    assert names_outside_theories() == []


def test_the_name_scan_finds_a_planted_theory_name(tmp_path):
    (tmp_path / "check").mkdir()
    (tmp_path / "check" / "x.py").write_text('"""Docstrings may mention chpt-su2."""\n'
                                             'PAIR = ("chpt-su3", "other")\n')
    assert names_outside_theories(tmp_path) == ["check/x.py: chpt-su3"]
    (tmp_path / "check" / "x.py").write_text('"""Docstrings may mention chpt-su2."""\n')
    assert names_outside_theories(tmp_path) == []


@pytest.mark.parametrize("theory", ["chpt-su2", "chpt-su3", "scalar-eft"])
def test_each_theory_is_one_folder(theory):
    folder = SRC / "theories" / theory.replace("-", "_")
    assert (folder / "__init__.py").is_file() and (folder / "theory.py").is_file()
