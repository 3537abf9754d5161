"""Shared fixtures of the Python package's tests.

Paths are given relative to the repository root, as a user of the command line types
them, so every test runs there (the reports record paths as given).
"""

from __future__ import annotations

import os
import subprocess
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[2]


@pytest.fixture(autouse=True)
def _at_repository_root(monkeypatch):
    monkeypatch.chdir(ROOT)


def _target_dir() -> Path:
    return Path(os.environ.get("CARGO_TARGET_DIR") or ROOT / "target")


@pytest.fixture(scope="session")
def cli() -> str:
    """The command-line binary: $GAPCERT_CLI, else $CARGO_TARGET_DIR/release/gapcert
    (built with `cargo build --release` when missing)."""
    given = os.environ.get("GAPCERT_CLI")
    if given:
        return given
    binary = _target_dir() / "release" / "gapcert"
    if not binary.exists():
        subprocess.run(["cargo", "build", "--release"], cwd=ROOT, check=True)
    return str(binary)


def run_cli(cli: str, *args: str) -> subprocess.CompletedProcess:
    return subprocess.run(
        [cli, *args],
        cwd=ROOT,
        capture_output=True,
        text=True,
        env={**os.environ, "NO_COLOR": "1"},
    )
