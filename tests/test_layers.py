"""The package tree shows the pipeline: no import from a lower stage to a higher one, and no import circle.

Stage order (DEVELOPERS.md, docs/architecture.py): base modules (errors, schema, links, results, config, glossary,
numeric, outputs) -> models -> read -> analysis -> report -> sim -> pipeline -> batch -> commands/cli -> ui.
A module may import its own stage and any lower one, at top level or inside a function.  A project rule (issue 13),
no outside source needed.
"""
from __future__ import annotations

import ast
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
STAGES = (("errors", "schema", "links", "results", "config", "glossary", "numeric", "outputs"), ("models",),
          ("read",), ("analysis",), ("report",), ("sim",), ("pipeline",), ("batch",),
          ("commands", "cli", "__main__"), ("ui",))


def _modules() -> dict[str, Path]:
    out = {}
    for path in sorted((ROOT / "diag").rglob("*.py")):
        name = ".".join(path.relative_to(ROOT).with_suffix("").parts).removesuffix(".__init__")
        out[name] = path
    return out


def _stage(module: str) -> int | None:
    parts = module.split(".")
    if parts[0] != "diag" or len(parts) == 1 or parts[1] == "__version__":
        return None
    for i, names in enumerate(STAGES):
        if parts[1] in names:
            return i
    raise AssertionError(f"{module}: not in any stage; add it to STAGES here and to docs/architecture.py")


def _imports(path: Path, modules: dict[str, Path], top_level_only: bool) -> set[str]:
    tree = ast.parse(path.read_text())
    nodes = tree.body if top_level_only else list(ast.walk(tree))
    found = set()
    for node in nodes:
        if isinstance(node, ast.ImportFrom) and node.module and node.level == 0 and node.module.startswith("diag"):
            for alias in node.names:
                sub = f"{node.module}.{alias.name}"
                found.add(sub if sub in modules else node.module)
        elif isinstance(node, ast.Import):
            found.update(a.name for a in node.names if a.name.startswith("diag"))
    return {m for m in found if m in modules and m != "diag"}


def test_no_import_from_a_lower_stage_to_a_higher_one():
    modules = _modules()
    wrong = []
    for name, path in modules.items():
        mine = _stage(name)
        if mine is None:
            continue
        for target in _imports(path, modules, top_level_only=False):
            theirs = _stage(target)
            if theirs is not None and theirs > mine:
                wrong.append(f"{name} imports {target}")
    assert not wrong, wrong


def test_no_import_circle_at_module_level():
    modules = _modules()
    graph = {name: _imports(path, modules, top_level_only=True) for name, path in modules.items()}
    # a package's __init__ importing its own submodules is how packages re-export; the circle would be a submodule
    # importing the package back, which the graph below still sees
    state: dict[str, int] = {}
    circles = []

    def visit(node: str, trail: list[str]) -> None:
        state[node] = 1
        for nxt in sorted(graph.get(node, ())):
            if state.get(nxt) == 1:
                circles.append(trail[trail.index(nxt):] + [nxt] if nxt in trail else [node, nxt])
            elif nxt not in state:
                visit(nxt, trail + [nxt])
        state[node] = 2

    for name in sorted(graph):
        if name not in state:
            visit(name, [name])
    assert not circles, circles
