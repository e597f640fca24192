"""The ``turnabout`` command line: a thin dispatcher over the sub-command modules."""

from __future__ import annotations

import argparse
import importlib
import sys

# (command name, module path). Modules that are missing (an optional part not
# installed) are skipped with a note in --help rather than breaking the CLI.
COMMAND_MODULES: tuple[tuple[str, str], ...] = (
    ("build", "turnabout.commands.build_command"),
    ("check", "turnabout.commands.check_command"),
    ("curve", "turnabout.commands.curve_command"),
    ("sweep", "turnabout.commands.sweep_command"),
    ("tune", "turnabout.commands.sweep_command"),
    # Blender-side commands: imported only when asked for.
    ("scene", "turnabout_blender.blender_commands"),
    ("render", "turnabout_blender.blender_commands"),
    ("demo", "turnabout_blender.blender_commands"),
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


# Exit codes, the same in every command (README.md, "Exit codes").
EXIT_OK = 0  # success; every frame passes
EXIT_FAILS = 1  # the verdict fails, or a homotopy is impossible
EXIT_BAD_INPUT = 2  # bad input or an output that cannot be written
EXIT_CANCELLED = 130  # cancelled (Ctrl-C)


def _quiet_stdout() -> None:
    """After a closed pipe: point stdout at /dev/null so the exit flush cannot fail again."""
    import os

    try:
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
        os.close(devnull)
    except (OSError, ValueError):
        pass


def main(argv: list[str] | None = None) -> int:
    argv = list(sys.argv[1:] if argv is None else argv)
    wanted = next((a for a in argv if not a.startswith("-")), None)
    try:
        parser = build_parser(wanted)
        try:
            args = parser.parse_args(argv)
        except SystemExit as stop:  # argparse: --help (0) or a bad option (2, message shown)
            return stop.code if isinstance(stop.code, int) else EXIT_BAD_INPUT
        if not getattr(args, "run", None):
            parser.print_help()
            return EXIT_OK if args.command is None else EXIT_BAD_INPUT
        return int(args.run(args) or 0)
    except KeyboardInterrupt:
        name = f"turnabout {args.command}" if "args" in locals() else "turnabout"
        print(f"\n{name}: cancelled", file=sys.stderr)
        return EXIT_CANCELLED
    except BrokenPipeError:
        # the reader went away (turnabout curve info x.svg | head -1): stop quietly
        _quiet_stdout()
        return EXIT_OK


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
