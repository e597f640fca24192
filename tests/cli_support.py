"""Helpers shared by the command-line tests (tests/test_cli_*.py): the repository root and
running ``python -m turnabout.cli`` in a subprocess with this checkout's code first on the path.
"""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

REPO = Path(__file__).resolve().parents[1]


def cli_env(**extra) -> dict:
    """This process's environment with the checkout's core/ and addon (by its package name)
    first on PYTHONPATH, plus ``extra`` variables."""
    env = dict(os.environ)
    env["PYTHONPATH"] = os.pathsep.join(
        [str(REPO / "core"), str(REPO), *filter(None, [env.get("PYTHONPATH")])]
    )
    env.update(extra)
    return env


def run_cli(*args, env=None, timeout=600, **kw) -> subprocess.CompletedProcess:
    """Run ``python -m turnabout.cli ARGS``; output captured as text."""
    return subprocess.run(
        [sys.executable, "-m", "turnabout.cli", *map(str, args)],
        capture_output=True,
        text=True,
        env=env or cli_env(),
        timeout=timeout,
        **kw,
    )
