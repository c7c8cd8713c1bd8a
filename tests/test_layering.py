"""The architecture as a rule: imports flow one way between the layers, no import cycle between
modules, and no private name is used outside the module that defines it (common practice: an
AST check of the package's own source, as ../shared/design.md proposes)."""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

SRC = Path(__file__).resolve().parents[1] / "src" / "activolt"
TESTS = Path(__file__).resolve().parent

#: Layers bottom up; a module may import its own layer or lower ones only.
LAYERS = (
    ("activolt", "activolt.constants", "activolt.errors", "activolt.safe_text"),
    ("activolt.reference",),
    ("activolt.physics",),
    ("activolt.chemistry",),
    ("activolt.activity",),
    ("activolt.data",),
    ("activolt.fit",),
    ("activolt.procedures",),
    ("activolt.report",),
    ("activolt.io",),
    ("activolt.cli", "activolt.commands", "activolt.sample_data"),
)


def layer_of(module: str) -> int:
    best, found = -1, None
    for index, prefixes in enumerate(LAYERS):
        for prefix in prefixes:
            if (module == prefix or module.startswith(prefix + ".")) and len(prefix) > best:
                best, found = len(prefix), index
    assert found is not None, module
    return found


def module_name(path: Path) -> tuple[str, bool]:
    parts = list(path.relative_to(SRC.parent).with_suffix("").parts)
    if parts[-1] == "__init__":
        return ".".join(parts[:-1]), True
    return ".".join(parts), False


def imports(path: Path) -> list[tuple[str, list[str], int]]:
    """(imported module, names taken from it, line) for every import of the package's own
    modules, at any depth (function-level imports included)."""
    module, is_package = module_name(path)
    package = module.split(".") if is_package else module.split(".")[:-1]
    found = []
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.ImportFrom):
            if node.level:
                base = package[:len(package) - (node.level - 1)]
                target = ".".join(base + ([node.module] if node.module else []))
            else:
                target = node.module or ""
            if target.split(".")[0] != "activolt":
                continue
            names = [a.name for a in node.names]
            if node.module is None or (not node.module and node.level):
                found += [(f"{target}.{n}", [], node.lineno) for n in names]
            else:
                found.append((target, names, node.lineno))
        elif isinstance(node, ast.Import):
            found += [(a.name, [], node.lineno) for a in node.names
                      if a.name.split(".")[0] == "activolt"]
    return found


def modules() -> dict[str, Path]:
    return {module_name(p)[0]: p for p in SRC.rglob("*.py")}


def resolve(target: str, known: dict[str, Path]) -> str:
    """The module an import refers to (a name imported from a package may be a submodule)."""
    while target not in known and "." in target:
        target = target.rsplit(".", 1)[0]
    return target


def test_imports_flow_downward_only():
    known = modules()
    upward = []
    for module, path in known.items():
        for target, _, line in imports(path):
            target = resolve(target, known)
            if layer_of(target) > layer_of(module):
                upward.append(f"{module} (line {line}) imports {target}")
    assert not upward, "\n".join(upward)


def test_no_import_cycle():
    known = modules()
    graph = {m: {resolve(t, known) for t, _, _ in imports(p)} - {m} for m, p in known.items()}
    # A package's __init__ importing its own submodules is not a cycle of the code.
    for m in graph:
        graph[m] = {t for t in graph[m] if not (t.startswith(m + ".") and known[m].name
                                                == "__init__.py")}
    state: dict[str, int] = {}
    cycles = []

    def visit(node: str, stack: list[str]) -> None:
        state[node] = 1
        for nxt in sorted(graph.get(node, ())):
            if state.get(nxt) == 1:
                cycles.append(" → ".join([*stack[stack.index(nxt):], nxt]))
            elif nxt not in state:
                visit(nxt, [*stack, nxt])
        state[node] = 2

    for node in sorted(graph):
        if node not in state:
            visit(node, [node])
    assert not cycles, "\n".join(cycles)


@pytest.mark.parametrize("folder", [SRC, TESTS], ids=["package", "tests"])
def test_no_private_name_across_modules(folder):
    private = []
    for path in folder.rglob("*.py"):
        for target, names, line in imports(path) if folder == SRC else _test_imports(path):
            for name in names:
                if name.startswith("_") and not name.startswith("__"):
                    private.append(f"{path.name}:{line} imports {name} from {target}")
        aliases = _module_aliases(path)
        for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
            if (isinstance(node, ast.Attribute) and isinstance(node.value, ast.Name)
                    and node.value.id in aliases and node.attr.startswith("_")
                    and not node.attr.startswith("__")):
                private.append(f"{path.name}:{node.lineno} uses {node.value.id}.{node.attr}")
    assert not private, "\n".join(private)


def _test_imports(path: Path) -> list[tuple[str, list[str], int]]:
    found = []
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.ImportFrom) and (node.module or "").startswith("activolt"):
            found.append((node.module, [a.name for a in node.names], node.lineno))
    return found


def _module_aliases(path: Path) -> set[str]:
    """Names bound to modules of the package in this file."""
    known = modules()
    aliases = set()
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.Import):
            for a in node.names:
                if a.name.startswith("activolt"):
                    aliases.add(a.asname or a.name.split(".")[0])
        elif isinstance(node, ast.ImportFrom) and node.module and node.module.startswith(
                "activolt"):
            for a in node.names:
                if f"{node.module}.{a.name}" in known:
                    aliases.add(a.asname or a.name)
    return aliases


def test_the_check_finds_an_upward_import(tmp_path):
    """The check itself can fail: a module of the physics layer importing a procedure."""
    assert layer_of("activolt.physics.water") < layer_of("activolt.procedures.dilution")
    assert layer_of("activolt.activity.hueckel") == layer_of("activolt.activity")


def test_own_modules_imported_at_module_level():
    """A function-level import of one of the package's modules hides a dependency (or a cycle)
    from the reader; only the command line (start-up time) may defer its own modules."""
    deferred = []
    for module, path in modules().items():
        if layer_of(module) == len(LAYERS) - 1:
            continue
        tree = ast.parse(path.read_text(encoding="utf-8"))
        for function in ast.walk(tree):
            if not isinstance(function, (ast.FunctionDef, ast.AsyncFunctionDef)):
                continue
            for node in ast.walk(function):
                if isinstance(node, ast.ImportFrom) and (
                        node.level or (node.module or "").split(".")[0] == "activolt"):
                    deferred.append(f"{module} (line {node.lineno}) imports "
                                    f"{'.' * node.level}{node.module or ''} in a function")
                elif isinstance(node, ast.Import) and any(
                        a.name.split(".")[0] == "activolt" for a in node.names):
                    deferred.append(f"{module} (line {node.lineno}) imports activolt in a "
                                    "function")
    assert not deferred, "\n".join(deferred)
