"""The layers import only downwards: inference never imports plotting or the layers above it.

DEVELOPERS.md, "Layout": catalog -> physics <- inference -> outputs, wired by pipeline. Two
checks: importing every module of infer.inference in a fresh interpreter loads no matplotlib
(checked in ``sys.modules``), and no import statement of a lower layer, even one inside a
function, names a higher layer (read with the standard library's ast module).
"""

from __future__ import annotations

import ast
import json
import subprocess
import sys
from pathlib import Path

import pytest

PACKAGE = Path(__file__).resolve().parents[1] / "infer"
PLOTTING = ("matplotlib", "corner")
ABOVE = {
    "inference": ("outputs", "pipeline", "commands", "cli"),
    "physics": ("inference", "outputs", "pipeline", "commands", "cli", "catalog"),
    "catalog": ("inference", "outputs", "pipeline", "commands", "cli", "physics"),
}


def _modules(layer: str) -> list[str]:
    return sorted(f"infer.{layer}.{p.stem}" for p in (PACKAGE / layer).glob("*.py")
                  if p.stem != "__init__")


def test_importing_inference_loads_no_plotting():
    mods = _modules("inference")
    assert len(mods) > 5
    code = ("import importlib, json, sys\n"
            f"for m in {mods!r}:\n"
            "    importlib.import_module(m)\n"
            "print(json.dumps(sorted(m for m in sys.modules if m.split('.')[0] in "
            f"{PLOTTING!r} or m.startswith(('infer.outputs', 'infer.pipeline', 'infer.commands')))))")
    proc = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                          check=False, timeout=120)
    assert proc.returncode == 0, proc.stderr
    assert json.loads(proc.stdout) == []


def _imported(path: Path) -> list[tuple[int, str]]:
    """(line, module) of every import in a file, relative imports resolved within infer."""
    parts = path.relative_to(PACKAGE.parent).with_suffix("").parts
    out = []
    for node in ast.walk(ast.parse(path.read_text())):
        if isinstance(node, ast.Import):
            out += [(node.lineno, a.name) for a in node.names]
        elif isinstance(node, ast.ImportFrom):
            base = list(parts[:-node.level]) if node.level else []
            name = ".".join(base + ([node.module] if node.module else []))
            out.append((node.lineno, name))
    return out


@pytest.mark.parametrize("layer", sorted(ABOVE))
def test_no_import_runs_up(layer):
    bad = []
    for path in sorted((PACKAGE / layer).glob("*.py")):
        for line, name in _imported(path):
            top = name.split(".")
            if top[0] == "infer" and len(top) > 1 and top[1] in ABOVE[layer]:
                bad.append(f"{path.name}:{line} imports {name}")
            if layer == "inference" and top[0] in PLOTTING:
                bad.append(f"{path.name}:{line} imports {name}")
    assert bad == []
