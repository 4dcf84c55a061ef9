"""The service's layers (DEVELOPERS.md, Architecture): a module imports only from its own layer or below.

Read from the source with `ast`, so lazy imports inside functions count too (they are how a cycle hides).
Layer of a module: the first entry of LAYERS whose prefix matches its dotted name.
"""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

import cohop

ROOT = Path(cohop.__file__).parent

#: (dotted prefix, layer), most specific first. Mirrors DEVELOPERS.md's numbered layers.
LAYERS = [
    ("cohop.errors", 0), ("cohop.limits", 0), ("cohop.config", 0), ("cohop.deadline", 0), ("cohop.isolation", 0),
    ("cohop", 0),
    ("cohop.physics", 1), ("cohop.stats", 1), ("cohop.cpsat", 1),
    ("cohop.site", 2), ("cohop.site_form", 2), ("cohop.site_rules", 2), ("cohop.regulatory", 2),
    ("cohop.cautions", 2),
    ("cohop.prepare", 3), ("cohop.surveys", 3), ("cohop.harm", 3),
    ("cohop.kernel", 4), ("cohop.assess", 4), ("cohop.joint", 4), ("cohop.montecarlo", 4), ("cohop.sequences", 4),
    ("cohop.traffic", 4), ("cohop.mobility", 4),
    ("cohop.planning", 5),
    ("cohop.jobs", 6),
    ("cohop.api", 7),
    ("cohop.cli", 8), ("cohop.cli_text", 8), ("cohop.charts", 8), ("cohop.survey_csv", 8),
    ("cohop.embedded", 8), ("cohop.server", 8), ("cohop.gunicorn_conf", 8), ("cohop.__main__", 8),
    ("cohop.report", 8), ("cohop.exports", 8), ("cohop.workflow", 8),
]


def layer_of(module: str) -> int:
    best = None
    for prefix, layer in LAYERS:
        if module == prefix or module.startswith(prefix + "."):
            if best is None or len(prefix) > len(best[0]):
                best = (prefix, layer)
    assert best is not None, f"{module} has no layer: add it to LAYERS and to DEVELOPERS.md"
    return best[1]


def module_name(path: Path) -> str:
    parts = list(path.relative_to(ROOT).with_suffix("").parts)
    if parts[-1] == "__init__":
        parts = parts[:-1]
    return ".".join(["cohop", *parts])


def cohop_imports(path: Path) -> list[tuple[int, str]]:
    """(line, module) of every import of a cohop module in the file, at any depth."""
    tree = ast.parse(path.read_text(encoding="utf-8"))
    package = module_name(path) if path.name == "__init__.py" else module_name(path).rsplit(".", 1)[0]
    out = []
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            out += [(node.lineno, a.name) for a in node.names if a.name.split(".")[0] == "cohop"]
        elif isinstance(node, ast.ImportFrom):
            base = node.module or ""
            if node.level:
                base = ".".join(package.split(".")[: len(package.split(".")) - node.level + 1] + ([base] if base else []))
            if base.split(".")[0] != "cohop":
                continue
            for alias in node.names:  # `from cohop.x import y` may name a module y
                candidate = f"{base}.{alias.name}"
                as_module = ROOT.joinpath(*candidate.split(".")[1:])
                out.append((node.lineno, candidate if as_module.with_suffix(".py").exists() or as_module.is_dir()
                            else base))
    return out


SOURCES = sorted(p for p in ROOT.rglob("*.py") if "__pycache__" not in p.parts)


def test_every_module_has_a_layer():
    for path in SOURCES:
        layer_of(module_name(path))


@pytest.mark.parametrize("path", SOURCES, ids=lambda p: str(p.relative_to(ROOT)))
def test_imports_go_down_the_layers_only(path):
    own = module_name(path)
    mine = layer_of(own)
    upward = [f"line {line}: {target} (layer {layer_of(target)})" for line, target in cohop_imports(path)
              if target != "cohop" and layer_of(target) > mine]
    assert not upward, f"{own} (layer {mine}) imports upward: " + "; ".join(upward)


def test_the_checker_sees_an_upward_import(tmp_path):
    """The rule can fail: a physics module that imports the planner is caught."""
    fake = ROOT / "physics" / "_layer_probe.py"
    try:
        fake.write_text("def f():\n    from cohop.planning.engine import plan_site\n    return plan_site\n")
        assert [t for _, t in cohop_imports(fake)] == ["cohop.planning.engine"]
        assert layer_of("cohop.planning.engine") > layer_of(module_name(fake))
    finally:
        fake.unlink()
