"""The package tree: no import circles, modules of a readable size, each subpackage says what it holds.

Imports are read from the source (every ``import`` and ``from ... import``,
including those inside functions, which still make a circle at run time), not
by importing, so a circle is found even where a lazy import hides it.
"""
import ast
import pathlib

import pytest

ROOT = pathlib.Path(__file__).resolve().parents[1]
PACKAGES = ("audit", "rules")
MAX_LINES = 400  # "no module over about 400 lines": the layout's target, kept exact here


def module_files() -> dict[str, pathlib.Path]:
    out = {}
    for pkg in PACKAGES:
        for path in (ROOT / pkg).rglob("*.py"):
            parts = list(path.relative_to(ROOT).with_suffix("").parts)
            if parts[-1] == "__init__":
                parts = parts[:-1]
            out[".".join(parts)] = path
    return out


def imports_of(name: str, path: pathlib.Path, known: set[str]) -> set[str]:
    """The modules of ``known`` that ``name`` imports, anywhere in its source."""
    is_package = path.name == "__init__.py"
    package = name if is_package else name.rpartition(".")[0]
    found = set()
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.Import):
            targets = [a.name for a in node.names]
        elif isinstance(node, ast.ImportFrom):
            base = node.module or ""
            if node.level:
                anchor = package.split(".")
                anchor = anchor[:len(anchor) - (node.level - 1)]
                base = ".".join(anchor + ([base] if base else []))
            # "from pkg import mod" imports the module pkg.mod where there is one, else names of pkg
            targets = [f"{base}.{a.name}" if f"{base}.{a.name}" in known else base for a in node.names]
        else:
            continue
        found |= {t for t in targets if t in known and t != name}
    return found


def cycles(graph: dict[str, set[str]]) -> list[list[str]]:
    """Strongly connected components with more than one module (Tarjan)."""
    index, low, stack, on, out = {}, {}, [], set(), []
    counter = [0]

    def visit(v):
        index[v] = low[v] = counter[0]
        counter[0] += 1
        stack.append(v)
        on.add(v)
        for w in graph[v]:
            if w not in index:
                visit(w)
                low[v] = min(low[v], low[w])
            elif w in on:
                low[v] = min(low[v], index[w])
        if low[v] == index[v]:
            comp = []
            while True:
                w = stack.pop()
                on.discard(w)
                comp.append(w)
                if w == v:
                    break
            if len(comp) > 1:
                out.append(sorted(comp))

    for v in graph:
        if v not in index:
            visit(v)
    return out


def import_graph() -> dict[str, set[str]]:
    files = module_files()
    return {name: imports_of(name, path, set(files)) for name, path in files.items()}


def test_import_graph_has_no_circle():
    graph = import_graph()
    assert len(graph) > 40  # the walk found the modules (a broken walk must not pass by finding none)
    assert cycles(graph) == []


def test_cycles_finds_a_planted_circle():
    # the checker itself: a circle through a lazy import must be seen
    graph = {"a": {"b"}, "b": {"c"}, "c": {"a"}, "d": {"a"}}
    assert cycles(graph) == [["a", "b", "c"]]


def test_imports_of_resolves_relative_and_lazy_imports(tmp_path):
    pkg = tmp_path / "rules"
    pkg.mkdir()
    src = pkg / "x.py"
    src.write_text("from .base import Rule\n\ndef f():\n    from . import severity\n    import audit.iec.sizing\n")
    known = {"rules.base", "rules.severity", "audit.iec.sizing", "rules"}
    assert imports_of("rules.x", src, known) == {"rules.base", "rules.severity", "audit.iec.sizing"}


@pytest.mark.parametrize("name", sorted(module_files()))
def test_module_size_is_readable(name):
    lines = module_files()[name].read_text(encoding="utf-8").count("\n")
    assert lines <= MAX_LINES, f"{name} has {lines} lines; split it by what its parts do"


def test_iec_and_fluid_import_nothing_above_them():
    # the physics knows nothing of tables, files, rules or reports (each __init__ says so)
    graph = import_graph()
    for name, deps in graph.items():
        if name.startswith("audit.iec"):
            assert all(d.startswith("audit.iec") for d in deps), (name, deps)
        if name.startswith("audit.fluid"):
            assert all(d.startswith("audit.fluid") for d in deps), (name, deps)


def test_each_subpackage_says_what_it_may_import():
    for init in (ROOT / "audit").glob("*/__init__.py"):
        doc = ast.get_docstring(ast.parse(init.read_text(encoding="utf-8"))) or ""
        assert "May import" in doc, init
