"""The source layout: no import circles, no module over 500 lines, core free of the window.

Read statically with ``ast`` (nothing is imported), so a failure names the files
and the imports themselves. Every ``import`` counts, at module level or inside a
function, and also under ``if TYPE_CHECKING:``: such an import never runs, but a
circle through it still ties two modules into one (the failure marks those
edges, so the reader knows which circle is only on paper). Modules are named as installed: ``core/x.py`` is
``trueslope.core.x``, ``app/x.py`` is ``trueslope.app.x`` (pyproject.toml,
``[tool.setuptools.package-dir]``).
"""

from __future__ import annotations

import ast
import re
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[2]
#: folder -> the package it installs as
PACKAGES = {"core": "trueslope.core", "app": "trueslope.app"}
MAX_LINES = 500
#: what core may never import: the window, and the GUI toolkits
CORE_FORBIDDEN = ("trueslope.app", "PySide6", "pyqtgraph")


# ------------------------------------------------------------------ the reader

def module_files(root: Path = ROOT, packages: dict[str, str] = PACKAGES) -> dict[str, Path]:
    """Installed module name -> file, for every .py file under the package folders."""
    out = {}
    for folder, package in packages.items():
        base = root / folder
        for path in sorted(base.rglob("*.py")):
            parts = list(path.relative_to(base).with_suffix("").parts)
            if parts[-1] == "__init__":
                parts.pop()
            out[".".join([package, *parts])] = path
    return out


def _is_type_checking(test: ast.expr) -> bool:
    return (isinstance(test, ast.Name) and test.id == "TYPE_CHECKING") or \
        (isinstance(test, ast.Attribute) and test.attr == "TYPE_CHECKING")


def _imports(tree: ast.AST, skip_type_checking: bool):
    """Every Import / ImportFrom node, walking into functions and classes."""
    stack = [tree]
    while stack:
        node = stack.pop()
        if isinstance(node, (ast.Import, ast.ImportFrom)):
            yield node
        if skip_type_checking and isinstance(node, ast.If) and _is_type_checking(node.test):
            stack.extend(node.orelse)
            continue
        stack.extend(ast.iter_child_nodes(node))


def imported_names(name: str, path: Path, known: set[str],
                   skip_type_checking: bool = True) -> set[str]:
    """Absolute names of what the module ``name`` (file ``path``) imports.

    Relative imports are resolved against the module's package; ``from P import x``
    names ``P.x`` when that is a module in ``known``, else ``P``.
    """
    is_package = path.name == "__init__.py"
    package = name if is_package else name.rpartition(".")[0]
    out = set()
    for node in _imports(ast.parse(path.read_text(encoding="utf-8"), str(path)),
                         skip_type_checking):
        if isinstance(node, ast.Import):
            out.update(alias.name for alias in node.names)
            continue
        if node.level:
            parts = package.split(".")
            base_parts = parts[:len(parts) - (node.level - 1)]
            base = ".".join(base_parts + ([node.module] if node.module else []))
        else:
            base = node.module or ""
        for alias in node.names:
            sub = f"{base}.{alias.name}"
            out.add(sub if sub in known else base)
    return out


def import_graph(files: dict[str, Path], skip_type_checking: bool = False
                 ) -> dict[str, set[str]]:
    """Module -> the project modules it imports (itself excluded)."""
    known = set(files)
    graph = {}
    for name, path in files.items():
        targets = set()
        for imp in imported_names(name, path, known, skip_type_checking):
            # ``import trueslope.core.x.y`` names a module; keep the longest known prefix
            parts = imp.split(".")
            while parts and ".".join(parts) not in known:
                parts.pop()
            if parts and ".".join(parts) != name:
                targets.add(".".join(parts))
        graph[name] = targets
    return graph


def import_cycles(graph: dict[str, set[str]]) -> list[list[str]]:
    """One circle per strongly connected group of modules (Tarjan), as a closed path."""
    index: dict[str, int] = {}
    low: dict[str, int] = {}
    on_stack: set[str] = set()
    stack: list[str] = []
    groups: list[list[str]] = []
    counter = [0]

    def visit(v: str) -> None:
        index[v] = low[v] = counter[0]
        counter[0] += 1
        stack.append(v)
        on_stack.add(v)
        for w in sorted(graph.get(v, ())):
            if w not in index:
                visit(w)
                low[v] = min(low[v], low[w])
            elif w in on_stack:
                low[v] = min(low[v], index[w])
        if low[v] == index[v]:
            group = []
            while True:
                w = stack.pop()
                on_stack.discard(w)
                group.append(w)
                if w == v:
                    break
            if len(group) > 1:
                groups.append(sorted(group))

    for v in sorted(graph):
        if v not in index:
            visit(v)
    return [_path_through(group, graph) for group in sorted(groups)]


def _path_through(group: list[str], graph: dict[str, set[str]]) -> list[str]:
    """A closed path a -> ... -> a inside one strongly connected group (breadth first)."""
    members = set(group)
    start = group[0]
    came_from = {start: None}
    queue = [start]
    while queue:
        v = queue.pop(0)
        for w in sorted(graph[v] & members):
            if w == start:
                path = [v]
                while came_from[path[-1]] is not None:
                    path.append(came_from[path[-1]])
                return [start] + path[::-1][1:] + [start] if len(path) > 1 else [start, v, start]
            if w not in came_from:
                came_from[w] = v
                queue.append(w)
    raise AssertionError(f"no circle found through {group}")  # cannot happen for a real group


# ------------------------------------------------------------------ the checks

def _describe(cycle: list[str], runtime: dict[str, set[str]]) -> str:
    out = cycle[0]
    for a, b in zip(cycle, cycle[1:]):
        out += " -> " + b + ("" if b in runtime[a] else " (under TYPE_CHECKING only)")
    return "  " + out


def test_no_import_circles():
    files = module_files()
    cycles = import_cycles(import_graph(files))
    runtime = import_graph(files, skip_type_checking=True)
    assert not cycles, (
        f"{len(cycles)} import circle(s) among the modules of core/ and app/ (each must be "
        "broken: move the shared part into a module both can import):\n"
        + "\n".join(_describe(c, runtime) for c in cycles))


def test_no_module_over_500_lines():
    long = []
    for name, path in module_files().items():
        n = len(path.read_text(encoding="utf-8").splitlines())
        if n > MAX_LINES:
            long.append(f"  {path.relative_to(ROOT)}: {n} lines ({name})")
    assert not long, (f"{len(long)} module(s) longer than {MAX_LINES} lines; split each by "
                      "concern:\n" + "\n".join(long))


def test_core_never_imports_the_window_or_qt():
    files = module_files()
    known = set(files)
    bad = []
    for name, path in files.items():
        if not name.startswith("trueslope.core"):
            continue
        # TYPE_CHECKING imports count here too: core must not name the window at all
        for imp in sorted(imported_names(name, path, known, skip_type_checking=False)):
            if any(imp == f or imp.startswith(f + ".") for f in CORE_FORBIDDEN):
                bad.append(f"  {path.relative_to(ROOT)} imports {imp}")
    assert not bad, "core/ must not depend on the window or on Qt:\n" + "\n".join(bad)


# ------------------------------------------------------------------ the reader's own checks
# (so that the checks above cannot pass by reading nothing)

def test_reader_sees_the_whole_tree():
    files = module_files()
    assert "trueslope.core" in files and "trueslope.app" in files
    assert sum(n.startswith("trueslope.core.") for n in files) >= 8
    assert sum(n.startswith("trueslope.app.") for n in files) >= 3
    graph = import_graph(files)
    # every module of core but its package file imports something of core, or is imported
    imported = set().union(*graph.values())
    assert imported, "the import graph has no edges: the reader resolves nothing"
    assert any(t.startswith("trueslope.core") for n, ts in graph.items()
               if n.startswith("trueslope.app") for t in ts), "app imports nothing of core?"


def _tree(tmp_path: Path, files: dict[str, str]) -> dict[str, Path]:
    for rel, text in files.items():
        p = tmp_path / rel
        p.parent.mkdir(parents=True, exist_ok=True)
        p.write_text(text)
    return module_files(tmp_path, {"core": "trueslope.core", "app": "trueslope.app"})


def test_reader_finds_a_circle_through_relative_and_function_imports(tmp_path):
    files = _tree(tmp_path, {
        "core/__init__.py": "",
        "core/a.py": "from .b import f\n",
        "core/b.py": "def f():\n    from . import c\n",
        "core/c.py": "import trueslope.core.a\n",
        "core/d.py": "from typing import TYPE_CHECKING\nif TYPE_CHECKING:\n    from .a import x\n",
        "core/sub/__init__.py": "",
        "core/sub/e.py": "from ..d import y\nfrom .. import a\n",
        "app/__init__.py": "",
        "app/w.py": "from trueslope.core.sub import e\n",
    })
    graph = import_graph(files)
    assert graph["trueslope.core.b"] == {"trueslope.core.c"}  # import inside a function
    assert graph["trueslope.core.d"] == {"trueslope.core.a"}  # TYPE_CHECKING counts
    assert import_graph(files, skip_type_checking=True)["trueslope.core.d"] == set()
    assert graph["trueslope.core.sub.e"] == {"trueslope.core.d", "trueslope.core.a"}
    assert graph["trueslope.app.w"] == {"trueslope.core.sub.e"}
    assert import_cycles(graph) == [["trueslope.core.a", "trueslope.core.b", "trueslope.core.c",
                                     "trueslope.core.a"]]


def test_reader_finds_a_two_module_circle_and_none_in_a_tree(tmp_path):
    assert import_cycles({"p": {"q"}, "q": {"p"}, "r": {"p"}}) == [["p", "q", "p"]]
    assert import_cycles({"p": {"q"}, "q": {"r"}, "r": set()}) == []


def test_reader_sees_a_forbidden_import_inside_a_function(tmp_path):
    files = _tree(tmp_path, {"core/__init__.py": "",
                             "core/x.py": "def plot():\n    import pyqtgraph as pg\n",
                             "app/__init__.py": ""})
    names = imported_names("trueslope.core.x", files["trueslope.core.x"], set(files))
    assert names == {"pyqtgraph"}


@pytest.mark.parametrize("n,too_long", [(MAX_LINES, False), (MAX_LINES + 1, True)])
def test_line_limit_counts_lines(tmp_path, n, too_long):
    files = _tree(tmp_path, {"core/__init__.py": "", "core/m.py": "x = 1\n" * n})
    assert (len(files["trueslope.core.m"].read_text().splitlines()) > MAX_LINES) is too_long


# ---------------------------------------------------------------- sources

SOURCES = ROOT / "core" / "SOURCES.md"
CITATION = re.compile(r"SOURCES\.md\s*\[([a-z0-9-]+)\]")


def _cited_files() -> list[Path]:
    out = []
    for folder in ("core", "app", "tests", "benchmarks", "sample_captures", "packaging"):
        for p in (ROOT / folder).rglob("*"):
            if p.suffix in (".py", ".md", ".cir") and p != SOURCES and ".venv" not in p.parts:
                out.append(p)
    return out + [ROOT / "README.md", ROOT / "DEVELOPERS.md"]


def test_every_citation_names_an_entry_of_the_projects_own_sources():
    keys = set(re.findall(r"^## \[([a-z0-9-]+)\]", SOURCES.read_text(encoding="utf-8"), re.M))
    assert {"ieee181", "ieee1241", "sweep", "loading", "bic"} <= keys
    cited: dict[str, set[str]] = {}
    for p in _cited_files():
        for key in CITATION.findall(p.read_text(encoding="utf-8", errors="replace")):
            cited.setdefault(key, set()).add(str(p.relative_to(ROOT)))
    unknown = {k: sorted(v) for k, v in cited.items() if k not in keys}
    assert not unknown, f"citations of keys missing from core/SOURCES.md: {unknown}"
    assert len(cited) >= 8  # the reader found the citations


def test_nothing_cites_a_file_outside_the_repository():
    sheet = "REFERENCES" + ".md"  # spelled apart so this test does not find itself
    outside = [str(p.relative_to(ROOT)) for p in _cited_files()
               if sheet in p.read_text(encoding="utf-8", errors="replace")]
    assert not outside, f"these cite a reference sheet outside the repository: {outside}"
