"""Sub-commands of the ``turnabout`` command line.

Each module here defines ``add_parser(subparsers)`` and a ``run(args) -> int``.
Commands that need Blender live in the add-on's headless package and are looked
up by name at run time, so the core never imports Blender.
"""
