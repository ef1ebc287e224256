"""The ``strainline`` command line.

Each subcommand lives in ``strainline.optimizer.cli.<name>`` and provides
``register(subparsers) -> argparse.ArgumentParser`` and ``run(args) -> int``.
Only :func:`main` turns our exceptions into one stderr line and an exit code:
0 success, 2 bad input, 1 internal failure.
"""
from __future__ import annotations

import argparse
import importlib
import sys
from collections.abc import Sequence

from strainline.optimizer import __version__
from strainline.optimizer.errors import InputError, StrainlineError

#: The subcommands, in the order ``strainline --help`` lists them.
COMMANDS: tuple[str, ...] = ("solve", "report", "bend", "line", "catalog")


class _Parser(argparse.ArgumentParser):
    """argparse that raises instead of printing usage and exiting, so errors stay one line."""

    def error(self, message: str) -> None:  # type: ignore[override]
        raise InputError(message, self.prog)


def build_parser() -> argparse.ArgumentParser:
    parser = _Parser(
        prog="strainline",
        description="Search flex stackups for controlled impedance and low copper strain in the bend. "
        "Results are estimates for concept work: verify with your fabricator and with flex testing.",
    )
    parser.add_argument("--version", action="version", version=f"strainline {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    sub.required = True
    for name in COMMANDS:
        try:
            module = importlib.import_module(f"strainline.optimizer.cli.{name}")
        except ModuleNotFoundError as exc:
            if exc.name == f"strainline.optimizer.cli.{name}":
                continue  # command not built in this version
            raise
        sp = module.register(sub)
        sp.set_defaults(_run=module.run)
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    """Run ``strainline`` with ``argv`` (default: ``sys.argv[1:]``) and return the exit code."""
    try:
        parser = build_parser()
        args = parser.parse_args(argv)
        return int(args._run(args) or 0)
    except StrainlineError as exc:
        print(f"strainline: error: {exc}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print("strainline: interrupted", file=sys.stderr)
        return 130
    except BrokenPipeError:
        return 0
    except Exception as exc:  # noqa: BLE001 - last line of defence: one line, exit 1
        print(f"strainline: internal error: {exc.__class__.__name__}: {exc}", file=sys.stderr)
        return 1


if __name__ == "__main__":  # pragma: no cover
    raise SystemExit(main())
