"""Subcommands of ``activolt`` kept in modules of their own (the command line's layer).

Each module listed in :data:`COMMANDS` defines

- ``NAME`` — the subcommand's name on the command line;
- ``add_parser(commands)`` — adds its parser to the ``argparse`` sub-parsers and returns it;
- ``run(args, written) -> int`` — does the work, appends every file it writes to ``written``,
  returns the exit status; bad input raises :class:`activolt.errors.InputError` (exit 2).

``cli.main`` registers them in this order and handles errors, Ctrl-C and the list of written
files for all of them alike. Heavy imports belong inside ``run``, so that ``--help`` stays quick.
"""

from __future__ import annotations

#: Module names under ``activolt.commands``, in the order ``activolt --help`` lists them.
COMMANDS: tuple[str, ...] = ("archive", "ph", "upload")
