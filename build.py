"""Build the installable Turnabout extension zip, validate it, optionally install it.

    python build.py                      # -> dist/turnabout-<version>.zip
    python build.py --install USER_DIR   # also install + enable into that Blender user folder

The Blender-free core (core/turnabout) is bundled as a pure-Python wheel listed in the
manifest. Building and validating use Blender's own extension tool where it is
installed: inside the bpy module (<site-packages>/bpy/<version>/scripts/addons_core/
bl_pkg/cli/blender_ext.py) or a path given with --blender-ext.
"""

from __future__ import annotations

import argparse
import base64
import glob
import hashlib
import importlib.util
import os
import re
import shutil
import subprocess
import sys
import tempfile
import zipfile

REPO = os.path.dirname(os.path.abspath(__file__))
ADDON = os.path.join(REPO, "addon")
CORE = os.path.join(REPO, "core", "turnabout")
MANIFEST = "blender_manifest.toml"


class BuildError(RuntimeError):
    pass


def core_version() -> str:
    with open(os.path.join(CORE, "__init__.py"), encoding="utf-8") as fh:
        m = re.search(r'^__version__\s*=\s*"([^"]+)"', fh.read(), re.M)
    if not m:
        raise BuildError("core/turnabout/__init__.py has no __version__")
    return m.group(1)


def _record_line(name: str, data: bytes) -> str:
    digest = base64.urlsafe_b64encode(hashlib.sha256(data).digest()).rstrip(b"=").decode()
    return f"{name},sha256={digest},{len(data)}"


def core_data() -> list[str]:
    """The core's data files: pyproject's [tool.setuptools.package-data], as paths."""
    import tomllib

    with open(os.path.join(REPO, "pyproject.toml"), "rb") as fh:
        table = tomllib.load(fh)["tool"]["setuptools"].get("package-data", {})
    out = []
    for package, names in sorted(table.items()):
        folder = os.path.join(os.path.dirname(CORE), *package.split("."))
        for name in names:
            path = os.path.join(folder, name)
            if not os.path.isfile(path):
                raise BuildError(f"pyproject.toml package-data names {path!r}, which is missing")
            out.append(path)
    return out


def build_core_wheel(out_dir: str) -> str:
    """A pure-Python wheel of core/turnabout (sources and package data); returns its path."""
    version = core_version()
    dist_info = f"turnabout-{version}.dist-info"
    path = os.path.join(out_dir, f"turnabout-{version}-py3-none-any.whl")
    files: list[tuple[str, bytes]] = []
    for src in sorted(glob.glob(os.path.join(CORE, "**", "*.py"), recursive=True)) + core_data():
        rel = os.path.relpath(src, os.path.dirname(CORE)).replace(os.sep, "/")
        with open(src, "rb") as fh:
            files.append((rel, fh.read()))
    meta = (
        "Metadata-Version: 2.1\nName: turnabout\nVersion: " + version + "\n"
        "Summary: Blender-free core of Turnabout (sphere eversions, regular homotopies)\n"
        "Requires-Python: >=3.11\nRequires-Dist: numpy>=1.26\n"
    ).encode()
    wheel = (
        b"Wheel-Version: 1.0\nGenerator: turnabout-build\n"
        b"Root-Is-Purelib: true\nTag: py3-none-any\n"
    )
    files += [
        (f"{dist_info}/METADATA", meta),
        (f"{dist_info}/WHEEL", wheel),
        (f"{dist_info}/top_level.txt", b"turnabout\n"),
    ]
    record = "\n".join(_record_line(n, d) for n, d in files) + f"\n{dist_info}/RECORD,,\n"
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as zf:
        for name, data in files:
            zf.writestr(name, data)
        zf.writestr(f"{dist_info}/RECORD", record)
    return path


def find_blender_ext(explicit: str | None = None) -> str:
    """Blender's own extension tool, where it is installed."""
    if explicit:
        if not os.path.isfile(explicit):
            raise BuildError(f"--blender-ext: no such file {explicit!r}")
        return explicit
    spec = importlib.util.find_spec("bpy")
    if spec is None or not spec.submodule_search_locations:
        raise BuildError(
            "Blender's extension tool not found: install the bpy module "
            "(pip install -e '.[blender]') or pass --blender-ext "
            "<blender>/<version>/scripts/addons_core/bl_pkg/cli/blender_ext.py"
        )
    for base in spec.submodule_search_locations:
        hits = sorted(
            glob.glob(
                os.path.join(base, "*", "scripts", "addons_core", "bl_pkg", "cli", "blender_ext.py")
            )
        )
        if hits:
            return hits[-1]
    raise BuildError("the installed bpy module has no blender_ext.py; pass --blender-ext")


def _stage_sources(stage: str, wheel: str) -> None:
    shutil.copytree(
        ADDON, stage, ignore=shutil.ignore_patterns("__pycache__", "*.pyc", "wheels", "dist")
    )
    os.makedirs(os.path.join(stage, "wheels"))
    shutil.copy2(wheel, os.path.join(stage, "wheels"))
    manifest = os.path.join(stage, MANIFEST)
    with open(manifest, encoding="utf-8") as fh:
        text = fh.read()
    line = f'wheels = ["./wheels/{os.path.basename(wheel)}"]'
    text, n = re.subn(r"^wheels\s*=.*$", line, text, flags=re.M)
    if n != 1:
        raise BuildError(f"{MANIFEST}: expected one 'wheels = [...]' line, found {n}")
    with open(manifest, "w", encoding="utf-8") as fh:
        fh.write(text)


def _run_tool(tool: str, *args: str) -> str:
    proc = subprocess.run([sys.executable, tool, *args], capture_output=True, text=True)
    if proc.returncode != 0:
        raise BuildError(f"blender_ext {args[0]} failed:\n{proc.stdout}{proc.stderr}")
    return proc.stdout


def build(
    out_dir: str, blender_ext: str | None = None, validate: bool = True, say=None
) -> str:
    """Build (and validate) the extension zip into ``out_dir``; returns its path.

    ``say(text)`` (optional) hears what was checked and by what.
    """
    say = say or (lambda text: None)
    tool = find_blender_ext(blender_ext)
    out_dir = os.path.abspath(out_dir)
    os.makedirs(out_dir, exist_ok=True)
    zip_path = os.path.join(out_dir, f"turnabout-{core_version()}.zip")
    with tempfile.TemporaryDirectory() as tmp:
        wheel = build_core_wheel(tmp)
        stage = os.path.join(tmp, "turnabout")
        _stage_sources(stage, wheel)
        part = os.path.join(tmp, "out.zip")
        _run_tool(tool, "build", "--source-dir", stage, "--output-filepath", part)
        say(f"built with Blender's extension tool {tool} (blender_ext.py build)")
        if validate:
            said = _run_tool(tool, "validate", part).strip()
            last = said.splitlines()[-1].replace(part, zip_path) if said else "no message"
            say(
                "validated by Blender's extension validator (blender_ext.py validate, which "
                f"reads the zip and checks its {MANIFEST}): {last}"
            )
        else:
            say("not validated (--no-validate)")
        shutil.move(part, zip_path)
    return zip_path


INSTALL_SCRIPT = """
import sys, bpy
zip_path = sys.argv[-1]
bpy.ops.extensions.package_install_files(
    filepath=zip_path, repo="user_default", enable_on_install=True
)
bpy.ops.wm.save_userpref()
import addon_utils
print("enabled:", "bl_ext.user_default.turnabout" in {m.__name__ for m in addon_utils.modules()})
"""


def install(zip_path: str, user_dir: str) -> None:
    """Install and enable the zip into the Blender user folder ``user_dir`` (a fresh process)."""
    env = dict(os.environ, BLENDER_USER_RESOURCES=os.path.abspath(user_dir))
    proc = subprocess.run(
        [sys.executable, "-c", INSTALL_SCRIPT, zip_path], env=env, capture_output=True, text=True
    )
    if proc.returncode != 0:
        raise BuildError(f"install failed:\n{proc.stdout}{proc.stderr}")
    if "enabled: True" not in proc.stdout:
        raise BuildError(f"installed but not enabled:\n{proc.stdout}{proc.stderr}")


def main(argv: list[str] | None = None) -> int:
    p = argparse.ArgumentParser(description="Build the Turnabout extension zip.")
    p.add_argument(
        "--out", default=os.path.join(REPO, "dist"), help="output folder (default dist/)"
    )
    p.add_argument("--blender-ext", default=None, help="path of Blender's blender_ext.py")
    p.add_argument("--no-validate", action="store_true", help="skip Blender's validator")
    p.add_argument(
        "--install",
        metavar="USER_DIR",
        default=None,
        help="also install and enable into this Blender user folder (BLENDER_USER_RESOURCES)",
    )
    args = p.parse_args(argv)
    try:
        path = build(args.out, args.blender_ext, validate=not args.no_validate, say=print)
        print(f"built {path}")
        if args.install:
            install(path, args.install)
            print(f"installed into {os.path.abspath(args.install)}")
    except BuildError as exc:
        print(f"build: {exc}", file=sys.stderr)
        return 1
    return 0


if __name__ == "__main__":
    sys.exit(main())
