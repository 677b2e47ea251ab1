"""The type stub python/tracemill/_core.pyi matches the native module (mypy's stubtest)."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent


def test_stub_matches_native_module() -> None:
    pytest.importorskip("mypy")
    out = subprocess.run(
        [sys.executable, "-m", "mypy.stubtest", "tracemill._core", "--allowlist",
         str(ROOT / ".mypy-stubtest-allowlist")],
        capture_output=True, text=True, timeout=300, cwd=ROOT)
    assert out.returncode == 0, out.stdout + out.stderr
