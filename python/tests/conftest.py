"""Shared fixtures of the Python package's tests: the command-line binary (the reference
the package must equal byte for byte), a runner for it, and the bundled profiles.

The binary is NOISEWRIGHT_BIN when set (.ci/run sets it); otherwise it is built here with
`cargo build --release --locked --bin noisewright` in the repository.
"""

import json
import os
import subprocess
from pathlib import Path

import pytest

REPO = Path(__file__).resolve().parents[2]
PROFILES = sorted((REPO / "profiles").glob("*.toml"))


def pytest_report_header(config):
    import numpy
    import scipy

    import noisewright

    return (f"noisewright {noisewright.__version__} from {noisewright.__file__}; "
            f"numpy {numpy.__version__}, scipy {scipy.__version__}")


def _build_binary() -> Path:
    out = subprocess.run(
        ["cargo", "build", "--release", "--locked", "--bin", "noisewright",
         "--message-format=json-render-diagnostics"],
        cwd=REPO, check=True, stdout=subprocess.PIPE, text=True,
    ).stdout
    for line in out.splitlines():
        msg = json.loads(line)
        if msg.get("reason") == "compiler-artifact" and msg.get("executable"):
            return Path(msg["executable"])
    raise RuntimeError("cargo built no noisewright executable")


@pytest.fixture(scope="session")
def cli_binary() -> Path:
    given = os.environ.get("NOISEWRIGHT_BIN")
    path = Path(given) if given else _build_binary()
    assert path.is_file(), f"no noisewright binary at {path}"
    return path


@pytest.fixture(scope="session")
def cli(cli_binary):
    """Runs `noisewright ARGS...`; returns the CompletedProcess (bytes). Checks the exit code
    when `code` is given."""

    def run(*args, cwd=None, code=0):
        p = subprocess.run([str(cli_binary), *map(str, args)], cwd=cwd,
                           stdout=subprocess.PIPE, stderr=subprocess.PIPE)
        if code is not None:
            assert p.returncode == code, (
                f"noisewright {' '.join(map(str, args))}: exit {p.returncode}, "
                f"stderr: {p.stderr.decode(errors='replace')}"
            )
        return p

    return run

# A bundled profile with 1/f, white and thermal sources (microvolt scale).
MIC = REPO / "profiles" / "mic-preamp.toml"
