"""Every command shown in README.md and docs/*.md runs as written.

The ```sh blocks of README.md and every docs/*.md (found afresh each run, so new pages are
covered without touching this file) are read line by line. Each command runs through
``bash -o pipefail`` in a fresh folder per document, in document order (so a command can
read what an earlier one wrote), with the repository's ``addon/``, ``core/``,
``docs/examples/``, build.py and pyproject.toml copied in. ``turnabout``, ``python`` and
``blender`` (``-b [FILE]``, ``-o``, ``-s``, ``-e``, ``-a``, ``-P SCRIPT --``) are small shims
onto this interpreter (the bpy module stands in for the Blender program). A line may feed
values to one of them through ``printf ... | xargs -P N -I NAME`` (a parallel shell loop), or
compare two folders with ``diff -r``. Each must exit 0, or the code its comment documents
(``# exit 1``).

A line that is not one of those commands must be listed in NOT_RUN with the reason; any
other line fails the test, so nothing is skipped silently.

Inherently long commands (the full demo, the full regularity scan, the tuned table's
regeneration) run in a fast form by
default: LONG_FORMS appends options that shrink the work (later options win in argparse).
Set ``TURNABOUT_DOCS_FULL=1`` to run them exactly as written (about ten more minutes).
"""

from __future__ import annotations

import os
import re
import shutil
import subprocess
import sys
from pathlib import Path

import pytest
from references import require

REPO = Path(__file__).resolve().parents[1]
DOCS = [REPO / "README.md", *sorted((REPO / "docs").glob("*.md"))]

# Lines shown in the docs that this test does not run, each with its reason.
NOT_RUN = {
    'python3.11 -m pip install -e ".[blender]"': "installs packages into the environment",
    'python3.11 -m pip install -e ".[test]"': "installs packages into the environment",
    "python3.11 -m pytest": "runs this test suite (it would run itself)",
}

# Appended to a long command unless TURNABOUT_DOCS_FULL=1: prefix of the command ->
# (options, exit code of the fast form or None for the documented one). The fast demo's
# coarse mesh cannot follow the waves, so its verdict fails (1); as written it passes (0).
LONG_FORMS = {
    "turnabout demo": (
        "--frames 12 --spacing even --lon 64 --lat 16 --previews 1 --size 32x24 --samples 2",
        1,
    ),
    "turnabout build --scan-only": ("--scan-grid 24 19 6", None),
    # the shipped table's own command (about 20 minutes): one count, a coarse scan, the
    # reference windows given
    "turnabout tune --strips 8:16:9": (
        "--strips 8 --coarse 3 --rounds 0 --scan-grid 8 31 12 --tuck 0.586,0.97",
        None,
    ),
}
FULL = os.environ.get("TURNABOUT_DOCS_FULL") == "1"

# A line may also feed a list of values to one of those commands through xargs (a shell
# loop that runs chunks of work in parallel), or compare two output folders with diff.
_XARGS = r"printf '[^']*'( [-\w]+)+ \| xargs (-P \d+ )?-I \w+ "
RUNNABLE = re.compile(
    rf"^({_XARGS})?(turnabout\s|python (addon/)?build\.py|blender -b )|^diff -r [\w./-]+ [\w./-]+$"
)
NEEDS_BPY = re.compile(
    rf"^({_XARGS})?(turnabout (scene|render|demo)\b|python (addon/)?build\.py|blender )"
)
EXIT = re.compile(r"\bexit (\d+)\b")  # in the line's comment: "# exit 1", "...; exit 1"


def sh_commands(path: Path) -> list[str]:
    """Command lines of the ```sh blocks of a Markdown file, continuation lines joined."""
    out, inside, pending = [], False, ""
    for raw in path.read_text(encoding="utf-8").splitlines():
        line = raw.strip()
        if line.startswith("```"):
            inside = line in ("```sh", "```bash", "```shell") and not inside
            continue
        if not inside or not line or line.startswith("#"):
            continue
        if line.endswith("\\"):
            pending += line[:-1] + " "
            continue
        out.append(pending + line)
        pending = ""
    return out


def split_commands(line: str) -> list[str]:
    """``a && b`` -> [a, b] (each keeps the trailing comment of the line when it is last)."""
    return [part.strip() for part in line.split("&&")]


_COMMENT = re.compile(r"(?:^|\s)#")


def _command_part(cmd: str) -> str:
    # a shell comment starts at a "#" after a blank ("frame_####" is part of a word)
    return _COMMENT.split(cmd, 1)[0].strip()


def planned(path: Path) -> list[tuple[str, int]]:
    """(command to run, expected exit code) for every runnable command of a document."""
    plan = []
    for line in sh_commands(path):
        for cmd in split_commands(line):
            bare = _command_part(cmd)
            if bare in NOT_RUN:
                continue
            if not RUNNABLE.match(bare):
                raise AssertionError(
                    f"{path.name}: unknown command {cmd!r}: make it run here, or list it in "
                    "NOT_RUN with the reason"
                )
            m = EXIT.search((_COMMENT.split(cmd, 1) + [""])[1])
            code = int(m.group(1)) if m else 0
            run = bare
            if not FULL:
                for prefix, (extra, fast_code) in LONG_FORMS.items():
                    if bare.split("|")[0].strip().startswith(prefix):
                        head, bar, tail = bare.partition("|")
                        run = f"{head.rstrip()} {extra}" + (f" |{tail}" if bar else "")
                        code = code if fast_code is None else fast_code
            plan.append((run, code))
    return plan


def _needs_bpy(path: Path) -> bool:
    return any(NEEDS_BPY.match(cmd) for cmd, _ in planned(path))


def _params():
    out = []
    for doc in DOCS:
        marks = [pytest.mark.blender] if _needs_bpy(doc) else []
        out.append(pytest.param(doc, marks=marks, id=doc.name))
    return out


# The Blender program's command line, in the order Blender reads it, with the bpy module
# standing in for the program: -b [FILE] (background, open FILE), -o PATH (output path),
# -s N / -e N (first / last frame), -a (render the animation with the file's settings),
# -P SCRIPT -- ARGS (run a script). Anything else is refused, so a page cannot show an option
# this test does not run.
BLENDER_SHIM = """\
import runpy, sys
args = sys.argv[1:]
i = 0
while i < len(args):
    a = args[i]
    if a == "-b":
        if i + 1 < len(args) and not args[i + 1].startswith("-"):
            import bpy
            bpy.ops.wm.open_mainfile(filepath=args[i + 1], load_ui=False)
            i += 1
    elif a == "-o":
        import bpy
        bpy.context.scene.render.filepath = args[i + 1]
        i += 1
    elif a in ("-s", "-e"):
        import bpy
        setattr(bpy.context.scene, "frame_start" if a == "-s" else "frame_end", int(args[i + 1]))
        i += 1
    elif a == "-a":
        import bpy
        bpy.ops.render.render(animation=True)
    elif a == "-P":
        sys.argv = ["blender", *args]  # as Blender passes them: the script reads after --
        runpy.run_path(args[i + 1], run_name="__main__")
        sys.exit(0)
    else:
        sys.exit(f"blender shim: unsupported option {a}")
    i += 1
"""


def _shims(bindir: Path) -> None:
    py = sys.executable
    bindir.mkdir()
    (bindir / "turnabout").write_text(f'#!/bin/sh\nexec "{py}" -m turnabout.cli "$@"\n')
    (bindir / "python").write_text(f'#!/bin/sh\nexec "{py}" "$@"\n')
    (bindir / "blender_shim.py").write_text(BLENDER_SHIM)
    (bindir / "blender").write_text(f'#!/bin/sh\nexec "{py}" "{bindir / "blender_shim.py"}" "$@"\n')
    for f in bindir.iterdir():
        f.chmod(0o755)


def _workspace(tmp_path: Path) -> Path:
    work = tmp_path / "work"
    work.mkdir()
    ignore = shutil.ignore_patterns("__pycache__", "*.pyc", "dist", "wheels")
    for sub in ("addon", "core", "tools", "docs/examples"):
        if (REPO / sub).is_dir():
            shutil.copytree(REPO / sub, work / sub, ignore=ignore)
    shutil.copy2(REPO / "build.py", work / "build.py")
    shutil.copy2(REPO / "pyproject.toml", work / "pyproject.toml")  # build.py reads package-data
    return work


def test_every_sh_block_line_is_known():
    # the extractor sees every page; an unknown line fails here, with its document named
    for doc in DOCS:
        planned(doc)
    assert any(planned(doc) for doc in DOCS)


def test_the_extractor_reads_blocks_chains_and_documented_codes(tmp_path):
    page = tmp_path / "page.md"
    page.write_text(
        "text\n```sh\nturnabout build --out a.npz   # note\n"
        "turnabout curve morph a.svg b.svg --out x.npz  # exit 1: different\n"
        "turnabout check f/   # numbered files; exit 1\n"
        "blender -b s.blend -o //f/frame_#### -a  # the frames\n"
        "python3.11 -m pytest\n```\n```python\nturnabout = 1\n```\n"
    )
    assert planned(page) == [
        ("turnabout build --out a.npz", 0),
        ("turnabout curve morph a.svg b.svg --out x.npz", 1),
        ("turnabout check f/", 1),
        ("blender -b s.blend -o //f/frame_#### -a", 0),
    ]
    page.write_text("```sh\nmake everything\n```\n")
    with pytest.raises(AssertionError, match="unknown command"):
        planned(page)


@pytest.mark.parametrize("doc", _params())
def test_documented_commands_run_as_written(doc, tmp_path):
    plan = planned(doc)
    if not plan:
        return  # a page without commands
    if any("--plot" in cmd for cmd, _ in plan):
        # a page that shows the plot extra at work needs it installed (test-core has it)
        require("matplotlib")  # {doc.name} uses the 'plot' extra
    work = _workspace(tmp_path)
    _shims(tmp_path / "bin")
    env = dict(os.environ)
    env["PATH"] = f"{tmp_path / 'bin'}{os.pathsep}{env.get('PATH', '')}"
    env["PYTHONPATH"] = os.pathsep.join(
        [str(REPO / "core"), str(REPO), *filter(None, [env.get("PYTHONPATH")])]
    )
    env["BLENDER_USER_RESOURCES"] = str(tmp_path / "blender-user-resources")
    for cmd, code in plan:
        proc = subprocess.run(
            ["bash", "-o", "pipefail", "-c", cmd],
            cwd=work,
            env=env,
            capture_output=True,
            text=True,
            timeout=900,
        )
        assert proc.returncode == code, (
            f"{doc.name}: {cmd!r} exited {proc.returncode}, documented {code}\n"
            f"stdout:\n{proc.stdout[-2000:]}\nstderr:\n{proc.stderr[-2000:]}"
        )
        assert "Traceback" not in proc.stderr, f"{doc.name}: {cmd!r}\n{proc.stderr[-2000:]}"
