"""The architecture map, enforced: a layer imports only the layers below it.

Layers (lowest first); see DEVELOPERS.md:
1 core physics and units (pure, no I/O), 2 profiles and schedule, 3 link,
4 session, 5 cli/tui/bench. A module not listed here fails this test so the
map stays complete.
"""

from __future__ import annotations

import ast
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent / "winder"

LAYERS = {
    "winder": 0, "winder.__main__": 5, "winder.examples": 0,
    "winder.errors": 1, "winder.units": 1, "winder.wire": 1, "winder.bobbin": 1,
    "winder.winding": 1, "winder.planner": 1, "winder.gauges": 1, "winder.em": 1,
    "winder.profile": 2, "winder.schedule": 2,
    "winder.link": 3,
    "winder.session": 4,
    "winder.cli": 5, "winder.tui": 5, "winder.bench": 5,
}

# Heavy or hardware packages allowed only from these layers' modules.
THIRD_PARTY_MIN_LAYER = {"serial": 3, "textual": 5, "platformdirs": 1}


def layer_of(module: str) -> int | None:
    parts = module.split(".")
    while parts:
        name = ".".join(parts)
        if name in LAYERS:
            return LAYERS[name]
        parts.pop()
    return None


def module_name(path: Path) -> str:
    rel = path.relative_to(ROOT.parent).with_suffix("")
    parts = list(rel.parts)
    if parts[-1] == "__init__":
        parts.pop()
    return ".".join(parts)


def imports(path: Path) -> list[str]:
    tree = ast.parse(path.read_text(), filename=str(path))
    mod = module_name(path)
    out = []
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            out += [a.name for a in node.names]
        elif isinstance(node, ast.ImportFrom):
            if node.level:
                base = mod.split(".")
                if path.name != "__init__.py":
                    base = base[:-1]
                base = base[: len(base) - (node.level - 1)]
                out.append(".".join(base + ([node.module] if node.module else [])))
            elif node.module:
                out.append(node.module)
    return out


def test_every_module_is_on_the_map_and_imports_downward():
    problems = []
    for path in sorted(ROOT.rglob("*.py")):
        mod = module_name(path)
        mine = layer_of(mod)
        if mine is None:
            problems.append(f"{mod}: not on the layer map in tests/test_layers.py")
            continue
        for imp in imports(path):
            top = imp.split(".")[0]
            if top == "winder":
                theirs = layer_of(imp)
                if theirs is not None and theirs > mine and mine != 0:
                    problems.append(f"{mod} (layer {mine}) imports {imp} (layer {theirs})")
            elif top in THIRD_PARTY_MIN_LAYER and mine < THIRD_PARTY_MIN_LAYER[top]:
                problems.append(f"{mod} (layer {mine}) imports {top}")
    assert not problems, "\n".join(problems)
