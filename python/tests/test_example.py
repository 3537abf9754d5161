"""examples/python/audit_sweep.py runs and writes its HTML page; the package ships
its type stubs."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import gapcert

from conftest import ROOT


def test_the_example_runs(tmp_path):
    page = tmp_path / "sweep.html"
    completed = subprocess.run(
        [sys.executable, str(ROOT / "examples/python/audit_sweep.py"), str(page)],
        cwd=tmp_path,
        capture_output=True,
        text=True,
        timeout=300,
    )
    assert completed.returncode == 0, completed.stderr
    assert "40 runs:" in completed.stdout and "held-out examples" in completed.stdout
    assert page.read_text().count("<svg") >= 1


def test_the_package_ships_its_stubs():
    folder = Path(gapcert.__file__).parent
    for name in ("py.typed", "__init__.pyi", "_core.pyi"):
        assert (folder / name).exists(), name
