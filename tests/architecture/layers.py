"""The layers of the code, as rules on imports, and a walker that finds the imports that break them.

Read from the top: ``config`` wires everything; ``demo`` runs every app's
steps; ``web`` (pages) and ``api`` translate people and HTTP to the apps;
``exchange`` reads and writes whole projects through the apps; the
``chronology`` apps translate models to engine data; ``projects`` holds
tenancy and the field record; ``chronology.engine`` is pure computation.
Each layer may import only what is listed for it (and the standard library
and third-party packages, except that the engine imports no Django).
"""

from __future__ import annotations

import ast
from dataclasses import dataclass
from pathlib import Path

import networkx as nx

#: Our top-level packages; anything else imported is a library.
OURS = ("config", "demo", "web", "api", "exchange", "chronology", "projects", "tests")

#: Layer -> the layers it may import (besides itself).  The most specific prefix names the layer.
MAY_IMPORT = {
    "config": {"demo", "web", "api", "exchange", "chronology", "chronology.engine", "projects"},
    "demo": {"web", "api", "exchange", "chronology", "chronology.engine", "projects", "config"},
    "web": {"api", "exchange", "chronology", "chronology.engine", "projects"},
    "api": {"exchange", "chronology", "chronology.engine", "projects"},
    "exchange": {"chronology", "chronology.engine", "projects"},
    "chronology": {"chronology.engine", "projects"},
    "projects": {"chronology.engine"},
    "chronology.engine": set(),
}
#: Libraries a layer must not import at all.
FORBIDDEN_LIBRARIES = {"chronology.engine": ("django", "rest_framework", "celery")}
# Importing the Celery app object is how a task is declared; it is wiring, not a dependency on the layer above.
ALLOWED = {("chronology", "config.celery"), ("projects", "config.celery"), ("exchange", "config.celery")}


@dataclass(frozen=True)
class Import:
    module: str  # the importing module, dotted
    target: str  # the imported module, dotted
    line: int


def layer_of(module: str) -> str | None:
    if module == "chronology.engine" or module.startswith("chronology.engine."):
        return "chronology.engine"
    head = module.split(".")[0]
    return head if head in MAY_IMPORT else None


def _module_name(root: Path, path: Path) -> str:
    parts = list(path.relative_to(root).with_suffix("").parts)
    if parts[-1] == "__init__":
        parts.pop()
    return ".".join(parts)


def _targets(node: ast.AST, module: str, is_package: bool) -> list[str]:
    if isinstance(node, ast.Import):
        return [alias.name for alias in node.names]
    if isinstance(node, ast.ImportFrom):
        if node.level:
            base = module.split(".")
            base = base[: len(base) - node.level + (1 if is_package else 0)]
            stem = ".".join(base + ([node.module] if node.module else []))
        else:
            stem = node.module or ""
        # "from package import module" imports the module when it is one.
        return [stem] + [f"{stem}.{alias.name}" for alias in node.names]
    return []


def _type_checking_only(tree: ast.AST) -> set[int]:
    """Ids of import nodes under ``if TYPE_CHECKING:``: annotations only, never run."""
    skipped = set()
    for node in ast.walk(tree):
        if isinstance(node, ast.If) and getattr(node.test, "id", getattr(node.test, "attr", None)) == "TYPE_CHECKING":
            skipped.update(id(n) for stmt in node.body for n in ast.walk(stmt))
    return skipped


def imports(root: Path) -> list[Import]:
    """Every import (module level or inside functions) in our packages under ``root``, migrations aside.

    Imports under ``if TYPE_CHECKING:`` are left out: they name types for
    annotations and are never executed.
    """
    found = []
    for package in OURS:
        if package == "tests" or not (root / package).is_dir():
            continue
        for path in sorted((root / package).rglob("*.py")):
            if "migrations" in path.parts:
                continue
            module = _module_name(root, path)
            tree = ast.parse(path.read_text(encoding="utf-8"), filename=str(path))
            skipped = _type_checking_only(tree)
            for node in ast.walk(tree):
                if id(node) in skipped:
                    continue
                for target in _targets(node, module, path.name == "__init__.py"):
                    found.append(Import(module, target, node.lineno))
    return found


def _known(root: Path, target: str) -> bool:
    path = root.joinpath(*target.split("."))
    return path.with_suffix(".py").is_file() or (path / "__init__.py").is_file()


def violations(root: Path) -> list[str]:
    """Imports that point up or sideways across the layers, as ``module:line -> target (why)``."""
    out = []
    for imp in imports(root):
        source = layer_of(imp.module)
        for library in FORBIDDEN_LIBRARIES.get(source, ()):
            if imp.target == library or imp.target.startswith(library + "."):
                out.append(f"{imp.module}:{imp.line} -> {imp.target} (the engine imports no {library})")
        target = layer_of(imp.target)
        if source is None or target is None or target == source or not _known(root, imp.target):
            continue
        if (source, imp.target) in ALLOWED or target in MAY_IMPORT[source]:
            continue
        out.append(f"{imp.module}:{imp.line} -> {imp.target} ({source} may not import {target})")
    return sorted(set(out))


def cycles(root: Path) -> list[list[str]]:
    """Groups of our modules that import each other in a circle (strongly connected components)."""
    graph = nx.DiGraph()
    for imp in imports(root):
        if _known(root, imp.target) and imp.target != imp.module:
            graph.add_edge(imp.module, imp.target)
    # A package importing its own submodules (re-exports) is not a circle of concerns.
    graph.remove_edges_from([(a, b) for a, b in list(graph.edges) if b.startswith(a + ".") or a.startswith(b + ".")])
    return sorted(sorted(c) for c in nx.strongly_connected_components(graph) if len(c) > 1)
