"""Layers, one direction: core (numpy only) -> formats -> storage -> report -> commands / ui -> cli.

The computation layer imports no UI, terminal or database module (checked in a fresh interpreter); every
module imports only its own layer or lower ones, screens never import each other, and there are no import
cycles (checked on the source, lazy imports inside functions included)."""

import ast
import functools
import pkgutil
import subprocess
import sys
from pathlib import Path

import fieldpad.core


def test_core_is_pure():
    mods = [f"fieldpad.core.{m.name}" for m in pkgutil.iter_modules(fieldpad.core.__path__)]
    assert "fieldpad.core.analysis" in mods
    code = (
        "import sys\n"
        + "".join(f"import {m}\n" for m in mods)
        + "bad = [m for m in ('textual', 'rich', 'sqlite3', 'sqlite_utils') if m in sys.modules]\n"
        + "print(','.join(bad))\n"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == ""


# ---- every layer, by the imports written in the source (lazy imports inside functions included) -------

ROOT = Path(fieldpad.__file__).parent
#: Layer of each part of the package: a module may import its own layer or a lower one, never a higher one.
LAYERS = {
    "core": 0,
    "formats": 1,
    "storage": 2,
    "report": 3,
    "demo_site": 3,
    "commands": 4,
    "ui": 4,
    "cli": 5,
    "__main__": 5,
    "__init__": 0,
}
SCREENS = {"boards", "sheet", "history", "review"}


def _module_name(path: Path) -> str:
    rel = path.relative_to(ROOT.parent).with_suffix("")
    parts = list(rel.parts)
    if parts[-1] == "__init__":
        parts.pop()
    return ".".join(parts)


def _imports(path: Path):
    """The fieldpad modules a source file imports, resolved to absolute names."""
    name = _module_name(path)
    package = name if path.name == "__init__.py" else name.rsplit(".", 1)[0]
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.Import):
            yield from (a.name for a in node.names if a.name.startswith("fieldpad"))
        elif isinstance(node, ast.ImportFrom):
            if node.level:
                base = package.split(".")[: len(package.split(".")) - node.level + 1]
                target = ".".join(base + ([node.module] if node.module else []))
            else:
                target = node.module or ""
            if target.startswith("fieldpad"):
                yield target
                for a in node.names:  # `from . import sheet` imports a module; `from .x import f`, a name
                    candidate = ROOT.parent / f"{target}.{a.name}".replace(".", "/")
                    if candidate.with_suffix(".py").exists() or (candidate / "__init__.py").exists():
                        yield f"{target}.{a.name}"


def _part(module: str) -> str:
    parts = module.split(".")
    return parts[1] if len(parts) > 1 else "__init__"


@functools.cache
def _graph():
    graph = {}
    for path in ROOT.rglob("*.py"):
        graph[_module_name(path)] = set(_imports(path))
    return graph


def test_every_layer_imports_only_downwards():
    bad = []
    for mod, targets in _graph().items():
        for t in targets:
            if LAYERS[_part(t)] > LAYERS[_part(mod)]:
                bad.append(f"{mod} imports {t}")
    assert bad == []
    assert set(LAYERS) >= {_part(m) for m in _graph()}  # every part of the package has a layer


def test_screens_never_import_each_other():
    bad = [
        f"{mod} imports {t}"
        for mod, targets in _graph().items()
        if mod.startswith("fieldpad.ui.") and mod.split(".")[-1] in SCREENS
        for t in targets
        if t.startswith("fieldpad.ui.") and t.split(".")[2] in SCREENS and t.split(".")[2] != mod.split(".")[-1]
    ]
    assert bad == []


def test_no_import_cycles():
    full = _graph()
    graph = {m: {t for t in ts if t in full} - {m} for m, ts in full.items()}
    seen, stack, cycles = set(), [], []

    def visit(m):
        if m in stack:
            cycles.append(stack[stack.index(m) :] + [m])
            return
        if m in seen:
            return
        seen.add(m)
        stack.append(m)
        for t in sorted(graph.get(m, ())):
            visit(t)
        stack.pop()

    for m in sorted(graph):
        visit(m)
    # A package's __init__ importing nothing of its own is the usual case; a cycle through one is still one.
    assert cycles == []
