"""The ``turnabout`` command line: a thin dispatcher over the sub-command modules."""

from __future__ import annotations

import argparse
import importlib
import sys

# (command name, module path). Modules that are missing (an optional part not
# installed) are skipped with a note in --help rather than breaking the CLI.
COMMAND_MODULES: tuple[tuple[str, str], ...] = (
    ("build", "turnabout.commands.build"),
    ("check", "turnabout.commands.check"),
    ("curve", "turnabout.commands.curve"),
    # Blender-side commands: imported only when asked for.
    ("scene", "turnabout_blender.commands"),
    ("render", "turnabout_blender.commands"),
    ("demo", "turnabout_blender.commands"),
)

BLENDER_COMMANDS = {"scene", "render", "demo"}


def _load(module_path: str):
    try:
        return importlib.import_module(module_path)
    except ModuleNotFoundError as exc:  # optional part not installed
        if exc.name and module_path.startswith(exc.name):
            return None
        raise


def build_parser(wanted: str | None = None) -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="turnabout",
        description="Build and check sphere eversions and plane-curve regular homotopies.",
    )
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    for name, module_path in COMMAND_MODULES:
        # Blender commands are only imported when that command is asked for
        # (importing Blender costs a second), or for the full --help listing.
        if name in BLENDER_COMMANDS and wanted not in (None, name):
            sub.add_parser(name, help=f"(Blender) see 'turnabout {name} --help'")
            continue
        module = _load(module_path)
        if module is None:
            continue
        module.add_parser(sub, name)
    return parser


def main(argv: list[str] | None = None) -> int:
    argv = list(sys.argv[1:] if argv is None else argv)
    wanted = next((a for a in argv if not a.startswith("-")), None)
    parser = build_parser(wanted)
    args = parser.parse_args(argv)
    if not getattr(args, "run", None):
        parser.print_help()
        return 0 if args.command is None else 2
    return int(args.run(args) or 0)


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
