"""The built wheel carries the demo data, so the demo works after a non-editable install.

Behaviour checks only (no statistic is computed here).
"""

from __future__ import annotations

import subprocess
import sys
import zipfile
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]


def test_wheel_ships_demo_data(tmp_path):
    done = subprocess.run([sys.executable, "-m", "pip", "wheel", "--no-deps",
                           "-q", "-w", str(tmp_path), str(ROOT)], capture_output=True, text=True,
                          check=False)
    if done.returncode != 0:
        pytest.skip(f"cannot build a wheel here: {done.stderr.strip().splitlines()[-1:]}")
    wheel = next(tmp_path.glob("*.whl"))
    names = set(zipfile.ZipFile(wheel).namelist())
    for needed in ("evidence/_demo/demo_panel.csv", "evidence/_demo/truth.json",
                   "evidence/_demo/generate.py", "evidence/py.typed", "evidence/tables/_render.py"):
        assert needed in names
