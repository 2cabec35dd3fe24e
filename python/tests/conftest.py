"""Shared helpers: the CLI binary, an invented fixture table, running the CLI.

The fixture is the one of tests/common/mod.rs (invented data): x1 ~ U(-1, 1),
x2 ~ U(0, 2), y = 3 sin(2 x1) + 0.5 x2 + N(0, 0.2^2); drawn here with numpy.
"""

from __future__ import annotations

import os
import subprocess
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

ROOT = Path(__file__).resolve().parents[2]

#: Settings small enough for a test: two hidden-unit counts, one start each.
SMALL = {"hidden": "1..2", "restarts": 1, "seed": 5}
SMALL_CLI = ["--hidden", "1..2", "--restarts", "1", "--seed", "5"]


def _binary() -> Path:
    if os.environ.get("METTLE_BIN"):
        return Path(os.environ["METTLE_BIN"])
    target = os.environ.get("CARGO_TARGET_DIR", str(Path.home() / ".cache/mettle/target"))
    return Path(target) / "release" / "mettle"


@pytest.fixture(scope="session")
def mettle_bin() -> Path:
    b = _binary()
    if not b.exists():
        pytest.fail(f"the mettle binary is not at {b}: build it (cargo build --release) or set METTLE_BIN")
    return b


def fixture_frame(n: int, seed: int) -> pd.DataFrame:
    """n rows of the invented fixture."""
    rng = np.random.default_rng(seed)
    x1 = rng.uniform(-1.0, 1.0, n)
    x2 = rng.uniform(0.0, 2.0, n)
    y = 3.0 * np.sin(2.0 * x1) + 0.5 * x2 + rng.normal(0.0, 0.2, n)
    return pd.DataFrame({"x1": x1, "x2": x2, "y": y})


def write_csv(df: pd.DataFrame, path: Path) -> Path:
    """The frame as CSV; floats in their shortest exact form, so that the CLI
    reads back exactly the values the frame holds (checked)."""
    df.to_csv(path, index=False)
    back = pd.read_csv(path)
    num = df.select_dtypes("number").columns
    assert np.array_equal(back[num].to_numpy(), df[num].to_numpy(), equal_nan=True)
    return path


def run_cli(mettle_bin: Path, args: list[str], cwd: Path) -> subprocess.CompletedProcess:
    env = dict(os.environ, OPENBLAS_NUM_THREADS="1")
    return subprocess.run([str(mettle_bin), *args], cwd=cwd, capture_output=True, text=True, env=env)


def cli_error(p: subprocess.CompletedProcess) -> str:
    """The message of a failed CLI run: its `mettle: error: ` line."""
    assert p.returncode != 0, p.stdout
    lines = [l for l in p.stderr.splitlines() if l.startswith("mettle: error: ")]
    assert lines, p.stderr
    return lines[-1][len("mettle: error: ") :]
