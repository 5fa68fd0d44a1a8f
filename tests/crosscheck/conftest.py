"""Shared helpers for the cross-checks: load the values the Rust tests exported."""
import json
import os
import pathlib

import pytest

EXPORT_DIR = pathlib.Path(
    os.environ.get(
        "BEAMFLOOR_CROSSCHECK_DIR",
        pathlib.Path(__file__).resolve().parents[2] / "target" / "crosscheck",
    )
)


def load_export(name):
    """Load `<name>.json` written by a Rust test; fail loudly if the Rust side did not run."""
    path = EXPORT_DIR / f"{name}.json"
    if not path.exists():
        pytest.fail(f"{path} is missing: run `cargo test --workspace --release` first "
                    "(scripts/test.sh does both)")
    with open(path) as f:
        return json.load(f)
