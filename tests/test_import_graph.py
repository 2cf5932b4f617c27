"""The package's imports run one way, and no module imports itself round a loop.

Data flows files -> board -> design -> rules/physics -> reports -> commands -> cli
(DEVELOPERS.md, "Layout and data flow"): a module may import its own layer, a lower one, or the
ground floor (plain data every layer shares), never a higher one.  Read with the standard
library's ``ast`` (every import statement, also those inside functions and under
``TYPE_CHECKING``), so nothing is imported to check it.
"""

from __future__ import annotations

import ast
from collections.abc import Iterable, Mapping
from pathlib import Path

PACKAGE = Path(__file__).resolve().parents[1] / "sensorcheck"

#: lowest first; a module belongs to the longest prefix that names it
LAYERS: tuple[tuple[str, tuple[str, ...]], ...] = (
    ("ground floor", ("sensorcheck", "sensorcheck.errors", "sensorcheck.limits", "sensorcheck.findings",
                      "sensorcheck.materials", "sensorcheck.finger")),
    # the records the readers fill (Feature, Hole, Stackup...): plain data that imports nothing of ours
    ("board records", ("sensorcheck.board.model",)),
    ("files", ("sensorcheck.fab",)),
    ("board", ("sensorcheck.board",)),
    ("design", ("sensorcheck.design",)),
    # compare: what changed between two revisions (plain data in, plain data out); reading a revision
    # (compare.sides) runs a check and belongs with the commands
    ("rules/physics", ("sensorcheck.rules", "sensorcheck.physics", "sensorcheck.compare")),
    ("report", ("sensorcheck.report",)),
    ("commands", ("sensorcheck.commands", "sensorcheck.check", "sensorcheck.compare.sides")),
    ("cli", ("sensorcheck.cli", "sensorcheck.__main__")),
)


def module_files(root: Path = PACKAGE) -> dict[str, Path]:
    """Dotted module name -> file, for every .py file of the package."""
    out: dict[str, Path] = {}
    for path in sorted(root.rglob("*.py")):
        parts = (root.name, *path.relative_to(root).with_suffix("").parts)
        if parts[-1] == "__init__":
            parts = parts[:-1]
        out[".".join(parts)] = path
    return out


def imports_of(name: str, path: Path, known: Iterable[str]) -> set[str]:
    """The package modules ``name`` imports (absolute and relative imports, anywhere in the file)."""
    known = set(known)
    package = name if path.name == "__init__.py" else name.rpartition(".")[0]
    out: set[str] = set()
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"), str(path))):
        if isinstance(node, ast.Import):
            targets = [alias.name for alias in node.names]
        elif isinstance(node, ast.ImportFrom):
            if node.level:
                base = package.split(".")[: len(package.split(".")) - node.level + 1]
                module = ".".join(base + ([node.module] if node.module else []))
            else:
                module = node.module or ""
            # ``from pkg import sub`` imports the submodule; ``from mod import name`` the module
            targets = [f"{module}.{a.name}" if f"{module}.{a.name}" in known else module for a in node.names]
        else:
            continue
        for target in targets:
            while target and target not in known and "." in target:
                target = target.rpartition(".")[0]
            if target in known and target != name:
                out.add(target)
    return out


def import_graph(root: Path = PACKAGE) -> dict[str, set[str]]:
    files = module_files(root)
    return {name: imports_of(name, path, files) for name, path in files.items()}


def layer_of(module: str) -> int:
    best, level = -1, -1
    for i, (_, prefixes) in enumerate(LAYERS):
        for prefix in prefixes:
            if (module == prefix or module.startswith(prefix + ".")) and len(prefix) > best:
                best, level = len(prefix), i
    return level


def upward_arrows(graph: Mapping[str, set[str]]) -> list[str]:
    out = []
    for src, targets in sorted(graph.items()):
        for dst in sorted(targets):
            if layer_of(dst) > layer_of(src):
                out.append(f"{src} ({LAYERS[layer_of(src)][0]}) imports {dst} ({LAYERS[layer_of(dst)][0]})")
    return out


def cycles(graph: Mapping[str, set[str]]) -> list[list[str]]:
    """Strongly connected components of more than one module (Tarjan), each sorted."""
    index: dict[str, int] = {}
    low: dict[str, int] = {}
    stack: list[str] = []
    on_stack: set[str] = set()
    found: list[list[str]] = []

    def visit(v: str) -> None:
        index[v] = low[v] = len(index)
        stack.append(v)
        on_stack.add(v)
        for w in sorted(graph.get(v, ())):
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
            if len(component) > 1:
                found.append(sorted(component))

    for v in sorted(graph):
        if v not in index:
            visit(v)
    return found


def test_every_module_has_a_layer() -> None:
    unplaced = [m for m in module_files() if layer_of(m) < 0]
    assert not unplaced, f"modules in no layer of LAYERS (add them where they belong): {unplaced}"


def test_the_graph_is_read() -> None:
    # A reader that saw no imports would pass the two checks below vacuously.
    graph = import_graph()
    assert "sensorcheck.fab.gerber" in graph["sensorcheck.board.build"]
    assert "sensorcheck.rules.catalogue" in graph["sensorcheck.rules.engine"]
    assert sum(len(t) for t in graph.values()) > 150


def test_no_upward_import() -> None:
    arrows = upward_arrows(import_graph())
    assert not arrows, (
        "imports against the data flow (files -> board -> design -> rules/physics -> report -> commands"
        " -> cli; plain shared data belongs on the ground floor):\n  " + "\n  ".join(arrows)
    )


def test_no_import_loop() -> None:
    loops = cycles(import_graph())
    assert not loops, "modules that import each other round a loop:\n  " + "\n  ".join(" <-> ".join(c) for c in loops)


def test_the_checks_catch_what_they_look_for(tmp_path: Path) -> None:
    # A small package with one upward arrow (a board module importing a rule) and one loop.
    pkg = tmp_path / "sensorcheck"
    for sub in ("board", "rules"):
        (pkg / sub).mkdir(parents=True)
        (pkg / sub / "__init__.py").write_text("")
    (pkg / "__init__.py").write_text("")
    (pkg / "board" / "drawing.py").write_text("from sensorcheck.rules.finding import Drawing\n")
    (pkg / "rules" / "finding.py").write_text("Drawing = object\n")
    (pkg / "rules" / "engine.py").write_text("def f():\n    from sensorcheck.rules import gap\n")
    (pkg / "rules" / "gap.py").write_text("from .engine import f\n")
    graph = import_graph(pkg)
    assert upward_arrows(graph) == [
        "sensorcheck.board.drawing (board) imports sensorcheck.rules.finding (rules/physics)"
    ]
    assert cycles(graph) == [["sensorcheck.rules.engine", "sensorcheck.rules.gap"]]
