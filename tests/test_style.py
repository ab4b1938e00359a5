"""The code base stays ruff-clean (DEVELOPERS.md): lint and format, as configured in pyproject."""

from __future__ import annotations

import shutil
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def _ruff(*args: str) -> subprocess.CompletedProcess[str]:
    exe = shutil.which("ruff", path=str(Path(sys.executable).parent)) or shutil.which("ruff")
    assert exe, "ruff is a test dependency (pip install -e '.[test]')"
    return subprocess.run([exe, *args], cwd=ROOT, capture_output=True, text=True, timeout=300)


def test_ruff_check() -> None:
    proc = _ruff("check", ".")
    assert proc.returncode == 0, proc.stdout[-3000:]


def test_ruff_format() -> None:
    proc = _ruff("format", "--check", ".")
    assert proc.returncode == 0, proc.stdout[-3000:]
