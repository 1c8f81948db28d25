"""The stages import one way: the import-linter contract in pyproject.toml holds.

The contract lists the stages in the order data flows (cli and validation on top,
errors at the bottom); a module may import only from stages below its own.
"""

from __future__ import annotations

import shutil
import subprocess
import sys
from pathlib import Path

import pytest

pytest.importorskip("importlinter")

REPO = Path(__file__).resolve().parents[1]


def _lint(root: Path) -> subprocess.CompletedProcess:
    """Run the contract on the package found first on the path under ``root``."""
    return subprocess.run(
        [sys.executable, "-c",
         "import sys; from importlinter.cli import lint_imports; "
         "sys.exit(lint_imports(config_filename='pyproject.toml', no_cache=True))"],
        cwd=root, env={"PYTHONPATH": str(root), "PATH": "/usr/bin:/bin"},
        capture_output=True, text=True, timeout=300,
    )


def test_the_stages_import_only_earlier_stages():
    result = _lint(REPO)
    assert result.returncode == 0, result.stdout + result.stderr
    assert "1 kept, 0 broken" in result.stdout


def test_an_upward_import_breaks_the_contract(tmp_path):
    # A copy of the package in which the climate stage imports the report stage.
    shutil.copytree(REPO / "planner", tmp_path / "planner",
                    ignore=shutil.ignore_patterns("__pycache__"))
    shutil.copy(REPO / "pyproject.toml", tmp_path / "pyproject.toml")
    solar = tmp_path / "planner" / "climate" / "solar.py"
    solar.write_text(solar.read_text() + "\nimport planner.report.workbook  # noqa: E402\n")
    result = _lint(tmp_path)
    assert result.returncode != 0
    assert "BROKEN" in result.stdout
    assert "planner.climate.solar -> planner.report.workbook" in result.stdout


def test_a_new_stage_must_be_placed_in_the_contract(tmp_path):
    # The contract is exhaustive: a sub-package missing from the list fails it.
    shutil.copytree(REPO / "planner", tmp_path / "planner",
                    ignore=shutil.ignore_patterns("__pycache__"))
    shutil.copy(REPO / "pyproject.toml", tmp_path / "pyproject.toml")
    (tmp_path / "planner" / "unplaced").mkdir()
    (tmp_path / "planner" / "unplaced" / "__init__.py").write_text("")
    result = _lint(tmp_path)
    assert result.returncode != 0
    assert "planner.unplaced" in result.stdout
