"""calc is layered: every import points down (foundations, model, steady, review, record, analysis, commands).

These are checks of the project's own architecture (common practice: a layered package with no
upward imports stays testable piece by piece); they read the source, so they fail on the commit
that adds an upward arrow, not later when a cycle finally bites.
"""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

CALC = Path(__file__).resolve().parents[2] / "calc"

#: Layers from the bottom. A module may import its own layer or any below it.
LAYERS = [
    ("calc.units", "calc.water", "calc.friction", "calc.tables", "calc.data"),
    ("calc.model",),
    ("calc.steady",),
    ("calc.transient",),
    ("calc.review",),
    ("calc.record",),
    ("calc.analysis",),
    ("calc.sizing",),
    ("calc.commands",),
]
#: What calc must never import: it is pure computation, with no web, SQL or HTML.
FORBIDDEN = ("server", "fastapi", "starlette", "jinja2", "markupsafe", "sqlite3", "weasyprint", "uvicorn")


def layer(module: str) -> int:
    for i, names in enumerate(LAYERS):
        if any(module == n or module.startswith(n + ".") for n in names):
            return i
    raise AssertionError(f"{module} is in no layer: add its package to LAYERS and to DEVELOPERS.md")


def modules() -> list[tuple[str, Path]]:
    out = []
    for path in sorted(CALC.rglob("*.py")):
        parts = path.relative_to(CALC.parent).with_suffix("").parts
        name = ".".join(parts[:-1] if parts[-1] == "__init__" else parts)
        out.append((name, path))
    return out


def imports(path: Path, package: str) -> set[str]:
    """Absolute names of the modules ``path`` imports (``from calc.record import plots`` gives calc.record.plots)."""
    out = set()
    for node in ast.walk(ast.parse(path.read_text())):
        if isinstance(node, ast.Import):
            out |= {a.name for a in node.names}
        elif isinstance(node, ast.ImportFrom):
            base = node.module or ""
            if node.level:
                base = ".".join(package.split(".")[: len(package.split(".")) - node.level + 1] + ([base] if base else []))
            out.add(base)
            out |= {f"{base}.{a.name}" for a in node.names if (CALC.parent / (base + "." + a.name).replace(".", "/")).exists()
                    or (CALC.parent / ((base + "." + a.name).replace(".", "/") + ".py")).exists()}
    return out


def test_every_calc_module_has_a_layer():
    names = [name for name, _ in modules() if name != "calc"]
    assert len(names) > 20
    for name in names:
        layer(name)


@pytest.mark.parametrize("name,path", modules(), ids=[n for n, _ in modules()])
def test_imports_point_down(name, path):
    if name == "calc":
        return
    own = layer(name)
    package = name if path.name == "__init__.py" else name.rpartition(".")[0]
    for target in imports(path, package):
        top = target.split(".")[0]
        assert top not in FORBIDDEN, f"{name} imports {target}: calc must not know the web, SQL or HTML"
        if top != "calc" or target in ("calc", "calc.model", "calc.steady", "calc.review", "calc.record"):
            continue
        assert layer(target) <= own, f"{name} (layer {own}) imports {target} (layer {layer(target)}): an upward arrow"


def test_the_check_itself_sees_an_upward_import(tmp_path):
    """The reader finds a from-import of a sub-module, which is how an upward arrow usually arrives."""
    bad = tmp_path / "bad.py"
    bad.write_text("from calc.review import checks\nfrom calc.record.text import num\n")
    found = imports(bad, "calc.model")
    assert "calc.review.checks" in found and "calc.record.text" in found
    assert max(layer(t) for t in found if t.startswith("calc.")) > layer("calc.model.sheet")


def test_record_public_names_exist():
    import calc.record

    for name in calc.record.__all__:
        assert hasattr(calc.record, name), name
