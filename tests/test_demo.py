"""`python -m tracemill demo` runs every section on the built-in scenario without a failure."""

from __future__ import annotations

import subprocess
import sys

from tracemill.demo import run_demo


def test_every_demo_section_runs(tmp_path) -> None:
    text = run_demo(n_cases=3000, seed=3, out=str(tmp_path))
    assert "this section failed" not in text, text
    for header in ("1. The log at a glance", "2. Groups of cases", "3. Process models",
                   "4. Why slow cases are slow", "5. What goes together"):
        assert header in text
    assert "Top variants" in text and "adjusted Rand index" in text
    assert "personal data" in text and "not causes" in text
    assert any(p.suffix == ".dot" for p in tmp_path.iterdir())


def test_command_line_demo() -> None:
    out = subprocess.run([sys.executable, "-m", "tracemill", "demo", "--cases", "800"],
                         capture_output=True, text=True, timeout=300, check=True)
    assert "repair orders" in out.stdout and "this section failed" not in out.stdout
