"""The package layout: one subpackage per stage, no import circles, stages kept pure.

Reads the source with the standard library's ``ast`` (every ``import`` statement,
including those inside functions), so a lazy import counts as much as a top one.
House rules (DESIGN.md): stages never import music21 nor a writer; a writer for one
format never imports another format's writer.
"""
from __future__ import annotations

import ast
from pathlib import Path

import pytest

PKG = Path(__file__).resolve().parent.parent / "arrange"
STAGES = ("theory", "chain", "rhythm", "harmony", "voicing", "rhythm_section")
# the MusicXML writer's own modules; the other formats are one module each
FORMATS = {"musicxml": {"musicxml", "xml_score", "xml_layers", "xml_document", "xml_notation", "symbols",
                        "xml_rhythm", "xml_harmony"},
           "midi": {"midi", "rhythm_section"}, "report": {"report"}, "preview": {"preview", "pdf"},   # pdf prints the engraving the preview draws
           "audio": {"audio"}}


def _module_name(path: Path) -> str:
    rel = path.relative_to(PKG.parent).with_suffix("")
    parts = list(rel.parts)
    if parts[-1] == "__init__":
        parts.pop()
    return ".".join(parts)


def _imports(path: Path) -> set[str]:
    """Every module ``path`` imports (absolute names; ``from a import b`` counts ``a.b``
    when ``a.b`` is a module of ours)."""
    tree = ast.parse(path.read_text(encoding="utf-8"))
    me = _module_name(path)
    package = me if path.name == "__init__.py" else me.rpartition(".")[0]
    out: set[str] = set()
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            out.update(a.name for a in node.names)
        elif isinstance(node, ast.ImportFrom):
            if node.level:
                base = package.split(".")
                base = base[: len(base) - node.level + 1]
                mod = ".".join(base + ([node.module] if node.module else []))
            else:
                mod = node.module or ""
            out.add(mod)
            for a in node.names:
                out.add(f"{mod}.{a.name}")
    return out


@pytest.fixture(scope="module")
def graph() -> dict[str, set[str]]:
    modules = {_module_name(p): p for p in PKG.rglob("*.py")}
    g = {}
    for name, path in modules.items():
        g[name] = {m for m in _imports(path) if m in modules and m != name}
    return g


def test_every_stage_is_a_subpackage_with_a_public_face() -> None:
    for stage in (*STAGES, "inputs", "writers"):
        init = PKG / stage / "__init__.py"
        assert init.is_file(), stage
        tree = ast.parse(init.read_text(encoding="utf-8"))
        assert ast.get_docstring(tree), f"{stage}/__init__.py has no docstring map"
        assert any(isinstance(n, ast.Assign) and any(getattr(t, "id", "") == "__all__" for t in n.targets)
                   for n in tree.body), f"{stage}/__init__.py names no __all__"


def test_no_import_circles(graph: dict[str, set[str]]) -> None:
    """No module imports a module that (directly or through others) imports it back.
    A package's ``__init__`` importing its own modules is not a circle."""
    def reach(start: str) -> set[str]:
        seen: set[str] = set()
        todo = [start]
        while todo:
            for nxt in graph[todo.pop()]:
                if nxt not in seen:
                    seen.add(nxt)
                    todo.append(nxt)
        return seen

    circles = []
    for mod, deps in graph.items():
        for dep in deps:
            if mod.startswith(dep + ".") and dep in graph:   # a module importing its own package face
                continue
            if mod in reach(dep) and not dep.startswith(mod + "."):
                circles.append((mod, dep))
    # an __init__ re-exporting its children makes child -> package -> child look circular only
    # when a child imports its own package's face; that is reported too, minus that case
    circles = [(a, b) for a, b in circles if not (graph.get(b) and a.rpartition(".")[0] == b)]
    assert circles == [], f"import circles: {circles[:10]}"


def test_stages_never_import_music21_or_writers() -> None:
    bad = []
    for stage in STAGES:
        for path in (PKG / stage).rglob("*.py"):
            for mod in _imports(path):
                if mod.split(".")[0] == "music21" or mod.startswith(("arrange.writers", "arrange.build",
                                                                      "arrange.cli", "arrange.project")):
                    bad.append((_module_name(path), mod))
    assert bad == []


def test_stages_import_only_earlier_stages(graph: dict[str, set[str]]) -> None:
    """The pipeline's order: theory, chain, rhythm, harmony, voicing, rhythm section (DESIGN.md's flow)."""
    order = {s: i for i, s in enumerate(STAGES)}
    bad = []
    for mod, deps in graph.items():
        parts = mod.split(".")
        if len(parts) < 2 or parts[1] not in order:
            continue
        for dep in deps:
            dp = dep.split(".")
            if len(dp) > 1 and dp[1] in order and order[dp[1]] > order[parts[1]]:
                bad.append((mod, dep))
    assert bad == []


def test_writers_of_one_format_never_import_another(graph: dict[str, set[str]]) -> None:
    owner = {f"arrange.writers.{m}": fmt for fmt, mods in FORMATS.items() for m in mods}
    bad = [(mod, dep) for mod, deps in graph.items() if mod in owner
           for dep in deps if dep in owner and owner[dep] != owner[mod]]
    assert bad == []


def test_no_public_name_hides_a_module() -> None:
    """A package face never exports a name equal to one of its modules
    (``arrange.voicing.sections`` must stay the module, for readers and for monkeypatch)."""
    import importlib

    for stage in (*STAGES, "inputs", "writers"):
        face = importlib.import_module(f"arrange.{stage}")
        mods = {p.stem for p in (PKG / stage).glob("*.py")}
        assert not (set(face.__all__) & mods - {"files", "musicxml", "midi", "report", "preview",
                                                  "audio", "common"}), stage
