"""server has no import circle: shared pieces (paths, cookie names, the error shape) live in server.web, below the rest.

A check of the project's own architecture (common practice: a circle of imports means one module
holds a piece that belongs lower down, and it breaks as soon as one of them imports at load time).
"""

from __future__ import annotations

import ast
from pathlib import Path

SERVER = Path(__file__).resolve().parents[2] / "server"


def graph() -> dict[str, set[str]]:
    out = {}
    for path in SERVER.glob("*.py"):
        deps = set()
        for node in ast.walk(ast.parse(path.read_text())):  # late imports inside functions count too
            if isinstance(node, ast.ImportFrom) and node.module:
                if node.module.startswith("server."):
                    deps.add(node.module.split(".")[1])
                elif node.module == "server":
                    deps |= {a.name for a in node.names}
        out[path.stem] = deps
    return out


def cycles(g: dict[str, set[str]]) -> list[list[str]]:
    found = []

    def visit(node, path):
        for dep in sorted(g.get(node, ())):
            if dep in path:
                found.append(path[path.index(dep):] + [dep])
            elif len(path) < len(g):
                visit(dep, path + [dep])

    for start in sorted(g):
        visit(start, [start])
    return found


def test_no_import_circle_in_server():
    g = graph()
    assert {"app", "guard", "pages", "sharing", "web"} <= set(g)
    assert cycles(g) == []


def test_cycle_finder_finds_one():
    assert cycles({"a": {"b"}, "b": {"c"}, "c": {"a"}})


def test_web_is_at_the_bottom():
    assert graph()["web"] == set()
