"""The ``strainline`` command line.

Each subcommand lives in ``strainline.optimizer.cli.<name>`` and provides
``register(subparsers) -> argparse.ArgumentParser`` and ``run(args) -> int``.
Only :func:`main` turns our exceptions into one stderr line and an exit code:
0 success, 2 bad input, 1 internal failure.

Start-up stays light: the parser imports only the module of the command being run.
``strainline --help`` lists the commands from :data:`COMMANDS` without importing any of them.
"""
from __future__ import annotations

import argparse
import errno
import importlib
import re
import sys
from collections.abc import Sequence

from strainline.optimizer.errors import InputError, StrainlineError, not_one_of

#: The subcommands, in the order ``strainline --help`` lists them, with their one-line summaries.
COMMANDS: dict[str, str] = {
    "solve": "search a study's stackups and write the Pareto front",
    "report": "rebuild report.html and handoff/ from an existing front.json (no new search)",
    "bend": "strain in every layer of one stackup at a bend, copper fatigue life and design-rule findings",
    "line": "impedance, width for a target impedance, and loss of one line (closed-form equations)",
    "catalog": "list the materials, copper foils, foil weights and fabrication capability",
}


def _our_words(message: str) -> tuple[str, str | None]:
    """argparse's error text reworded as ``(message, field)`` in the project's own words."""
    m = re.fullmatch(r"argument ([^:]+): (.*)", message, re.S)
    field, text = (m.group(1).split("/")[-1], m.group(2)) if m else (None, message)
    m = re.fullmatch(r"invalid choice: '(.*)' \(choose from (.*)\)", text, re.S)
    if m:
        allowed = [c.strip().strip("'") for c in m.group(2).split(",")]
        return not_one_of(field, m.group(1), allowed).message, field
    m = re.fullmatch(r"invalid (\w+) value: '(.*)'", text, re.S)
    if m:
        what = {"int": "an integer", "float": "a number"}.get(m.group(1), f"a valid {m.group(1).strip('_')}")
        return f"{m.group(2)!r} is not {what}", field
    if text == "expected one argument":
        return "needs a value", field
    m = re.fullmatch(r"the following arguments are required: (.*)", text, re.S)
    if m:
        return f"missing {m.group(1)} (required)", field
    m = re.fullmatch(r"unrecognized arguments: (.*)", text, re.S)
    if m:
        return f"unknown option or extra value: {m.group(1)}", field
    return text, field


class _Parser(argparse.ArgumentParser):
    """argparse that raises instead of printing usage and exiting, so errors stay one line."""

    def error(self, message: str) -> None:  # type: ignore[override]
        text, field = _our_words(message.replace("\r", "\\r").replace("\n", "\\n"))
        raise InputError(text, f"{self.prog} {field}" if field else self.prog)


class _Version(argparse.Action):
    """``--version``: the package version is looked up only when asked for."""

    def __init__(self, option_strings, dest=argparse.SUPPRESS, default=argparse.SUPPRESS, help=None):
        super().__init__(option_strings, dest=dest, default=default, nargs=0, help=help)

    def __call__(self, parser, namespace, values, option_string=None):
        from strainline.optimizer import __version__

        print(f"strainline {__version__}")
        parser.exit()


def _command_of(argv: Sequence[str]) -> str | None:
    """The subcommand named in ``argv`` (the first word that is not an option), if any."""
    for word in argv:
        if not word.startswith("-"):
            return word if word in COMMANDS else None
    return None


def build_parser(command: str | None = None) -> argparse.ArgumentParser:
    """The ``strainline`` parser with ``command`` (if given) fully registered.

    The other commands get a name and a summary only, so building the parser imports nothing
    heavy: ``build_parser()`` alone imports no command module at all.
    """
    parser = _Parser(
        prog="strainline",
        description="Search flex stackups for controlled impedance and low copper strain in the bend. "
        "Results are estimates for concept work: verify with your fabricator and with flex testing.",
    )
    parser.add_argument("--version", action=_Version, help="show the version and exit")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    sub.required = True
    for name, summary in COMMANDS.items():
        if name != command:
            sub.add_parser(name, help=summary, add_help=False)
            continue
        module = importlib.import_module(f"strainline.optimizer.cli.{name}")
        sp = module.register(sub)
        sp.set_defaults(_run=module.run)
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    """Run ``strainline`` with ``argv`` (default: ``sys.argv[1:]``) and return the exit code."""
    argv = list(sys.argv[1:] if argv is None else argv)
    try:
        command = _command_of(argv)
        if command is None:
            stray = [w for w in argv if w.startswith("-") and w not in ("-h", "--help", "--version")]
            if stray:
                raise InputError(f"unknown option {stray[0]!r} before the command; the commands are "
                                 + ", ".join(COMMANDS) + " (strainline COMMAND --help lists their options)",
                                 "strainline")
        parser = build_parser(command)
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
    except OSError as exc:
        if exc.errno == errno.ENAMETOOLONG:   # a path the user gave: bad input, not a failure
            name = str(exc.filename or "")
            name = name if len(name) <= 80 else f"{name[:40]}...{name[-30:]}"
            print(f"strainline: error: {name}: file name too long (the system allows about 255 bytes a name, "
                  "4,096 a path)", file=sys.stderr)
            return 2
        print(f"strainline: internal error: {exc.__class__.__name__}: {exc}", file=sys.stderr)
        return 1
    except Exception as exc:  # noqa: BLE001 - last line of defence: one line, exit 1
        print(f"strainline: internal error: {exc.__class__.__name__}: {exc}", file=sys.stderr)
        return 1


if __name__ == "__main__":  # pragma: no cover
    raise SystemExit(main())
