"""The repository's layout: what the design promises about folders and files.

Common practice (no source): a package list that names every folder, no symbolic links in
the repository (they break on checkouts without link support), and short source files.
"""

from __future__ import annotations

import re
import subprocess
import tomllib
from pathlib import Path

REPO = Path(__file__).resolve().parents[1]
LONG = 600  # lines; a longer source file says why in its first lines ("Long file: ...")


def _tracked() -> list[tuple[str, str]]:
    out = subprocess.run(
        ["git", "ls-files", "-s"], cwd=REPO, capture_output=True, text=True, check=True
    ).stdout
    rows = []
    for line in out.splitlines():
        meta, path = line.split("\t", 1)
        rows.append((meta.split()[0], path))
    return rows


def test_the_repository_holds_no_symbolic_link():
    links = [path for mode, path in _tracked() if mode == "120000"]
    assert links == []


def test_the_package_list_names_every_package_folder():
    cfg = tomllib.loads((REPO / "pyproject.toml").read_text())["tool"]["setuptools"]
    listed = set(cfg["packages"])
    roots = {name: REPO / folder for name, folder in cfg["package-dir"].items() if name}
    found = {"turnabout_blender"} if (REPO / "addon" / "__init__.py").is_file() else set()
    core = REPO / cfg["package-dir"][""]
    for init in core.rglob("__init__.py"):
        found.add(".".join(init.parent.relative_to(core).parts))
    assert listed == found
    assert roots == {"turnabout_blender": REPO / "addon"}


def test_the_top_level_is_the_documented_one():
    top = {path.split("/", 1)[0] for _, path in _tracked()}
    for needed in ("README.md", "DEVELOPERS.md", "addon", "core", "tests", "blend_samples",
                   "build.py"):
        assert needed in top, needed
    assert not (REPO / "addon" / "build.py").exists()


def test_no_source_file_is_long_without_a_reason_at_its_top():
    long_files = []
    for _, path in _tracked():
        if not path.endswith(".py") or not path.startswith(("core/", "addon/")):
            continue
        lines = (REPO / path).read_text(encoding="utf-8").splitlines()
        if len(lines) > LONG and not any("Long file:" in ln for ln in lines[:20]):
            long_files.append((path, len(lines)))
    assert long_files == []


def test_the_docs_cite_only_files_a_reader_can_open():
    # every file named in README.md, DEVELOPERS.md and docs/ is in the repository
    names = {path for _, path in _tracked()}
    basenames = {p.rsplit("/", 1)[-1] for p in names}
    pages = [REPO / "README.md", REPO / "DEVELOPERS.md", *sorted((REPO / "docs").glob("*.md"))]
    missing = []
    for page in pages:
        for token in set(re.findall(r"[A-Za-z0-9_./-]+\.(?:md|py)\b", page.read_text())):
            token = token.strip("./")
            if token.startswith("_"):  # a name pattern such as `*_command.py`
                continue
            if "/" in token:
                ok = token in names or any(n.endswith("/" + token) for n in names)
            else:
                ok = token in basenames
            if not ok:
                missing.append((page.name, token))
    assert missing == []
