"""The package's layering (DEVELOPERS.md, "Layers"): no import circle between modules, and no
module importing a higher layer — function-level imports included, so that a lazy import
cannot hide a reversed dependency. Read from the source with :mod:`ast`; nothing is imported.
"""

from __future__ import annotations

import ast
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
SOURCES = {"calwork": ROOT / "calwork", "calwork.sample_runs": ROOT / "sample_runs"}

#: Layer of each top-level part of the package, lowest first. A module may import its own
#: part and any lower layer, never a higher one or another part of the same layer.
LAYERS = {
    "core": 0,            # records shared by every stage
    "data": 1,            # cited data files and their loader
    "formula": 2, "plausibility": 2,
    "io": 3, "hess": 3, "qa": 3,  # importers; Hess's-law algebra and network; control charts
    "rise": 4,            # thermogram → corrected rise
    "bomb": 5, "solution": 5, "simulation": 5,  # energy chains; the simulator
    "reduce": 6,          # the run-sheet dispatcher
    "labbook": 7, "report": 7,
    "web": 8,             # the review workbench (ASGI app over the lab book)
    "cli": 9,             # the command line starts everything, the workbench included
    "sample_runs": 10,    # the builder of the bundled simulated runs (a developer tool)
}


def _modules() -> dict[str, Path]:
    found = {}
    for prefix, folder in SOURCES.items():
        for path in folder.rglob("*.py"):
            parts = list(path.relative_to(folder).with_suffix("").parts)
            if parts[-1] == "__init__":
                parts.pop()
            found[".".join([prefix, *parts])] = path
    return found


def _imports(modules: dict[str, Path]) -> dict[str, set[str]]:
    def owner(name: str) -> str | None:
        while name and name not in modules:
            name = name.rpartition(".")[0]
        return name or None

    edges: dict[str, set[str]] = {}
    for name, path in modules.items():
        package = name if path.name == "__init__.py" else name.rpartition(".")[0]
        targets: set[str] = set()
        for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
            if isinstance(node, ast.Import):
                targets.update(a.name for a in node.names)
            elif isinstance(node, ast.ImportFrom):
                base = node.module or ""
                if node.level:
                    up = package.split(".")[: len(package.split(".")) - node.level + 1]
                    base = ".".join(up + ([base] if base else []))
                # ``from x import y``: the module x.y when y is one, else x
                targets.update(f"{base}.{a.name}" if f"{base}.{a.name}" in modules else base
                               for a in node.names)
        resolved = {owner(t) for t in targets if t.split(".")[0] == "calwork"}
        edges[name] = {t for t in resolved if t is not None and t != name}
    return edges


def _part(module: str) -> str:
    parts = module.split(".")
    return parts[1] if len(parts) > 1 else "calwork"


def test_every_part_has_a_layer():
    parts = {_part(m) for m in _modules()} - {"calwork"}
    assert parts <= set(LAYERS), f"parts without a layer: {sorted(parts - set(LAYERS))}"


def test_no_import_from_a_lower_layer_to_a_higher_one():
    wrong = []
    for module, targets in _imports(_modules()).items():
        part = _part(module)
        if part == "calwork":  # the package root re-exports the public API lazily
            continue
        for target in targets:
            other = _part(target)
            if other == "calwork":
                wrong.append(f"{module} imports the package root (import {target} directly)")
            elif other != part and LAYERS[other] >= LAYERS[part]:
                wrong.append(f"{module} (layer {LAYERS[part]}, {part}) imports {target} "
                             f"(layer {LAYERS[other]}, {other})")
    assert not wrong, "\n".join(sorted(wrong))


def test_no_import_circle():
    edges = _imports(_modules())
    index: dict[str, int] = {}
    low: dict[str, int] = {}
    stack: list[str] = []
    on_stack: set[str] = set()
    circles: list[list[str]] = []

    def visit(v: str) -> None:  # Tarjan's strongly connected components
        index[v] = low[v] = len(index)
        stack.append(v)
        on_stack.add(v)
        for w in edges.get(v, ()):
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
                circles.append(sorted(component))

    for v in sorted(edges):
        if v not in index:
            visit(v)
    assert not circles, f"import circles: {circles}"


def test_the_check_sees_a_reversed_import(tmp_path, monkeypatch):
    """The walker finds a function-level import of a higher layer (so the tests above can fail)."""
    fake = tmp_path / "calwork"
    (fake / "core").mkdir(parents=True)
    (fake / "cli").mkdir()
    (fake / "__init__.py").write_text("")
    (fake / "core" / "__init__.py").write_text("")
    (fake / "cli" / "__init__.py").write_text("")
    (fake / "core" / "errors.py").write_text("def f():\n    from calwork.cli import main\n")
    (fake / "cli" / "main.py").write_text("from calwork.core.errors import f\n")
    monkeypatch.setitem(SOURCES, "calwork", fake)
    monkeypatch.delitem(SOURCES, "calwork.sample_runs")
    edges = _imports(_modules())
    assert "calwork.cli.main" in edges["calwork.core.errors"]
    assert "calwork.core.errors" in edges["calwork.cli.main"]


def test_every_kernel_function_runs():
    """The pure physics functions of the rise kernel are the ones the fits and reports call:
    each public function of ``calwork.rise.drift`` is used by the package itself (not only by
    the tests)."""
    import calwork.rise.drift as drift

    used: set[str] = set()
    for path in SOURCES["calwork"].rglob("*.py"):
        tree = ast.parse(path.read_text(encoding="utf-8"))
        for func in ast.walk(tree):
            if not isinstance(func, ast.FunctionDef):
                continue
            for node in ast.walk(func):
                if isinstance(node, ast.Name) and node.id != func.name:
                    used.add(node.id)
                elif isinstance(node, ast.Attribute) and node.attr != func.name:
                    used.add(node.attr)
    unused = sorted(set(drift.__all__) - used)
    assert not unused, f"kernel functions only the tests call: {unused}"


def test_only_the_renderers_lay_out_tables():
    """Every terminal table is a document table rendered by calwork.report.plain: no stage
    and no command formats its own (the command line only chooses the format)."""
    users = [
        path.relative_to(SOURCES["calwork"]).as_posix()
        for path in SOURCES["calwork"].rglob("*.py")
        for node in ast.walk(ast.parse(path.read_text(encoding="utf-8")))
        if isinstance(node, ast.ImportFrom) and any(a.name == "format_table" for a in node.names)
    ]
    assert users == ["report/plain.py"]
