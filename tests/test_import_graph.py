"""The package's import graph, read from the source: no import cycles, small modules, a
short top level.

The graph is built with ``ast`` from every ``import`` statement of every module, at module
level and inside functions (``if TYPE_CHECKING:`` blocks included: they are dependencies
of the source all the same). Relative imports are resolved against the importing module's
package; ``from . import x`` is an edge to the submodule ``x`` when there is one, else to
the package. ``import a.b`` is an edge to ``a.b`` only (not to ``a``'s ``__init__``, which
every submodule would otherwise reach). Imports by string (``importlib.import_module``) are
not seen. Cycles are the strongly connected components of more than one module (Tarjan,
"Depth-first search and linear graph algorithms", SIAM J. Comput. 1(2), 1972).

The limits: no cycles, at most 400 lines a module, at most 8 modules at the top level (the
rest lives in subpackages that follow the pipeline).
"""

from __future__ import annotations

import ast
import re
from pathlib import Path

from paths import REPO_ROOT

PACKAGE = REPO_ROOT / "fluxlab"
MAX_MODULE_LINES = 400
MAX_TOP_LEVEL_MODULES = 8

#: (importing module, imported module) -> line numbers of the import statements
Edges = dict[tuple[str, str], list[int]]


def package_modules(package_dir: Path) -> dict[str, Path]:
    """Dotted module name -> file, for every ``.py`` file under ``package_dir`` (a package
    is named by its ``__init__.py``)."""
    root = package_dir.parent
    modules = {}
    for path in sorted(package_dir.rglob("*.py")):
        parts = list(path.relative_to(root).with_suffix("").parts)
        if parts[-1] == "__init__":
            parts.pop()
        modules[".".join(parts)] = path
    return modules


def _base(module: str, is_package: bool, node: ast.ImportFrom) -> str:
    """The absolute module a ``from ... import`` names before its ``import``."""
    if node.level == 0:
        return node.module or ""
    parts = module.split(".") if is_package else module.split(".")[:-1]
    parts = parts[:len(parts) - (node.level - 1)]
    return ".".join(parts + ([node.module] if node.module else []))


def _deepest(name: str, modules: dict[str, Path]) -> str | None:
    """The longest prefix of a dotted name that is a module of the package, if any."""
    parts = name.split(".")
    for k in range(len(parts), 0, -1):
        if ".".join(parts[:k]) in modules:
            return ".".join(parts[:k])
    return None


def import_edges(package_dir: Path) -> Edges:
    """Every import edge between modules of the package (self-imports left out)."""
    modules = package_modules(package_dir)
    edges: Edges = {}
    for module, path in modules.items():
        tree = ast.parse(path.read_text(encoding="utf-8"), filename=str(path))
        is_package = path.name == "__init__.py"
        for node in ast.walk(tree):
            if isinstance(node, ast.Import):
                targets = [_deepest(alias.name, modules) for alias in node.names]
            elif isinstance(node, ast.ImportFrom):
                base = _base(module, is_package, node)
                targets = [f"{base}.{alias.name}" if f"{base}.{alias.name}" in modules
                           else _deepest(base, modules) for alias in node.names]
            else:
                continue
            for target in targets:
                if target is None or target == module:
                    continue
                lines = edges.setdefault((module, target), [])
                if node.lineno not in lines:
                    lines.append(node.lineno)
    return edges


def strongly_connected(nodes: set[str], edges: Edges) -> list[list[str]]:
    """Tarjan's strongly connected components, each sorted, the list sorted."""
    succ: dict[str, list[str]] = {n: [] for n in nodes}
    for a, b in edges:
        succ[a].append(b)
    index: dict[str, int] = {}
    low: dict[str, int] = {}
    stack: list[str] = []
    on_stack: set[str] = set()
    components: list[list[str]] = []

    def visit(v: str) -> None:
        index[v] = low[v] = len(index)
        stack.append(v)
        on_stack.add(v)
        for w in sorted(succ[v]):
            if w not in index:
                visit(w)
                low[v] = min(low[v], low[w])
            elif w in on_stack:
                low[v] = min(low[v], index[w])
        if low[v] == index[v]:
            component = []
            while True:
                w = stack.pop()
                on_stack.discard(w)
                component.append(w)
                if w == v:
                    break
            components.append(sorted(component))

    for v in sorted(nodes):
        if v not in index:
            visit(v)
    return sorted(components)


def import_cycles(package_dir: Path) -> list[list[str]]:
    """The strongly connected components of more than one module: the import cycles."""
    edges = import_edges(package_dir)
    nodes = set(package_modules(package_dir)) | {m for edge in edges for m in edge}
    return [c for c in strongly_connected(nodes, edges) if len(c) > 1]


def describe_cycles(package_dir: Path) -> str:
    """Each cycle with the import statements (file:line) that close it."""
    edges = import_edges(package_dir)
    modules = package_modules(package_dir)
    root = package_dir.parent
    out = []
    for component in import_cycles(package_dir):
        out.append(" <-> ".join(component))
        for (a, b), lines in sorted(edges.items()):
            if a in component and b in component:
                where = ", ".join(str(n) for n in sorted(lines))
                out.append(f"    {a} imports {b} ({modules[a].relative_to(root)}:{where})")
    return "\n".join(out)


# ------------------------------------------------------------------ the tool, on toy packages
def _package(tmp_path: Path, files: dict[str, str]) -> Path:
    for name, text in files.items():
        path = tmp_path / "pkg" / name
        path.parent.mkdir(parents=True, exist_ok=True)
        path.write_text(text)
    return tmp_path / "pkg"


def test_a_two_module_cycle_is_found(tmp_path):
    pkg = _package(tmp_path, {"__init__.py": "", "a.py": "from . import b\n",
                              "b.py": "from .a import f\n", "c.py": "import pkg.a\n"})
    assert import_cycles(pkg) == [["pkg.a", "pkg.b"]]


def test_a_function_level_import_cycle_is_found(tmp_path):
    pkg = _package(tmp_path, {
        "__init__.py": "",
        "a.py": "import os\n\ndef f():\n    from pkg.sub import c\n    return c\n",
        "sub/__init__.py": "",
        "sub/c.py": "def g():\n    from ..a import f\n    return f\n",
    })
    assert import_cycles(pkg) == [["pkg.a", "pkg.sub.c"]]


def test_no_cycle_gives_nothing(tmp_path):
    pkg = _package(tmp_path, {"__init__.py": "from .a import f\n", "a.py": "from . import b\n",
                              "b.py": "import numpy\nfrom .c import x\n", "c.py": "x = 1\n"})
    assert import_cycles(pkg) == []
    assert describe_cycles(pkg) == ""


def test_relative_imports_resolve_to_submodules_or_the_package(tmp_path):
    pkg = _package(tmp_path, {
        "__init__.py": "__version__ = '1'\nfrom . import a\nfrom .sub import c\n",
        "a.py": "from . import __version__\nfrom .sub.c import y\nimport pkg.sub.c as cc\n",
        "sub/__init__.py": "from . import c\nfrom .. import a\n",
        "sub/c.py": "import json\ny = 1\n",
    })
    assert set(import_edges(pkg)) == {
        ("pkg", "pkg.a"), ("pkg", "pkg.sub.c"),  # from . import a: the submodule
        ("pkg.a", "pkg"), ("pkg.a", "pkg.sub.c"),  # from . import __version__: the package
        ("pkg.sub", "pkg.sub.c"), ("pkg.sub", "pkg.a"),
    }
    assert import_cycles(pkg) == [["pkg", "pkg.a"]]
    assert "pkg/a.py:1" in describe_cycles(pkg)


# ------------------------------------------------------------------ fluxlab
def test_the_fluxlab_graph_is_read():
    # guards the checks below against passing for a wrong reason (no package, no edges)
    modules = package_modules(PACKAGE)
    assert modules["fluxlab"] == PACKAGE / "__init__.py"
    # every module whose text imports from the package has an edge out of it
    importers = {m for m, path in modules.items()
                 if re.search(r"^\s*(from \.|from fluxlab\b|import fluxlab\b)",
                              path.read_text(encoding="utf-8"), flags=re.MULTILINE)}
    assert len(importers) > len(modules) // 2
    assert importers == {a for a, _ in import_edges(PACKAGE)}


def test_fluxlab_has_no_import_cycles():
    assert not import_cycles(PACKAGE), "import cycles:\n" + describe_cycles(PACKAGE)


def test_no_fluxlab_module_exceeds_the_line_limit():
    lines = {str(p.relative_to(REPO_ROOT)): len(p.read_text(encoding="utf-8").splitlines())
             for p in package_modules(PACKAGE).values()}
    assert {p: n for p, n in lines.items() if n > MAX_MODULE_LINES} == {}


def test_fluxlab_top_level_is_short():
    top = sorted(p.name for p in PACKAGE.glob("*.py"))
    assert len(top) <= MAX_TOP_LEVEL_MODULES, f"{len(top)} modules at the top level: {top}"
