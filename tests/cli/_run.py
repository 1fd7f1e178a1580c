"""Running the command line in a child process, as a user does (shared by the CLI tests)."""

from __future__ import annotations

import os
import subprocess
import sys

#: Seconds per command; every bundled case derives in well under 10 s.
SUBPROCESS_TIMEOUT = 120


def cli_env() -> dict[str, str]:
    """The environment without a case search path, so bundled cases are found."""
    env = dict(os.environ)
    env.pop("SYMRESP_CASES", None)
    return env


def run_cli(*args: str) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "symresp.cli", *args], capture_output=True,
                          text=True, timeout=SUBPROCESS_TIMEOUT, env=cli_env())
