"""The example script runs and draws its plot."""

from __future__ import annotations

import subprocess
import sys

from conftest import ROOT


def test_sweep_example_writes_a_png(tmp_path):
    png = tmp_path / "sweep.png"
    done = subprocess.run(
        [sys.executable, str(ROOT / "python/examples/capacitance_sweep.py"),
         "geometries/touch_pad_rev_a.toml", "glass", "0.5", "1", "3", "--out", str(png)],
        cwd=ROOT, check=True, capture_output=True, text=True,
    )
    assert done.stdout.count("glass =") == 3
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
