"""Shared helpers of the Python package's tests: the repository's paths and the command-line
binary whose output the package must match."""

import json
import os
import pathlib
import subprocess

import pytest

REPO = pathlib.Path(__file__).resolve().parents[2]
DATA = REPO / "tests" / "data"
DEMO = REPO / "demo-data" / "telemetry-night.csv"


def cli_path():
    """The `beatfold` binary: $BEATFOLD_CLI, else the repository's release build."""
    p = os.environ.get("BEATFOLD_CLI")
    if p:
        return pathlib.Path(p)
    return REPO / "target" / "release" / "beatfold"


@pytest.fixture(scope="session")
def cli():
    exe = cli_path()
    if not exe.exists():
        pytest.fail(
            f"{exe} not found: build it with `cargo build --release` (or set BEATFOLD_CLI); "
            "the package's numbers are checked against it"
        )

    def run_json(*args):
        out = subprocess.run(
            [str(exe), *map(str, args), "--json"], check=True, capture_output=True, text=True
        )
        return json.loads(out.stdout)

    def run(*args):
        subprocess.run([str(exe), *map(str, args)], check=True, capture_output=True, text=True)

    run_json.plain = run
    return run_json
