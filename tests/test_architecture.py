"""Layout rules of the package: data flows one way through the stages, only the CLI prints.

Common practice (no published source): a stage that imported a later one would
let results flow backwards and make the stages impossible to test alone.
"""

from __future__ import annotations

import ast
import functools
from pathlib import Path

import pytest

PACKAGE = Path(__file__).resolve().parents[1] / "lean_video"

#: Pipeline position of every module: video -> pose -> gait -> mechanics -> report,
#: then the code that strings them together. Shared helpers sit at 0.
STAGE = {
    "__init__": 0, "errors": 0, "files": 0, "stated_accuracy": 0,
    "video": 1,
    "pose": 2, "pose_model": 2, "pose_markers": 2, "pose_handover": 2, "scene": 2, "scene_motion": 2,
    "gait": 3, "gait_clean": 3, "gait_events": 3, "gait_frontal": 3, "gait_options": 3, "gait_passes": 3,
    "gait_pelvis": 3, "gait_phases": 3, "posture": 3, "capture": 3,
    "mechanics": 4, "mechanics_params": 4, "mechanics_mc": 4, "mechanics_strides": 4,
    "report": 5, "figures": 5, "report_pictures": 5,
    "pipeline": 6, "cli": 7,
}
#: The client store sits beside the pipeline: it may use only the shared helpers and itself.
BESIDE = {"store", "store_checks", "store_schema"}


@functools.cache
def _modules() -> dict[str, ast.Module]:
    return {p.stem: ast.parse(p.read_text(encoding="utf-8")) for p in PACKAGE.glob("*.py")}


def _imports(tree: ast.Module) -> set[str]:
    """lean_video modules a module imports, at the top or inside functions."""
    found = set()
    for node in ast.walk(tree):
        if isinstance(node, ast.ImportFrom) and node.module and node.module.split(".")[0] == "lean_video":
            if node.module == "lean_video":
                found |= {a.name for a in node.names if a.name in STAGE or a.name in BESIDE}
            else:
                found.add(node.module.split(".")[1])
        elif isinstance(node, ast.Import):
            found |= {a.name.split(".")[1] for a in node.names if a.name.startswith("lean_video.")}
    return found


def test_every_module_has_a_place():
    assert set(_modules()) == set(STAGE) | BESIDE


@pytest.mark.parametrize("name", sorted(set(STAGE) | BESIDE))
def test_no_module_imports_a_later_stage(name):
    imported = _imports(_modules()[name]) - {name}
    if name in BESIDE:
        allowed = BESIDE | {m for m, s in STAGE.items() if s == 0}
        assert imported <= allowed, f"{name} imports {sorted(imported - allowed)}"
        return
    if name not in ("pipeline", "cli"):
        assert not imported & BESIDE, f"{name} imports the store; only the pipeline's callers may"
    later = sorted(m for m in imported - BESIDE if STAGE[m] > STAGE[name])
    assert not later, f"{name} (stage {STAGE[name]}) imports later stages {later}"


@pytest.mark.parametrize("name", sorted((set(STAGE) | BESIDE) - {"cli"}))
def test_only_the_cli_prints(name):
    calls = [n for n in ast.walk(_modules()[name]) if isinstance(n, ast.Call)]
    prints = [n.lineno for n in calls if isinstance(n.func, ast.Name) and n.func.id == "print"]
    writes = [n.lineno for n in calls if isinstance(n.func, ast.Attribute) and n.func.attr == "write"
              and isinstance(n.func.value, ast.Attribute) and n.func.value.attr in ("stdout", "stderr")]
    assert not prints and not writes, f"{name} prints at lines {prints + writes}; log instead"


def test_the_rule_catches_a_backward_import():
    # The checker itself: a gait module importing the report must be seen.
    tree = ast.parse("def f():\n    from lean_video import report\n    from lean_video.mechanics import hip_model\n")
    assert _imports(tree) == {"report", "mechanics"}
