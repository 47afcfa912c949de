"""The layout keeps the pipeline's layers (import-linter contracts in pyproject.toml) and the
style (ruff), so that CI fails when a module imports upward or the style slips."""

import pathlib
import shutil
import subprocess
import sys

import pytest

ROOT = pathlib.Path(__file__).resolve().parents[1]


def _tool(name):
    exe = shutil.which(name, path=str(pathlib.Path(sys.executable).parent)) or shutil.which(name)
    if exe is None:
        pytest.fail(f"{name} is not installed: pip install '.[test]' brings it")
    return exe


def test_import_layers_hold():
    out = subprocess.run([_tool("lint-imports")], cwd=ROOT, capture_output=True, text=True, timeout=300)
    assert out.returncode == 0, out.stdout + out.stderr
    assert "0 broken" in out.stdout


def test_ruff_passes():
    out = subprocess.run([_tool("ruff"), "check", "femodes", "tests", "benchmarks"], cwd=ROOT, capture_output=True,
                         text=True, timeout=300)
    assert out.returncode == 0, out.stdout + out.stderr


def test_no_module_imports_femodes_inside_a_function():
    """Imports of femodes modules stand at the top of each module: one inside a function usually
    dodges an import circle, which the layers forbid."""
    offenders = []
    for path in (ROOT / "femodes").rglob("*.py"):
        for no, line in enumerate(path.read_text().splitlines(), 1):
            if line[:1].isspace() and line.strip().startswith(("from femodes", "import femodes", "from .")):
                offenders.append(f"{path.relative_to(ROOT)}:{no}: {line.strip()}")
    assert not offenders, "\n".join(offenders)
