"""Shared helpers: the repository root and the command-line binary the module is held to."""

import json
import os
import shutil
import struct
import subprocess
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[2]


def cli_binary() -> str:
    """The `concord` binary: $CONCORD_BIN, else the release build of the repository."""
    given = os.environ.get("CONCORD_BIN")
    if given:
        return given
    target = Path(os.environ.get("CARGO_TARGET_DIR", ROOT / "target"))
    if not target.is_absolute():
        target = ROOT / target
    built = target / "release" / "concord"
    if built.exists():
        return str(built)
    found = shutil.which("concord")
    if found:
        return found
    raise RuntimeError("no concord binary: run `cargo build --release` or set CONCORD_BIN")


def run_cli(*args: str, expect_ok: bool = True) -> subprocess.CompletedProcess:
    """Runs the binary from the repository root (so that paths read the same)."""
    done = subprocess.run(
        [cli_binary(), *args], cwd=ROOT, capture_output=True, text=True, check=False
    )
    if expect_ok and done.returncode != 0:
        raise AssertionError(f"concord {' '.join(args)} failed: {done.stderr}")
    return done


def cli_json(*args: str):
    return json.loads(run_cli(*args).stdout)


def assert_bits_equal(a, b, where="$"):
    """Equal values, floats compared by their 64 bits (so 0.0 and -0.0 differ)."""
    if isinstance(a, float) or isinstance(b, float):
        assert isinstance(a, float) and isinstance(b, float), f"{where}: {a!r} vs {b!r}"
        assert struct.pack("<d", a) == struct.pack("<d", b), f"{where}: {a!r} vs {b!r}"
    elif isinstance(a, dict):
        assert isinstance(b, dict) and a.keys() == b.keys(), f"{where}: keys differ"
        for k in a:
            assert_bits_equal(a[k], b[k], f"{where}.{k}")
    elif isinstance(a, list):
        assert isinstance(b, list) and len(a) == len(b), f"{where}: lengths differ"
        for i, (x, y) in enumerate(zip(a, b)):
            assert_bits_equal(x, y, f"{where}[{i}]")
    else:
        assert a == b and type(a) is type(b), f"{where}: {a!r} vs {b!r}"


@pytest.fixture(autouse=True)
def _at_root(monkeypatch):
    """Relative paths are read from the repository root, as the CLI runs are."""
    monkeypatch.chdir(ROOT)
