"""The reference libraries the tests compare against (scipy, trimesh, matplotlib,
svgpathtools, dask.distributed: all in the ``test`` and ``test-core`` extras).

A missing one is an error, not a skip: the documented test command installs them, and a
comparison that silently skips is a check that cannot fail. On an interpreter that lacks
them on purpose (a bare numpy-2 run of the core), set TURNABOUT_ALLOW_MISSING_REFS=1 to
skip the tests that need a missing one instead. Blender (bpy) is not one of these: tests
that need it carry the ``blender`` marker and skip without it.
"""

from __future__ import annotations

import importlib
import os
from types import ModuleType

import pytest

ALLOW_MISSING = "TURNABOUT_ALLOW_MISSING_REFS"


def require(module: str) -> ModuleType:
    """Import ``module``; if it is missing, fail (or skip when ALLOW_MISSING is "1")."""
    try:
        return importlib.import_module(module)
    except ImportError as exc:
        why = f"the reference library {module!r} is missing ({exc})"
        if os.environ.get(ALLOW_MISSING) == "1":
            pytest.skip(f"{why}; skipped because {ALLOW_MISSING}=1", allow_module_level=True)
        pytest.fail(
            f"{why}: install the 'test' extra (or 'test-core' for a run without Blender), "
            f"or set {ALLOW_MISSING}=1 to skip the tests that need it",
            pytrace=False,
        )
        raise  # unreachable: pytest.fail raises
