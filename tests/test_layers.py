"""The engine's layers: a module never imports (at module level) from a layer above it, and no
module-level import cycle exists. Method objects (``plyrisk.methods``) sit low so that the
config reader can read the registry; their hooks load the engine when called (the one
documented exception, function-level imports only)."""

from __future__ import annotations

import ast
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
LAYERS = ("errors", "cautions", "display", "provenance", "templates", "models", "methods",
          "study", "design", "propagate", "analysis", "text", "results", "pipeline", "tolerances",
          "report", "cli", "__main__", "")
"""Low to high; ``""`` is the package's own ``__init__`` (the public API, loaded lazily)."""
SAME = {"errors": 0, "cautions": 0, "display": 0, "provenance": 0}


def _modules() -> dict[str, Path]:
    found = {}
    for folder, prefix in (("uq", ("plyrisk",)), ("models", ("plyrisk", "models"))):
        for path in (ROOT / folder).rglob("*.py"):
            parts = (*prefix, *path.relative_to(ROOT / folder).with_suffix("").parts)
            if parts[-1] == "__init__":
                parts = parts[:-1]
            found[".".join(parts)] = path
    return found


def _layer(module: str) -> int:
    name = module.split(".")[1] if "." in module else ""
    return SAME.get(name, LAYERS.index(name))


def _imports(path: Path, known: dict[str, Path]) -> list[tuple[str, bool]]:
    """Imported plyrisk modules and whether the import is at module level."""
    tree = ast.parse(path.read_text())
    top = {id(node) for node in tree.body}
    for node in tree.body:  # imports under `if TYPE_CHECKING:` are for type checkers only
        if isinstance(node, ast.If) and getattr(node.test, "id", "") == "TYPE_CHECKING":
            top |= {id(n) for n in ast.walk(node)}
    out = []
    for node in ast.walk(tree):
        names = []
        if isinstance(node, ast.ImportFrom) and node.module and node.module.startswith("plyrisk"):
            names = [node.module, *(f"{node.module}.{a.name}" for a in node.names)]
        elif isinstance(node, ast.Import):
            names = [a.name for a in node.names if a.name.startswith("plyrisk")]
        typing_only = any(isinstance(n, ast.If) and getattr(n.test, "id", "") == "TYPE_CHECKING"
                          and node in list(ast.walk(n)) for n in tree.body)
        for name in names:
            if name in known and not typing_only:
                out.append((name, id(node) in top))
    return out


def test_no_module_imports_from_a_layer_above_it():
    known = _modules()
    upward = []
    for module, path in known.items():
        if module in ("plyrisk",):
            continue
        for target, at_top in _imports(path, known):
            lazy_hook = module.startswith("plyrisk.methods") and not at_top
            if _layer(target) > _layer(module) and not lazy_hook:
                upward.append(f"{module} -> {target}")
    assert upward == []


def test_no_import_cycles_at_module_level():
    known = _modules()
    graph = {m: {t for t, top in _imports(p, known) if top and t != m} for m, p in known.items()}
    state: dict[str, int] = {}
    cycles = []

    def visit(node: str, stack: list[str]) -> None:
        state[node] = 1
        for nxt in graph[node]:
            if state.get(nxt) == 1:
                cycles.append(stack[stack.index(nxt):] + [nxt] if nxt in stack else [node, nxt])
            elif nxt not in state:
                visit(nxt, [*stack, nxt])
        state[node] = 2

    for m in graph:
        if m not in state:
            visit(m, [m])
    # a package importing its own submodules (the registry) is not a cycle of concepts
    cycles = [c for c in cycles if not all(x.startswith(c[0]) for x in c)]
    assert cycles == []
