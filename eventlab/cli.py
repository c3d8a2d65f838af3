"""The ``eventlab`` command line: arguments, printing, exit codes.

Each sub-command lives in its own module under :mod:`eventlab.commands` and
provides ``HELP`` (one line), ``add_arguments(parser)`` and ``run(args) -> int``.
Any :class:`~eventlab.errors.EventlabError` becomes one line on stderr and
exit status 2, with no traceback.
"""

from __future__ import annotations

import argparse
import importlib
import sys

from eventlab import __version__
from eventlab.errors import EventlabError

#: sub-command name -> module in eventlab.commands
COMMANDS = {
    "inspect": "inspect",
    "analyze": "analyze",
    "fault": "fault",
    "simulate": "simulate",
}


class _Parser(argparse.ArgumentParser):
    def error(self, message: str):  # one line, exit status 2, like argparse
        self.exit(2, f"eventlab: {message}\n")


def build_parser() -> argparse.ArgumentParser:
    parser = _Parser(prog="eventlab", description="Post-event analysis of line faults "
                     "from COMTRADE records.")
    parser.add_argument("--version", action="version", version=f"eventlab {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    for name, module_name in COMMANDS.items():
        module = importlib.import_module(f"eventlab.commands.{module_name}")
        p = sub.add_parser(name, help=module.HELP, description=module.HELP)
        module.add_arguments(p)
        p.set_defaults(_run=module.run)
    return parser


def main(argv: list[str] | None = None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    if getattr(args, "_run", None) is None:
        parser.print_help(sys.stderr)
        return 2
    try:
        return int(args._run(args) or 0)
    except EventlabError as exc:
        print(f"eventlab {args.command}: error: {exc}", file=sys.stderr)
        return 2
    except FileNotFoundError as exc:
        print(f"eventlab {args.command}: error: {exc.filename}: no such file", file=sys.stderr)
        return 2
    except BrokenPipeError:  # output piped into head and closed
        return 0


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
