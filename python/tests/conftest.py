"""Shared fixtures: the repository, its demo designs and the `fieldgrid` command.

The command line is the reference the package is compared with. The tests use the binary at
$FIELDGRID_BIN when set, else the one `cargo build --release -p fieldgrid-cli` makes (run
first, so it is never older than the sources: `release/fieldgrid` under $CARGO_TARGET_DIR or
the repository's `target/`).
"""

from __future__ import annotations

import json
import os
import subprocess
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[2]
GEOMETRIES = ROOT / "geometries"
DEMOS = sorted(p.name for p in GEOMETRIES.glob("*.toml"))


@pytest.fixture(scope="session")
def fieldgrid_bin() -> Path:
    if os.environ.get("FIELDGRID_BIN"):
        return Path(os.environ["FIELDGRID_BIN"])
    target = Path(os.environ.get("CARGO_TARGET_DIR", ROOT / "target"))
    subprocess.run(
        ["cargo", "build", "--release", "--quiet", "-p", "fieldgrid-cli"], cwd=ROOT, check=True
    )
    return target / "release" / "fieldgrid"


@pytest.fixture(scope="session")
def run_cli(fieldgrid_bin, tmp_path_factory):
    """Runs `fieldgrid ARGS... --out DIR` and returns DIR's summary.json (or DIR)."""

    def run(*args: str, files: bool = False):
        out = tmp_path_factory.mktemp("cli") / "out"
        subprocess.run(
            [str(fieldgrid_bin), *args, "--out", str(out), "--quiet"], cwd=ROOT, check=True
        )
        if files:
            return out
        return json.loads((out / "summary.json").read_text())

    return run


def without_seconds(summary: dict) -> dict:
    """The summary less the one value that differs between two runs (the wall time)."""
    s = json.loads(json.dumps(summary))
    s["solver"].pop("seconds")
    return s
