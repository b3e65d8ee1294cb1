"""The package's import direction: each layer imports only the layers before it.

leaves < calc < route, forecast, airframes < hazards < outputs < runs < entry points
(the entry points may call each other; nothing else imports them). No module import
circles either, within a layer or across.
Imports inside functions count too (only ``if TYPE_CHECKING:`` blocks are exempt),
and the package face ``icing/__init__.py`` (lazy re-exports) is exempt.
"""

import ast
from pathlib import Path

import pytest

PACKAGE = Path(__file__).resolve().parents[1] / "icing"

#: Rank of each top-level unit of the package; a unit imports only lower ranks
#: (and itself). Units of one rank do not import each other.
RANKS = {
    "errors": 0,
    "codes": 0,
    "constants": 0,
    "caution": 0,
    "_version": 0,
    "untrusted": 0,
    "cachedir": 0,
    "calc": 1,
    "route": 2,
    "forecast": 2,
    "airframes": 2,
    "hazards": 3,
    "outputs": 4,
    "runs": 5,
    "cli": 6,
    "demo": 6,
    "__main__": 6,
    "service": 6,
}
ENTRY_POINTS = {"cli", "demo", "__main__", "service"}


def _unit(path: Path) -> str:
    rel = path.relative_to(PACKAGE)
    return rel.parts[0].removesuffix(".py")


def _imported_units(path: Path):
    """Yield (line, unit) for every import of an ``icing`` unit in the file."""
    tree = ast.parse(path.read_text(encoding="utf-8"))
    package_parts = path.relative_to(PACKAGE.parent).with_suffix("").parts
    if path.name == "__init__.py":
        package_parts = package_parts[:-1]
    else:
        package_parts = package_parts[:-1]

    def visit(node, type_checking=False):
        for child in ast.iter_child_nodes(node):
            tc = type_checking or (
                isinstance(child, ast.If) and "TYPE_CHECKING" in ast.unparse(child.test)
            )
            if not tc and isinstance(child, ast.Import):
                for alias in child.names:
                    parts = alias.name.split(".")
                    if parts[0] == "icing" and len(parts) > 1:
                        yield child.lineno, parts[1]
            elif not tc and isinstance(child, ast.ImportFrom):
                if child.level:
                    base = list(package_parts[: len(package_parts) - child.level + 1])
                    parts = base + (child.module.split(".") if child.module else [])
                else:
                    parts = (child.module or "").split(".")
                if parts[0] != "icing":
                    continue
                if len(parts) > 1:
                    yield child.lineno, parts[1]
                else:  # from icing import codes, calc
                    for alias in child.names:
                        yield child.lineno, alias.name
            yield from visit(child, tc)

    yield from visit(tree)


def _files():
    return sorted(
        p
        for p in PACKAGE.rglob("*.py")
        if "__pycache__" not in p.parts and p != PACKAGE / "__init__.py"
    )


def test_every_unit_has_a_rank():
    units = {_unit(p) for p in _files()}
    assert units <= set(RANKS), f"give these a layer in RANKS: {sorted(units - set(RANKS))}"


@pytest.mark.parametrize("path", _files(), ids=lambda p: str(p.relative_to(PACKAGE)))
def test_imports_go_down_the_layers(path):
    here = _unit(path)
    wrong = []
    for line, there in _imported_units(path):
        if there == here or there not in RANKS:
            continue
        if here in ENTRY_POINTS and there in ENTRY_POINTS:
            continue  # python -m icing runs the CLI, which runs the demo
        if there in ENTRY_POINTS or RANKS[there] >= RANKS[here]:
            wrong.append(
                f"line {line}: {here} (layer {RANKS[here]}) imports {there} (layer {RANKS[there]})"
            )
    assert not wrong, "\n".join(wrong)


def _module_name(path: Path) -> str:
    parts = path.relative_to(PACKAGE.parent).with_suffix("").parts
    return ".".join(parts[:-1] if parts[-1] == "__init__" else parts)


def test_no_import_circles():
    """Tarjan's strongly connected components over the module import graph."""
    files = {_module_name(p): p for p in _files()}
    graph = {}
    for name, path in files.items():
        tree = ast.parse(path.read_text(encoding="utf-8"))
        targets = set()
        for node in ast.walk(tree):
            if (
                isinstance(node, ast.ImportFrom)
                and node.module
                and node.module.startswith("icing")
            ):
                targets.add(node.module)
                targets.update(f"{node.module}.{a.name}" for a in node.names)
            elif isinstance(node, ast.Import):
                targets.update(a.name for a in node.names if a.name.startswith("icing."))
        resolved = set()
        for t in targets:
            while t and t not in files:
                t = t.rpartition(".")[0]
            if t and t != name and not t.startswith(name + "."):  # a face imports its parts
                resolved.add(t)
        graph[name] = resolved
    index, low, stack, on, circles = {}, {}, [], set(), []

    def strong(v):
        index[v] = low[v] = len(index)
        stack.append(v)
        on.add(v)
        for w in graph[v]:
            if w not in index:
                strong(w)
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
                circles.append(sorted(comp))

    for v in graph:
        if v not in index:
            strong(v)
    assert not circles, f"import circles: {circles}"
