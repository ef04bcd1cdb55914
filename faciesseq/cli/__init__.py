"""The ``faciesseq`` command line: a thin layer over the Python API.

Only this package prints, exits or reads ``sys.argv``. Each subcommand lives in
its own module here, exposing ``register(subparsers)``; heavy libraries are
imported inside the command functions so that ``faciesseq --help`` and short
commands start fast.

Exit codes: 0 success; 1 the data has errors; 2 usage or configuration error;
130 interrupted (Ctrl-C); 143 terminated (SIGTERM, cleaned up as after Ctrl-C).
"""

from __future__ import annotations

import argparse
import importlib
import re
import signal
import sys
from collections.abc import Sequence
from contextlib import contextmanager

from faciesseq._version import __version__

#: Subcommand modules, in the order ``--help`` lists them.
COMMANDS = (
    "check",
    "scheme",
    "markov",
    "simulate",
    "fit",
    "decode",
    "relabel",
    "correlate",
    "validate",
    "appendix",
    "demo",
)

EPILOG = """\
examples:
  faciesseq demo                                   run the whole job on the bundled demo cores
  faciesseq check cores.csv --scheme configs/scheme-shoreface.yaml
  faciesseq check logs.csv --layout samples --column core="Well Name" \\
      --column depth=Depth --column facies=Facies --units ft
  faciesseq scheme draft cores.xlsx -o my-scheme.yaml
  faciesseq markov cores.csv --scheme my-scheme.yaml --format json

Depth is positive downward; successions are analysed base to top (older to younger).
Interpretations are an aid to a geologist's judgement, not a substitute for it.
"""


class HelpFormatter(argparse.HelpFormatter):
    """Examples kept as written, one-paragraph descriptions wrapped; every default shown.

    A description or epilog written over several lines (the examples) is kept
    as it is, as :class:`argparse.RawDescriptionHelpFormatter` does; a
    one-line description is wrapped to the terminal. Like
    :class:`argparse.ArgumentDefaultsHelpFormatter`, each option's default is
    added to its help, but only where there is one worth stating (not
    ``None``, ``False`` or an empty list) and the help does not mention it.
    """

    def _fill_text(self, text: str, width: int, indent: str) -> str:
        if "\n" in text.strip():
            return "".join(indent + line for line in text.splitlines(keepends=True))
        return super()._fill_text(text, width, indent)

    def _get_help_string(self, action: argparse.Action) -> str:
        text = action.help or ""
        default = action.default
        empty = default is None or default is False or default == [] or default == argparse.SUPPRESS
        if empty or "default" in text:
            return text
        if not action.option_strings and action.nargs not in ("?", "*"):
            return text
        return f"{text} (default: %(default)s)"


class _Parser(argparse.ArgumentParser):
    """argparse with exit code 2 and a one-line error for usage mistakes; options are
    given whole (no abbreviations).

    Every parser shows its options' defaults and keeps its description and
    examples as written (:class:`HelpFormatter`).
    """

    def __init__(self, *args, **kwargs) -> None:
        kwargs.setdefault("formatter_class", HelpFormatter)
        # no abbreviated options: `decode --unit bed` read as `--units bed` (fit has
        # --unit, decode only --units) answered about depth units
        kwargs.setdefault("allow_abbrev", False)
        super().__init__(*args, **kwargs)

    def parse_known_args(self, args=None, namespace=None):
        # Options no parser knows are refused by the (sub)command that read them, so that
        # the one-line error names it (argparse leaves them to the top parser).
        namespace, extras = super().parse_known_args(args, namespace)
        if extras:
            self.error(f"unrecognized arguments: {' '.join(extras)}")
        return namespace, extras

    def error(self, message: str) -> None:
        sys.stderr.write(f"{self.prog}: {usage_message(message)} (see {self.prog} --help)\n")
        raise SystemExit(2)


_CHOICE = re.compile(
    r"argument (?P<option>.+?): invalid choice: (?P<value>.*) \(choose from (?P<choices>.*)\)$"
)
_ARGUMENT = re.compile(r"argument (?P<option>.+?): (?P<text>.*)$")


def usage_message(message: str) -> str:
    """argparse's error as one line that names the option first.

    ``argument --unit: invalid choice: 'bed' (choose from 'beds', 'intervals')`` reads
    ``--unit: 'bed' is not one of beds, intervals``.
    """
    message = " ".join(message.split())
    choice = _CHOICE.match(message)
    if choice:
        choices = ", ".join(name.strip().strip("'") for name in choice["choices"].split(","))
        return f"{choice['option']}: {choice['value']} is not one of {choices}"
    argument = _ARGUMENT.match(message)
    if argument:
        return f"{argument['option']}: {argument['text']}"
    return message


def build_parser() -> argparse.ArgumentParser:
    parser = _Parser(
        prog="faciesseq",
        description=(
            "Facies successions of described cores: transition statistics, Markov-order and "
            "cyclicity tests, a systems-tract hidden Markov model, surface probabilities and a "
            "reproducible statistical appendix."
        ),
        epilog=EPILOG,
    )
    parser.add_argument("--version", action="version", version=f"faciesseq {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    for name in COMMANDS:
        try:
            module = importlib.import_module(f"faciesseq.cli.{name}")
        except ModuleNotFoundError as exc:
            if exc.name == f"faciesseq.cli.{name}":
                continue  # command not built yet
            raise
        module.register(sub)
    return parser


class Terminated(KeyboardInterrupt):
    """SIGTERM, raised like Ctrl-C so that every temporary file and folder is cleaned up."""


def _terminate(signum, frame) -> None:
    raise Terminated


@contextmanager
def _sigterm_as_interrupt():
    """While a command runs, SIGTERM unwinds like Ctrl-C (only in the main thread)."""
    try:
        previous = signal.signal(signal.SIGTERM, _terminate)
    except (ValueError, OSError):  # not the main thread, or no SIGTERM here
        yield
        return
    try:
        yield
    finally:
        signal.signal(signal.SIGTERM, previous)


def main(argv: Sequence[str] | None = None) -> int:
    """Run the command line; return the exit code."""
    from faciesseq.errors import FaciesseqError

    parser = build_parser()
    args = parser.parse_args(argv)
    if not getattr(args, "func", None):
        parser.print_help()
        return 2
    try:
        with _sigterm_as_interrupt():
            from faciesseq.cli._common import apply_source_file

            apply_source_file(args)  # a YAML SOURCE's scheme: when --scheme is not given
            code = int(args.func(args) or 0)
            if getattr(args, "settings_line", None):  # units and scheme in force
                sys.stderr.write(args.settings_line + "\n")
            return code
    except FaciesseqError as exc:
        # one line, whatever the message holds (a parser's trailing newline, a name's)
        message = " ".join(line.strip() for line in str(exc).splitlines() if line.strip())
        sys.stderr.write(f"faciesseq {args.command}: {message}\n")
        return exc.exit_code
    except Terminated:
        sys.stderr.write("faciesseq: terminated\n")
        return 143
    except KeyboardInterrupt:
        sys.stderr.write("faciesseq: interrupted\n")
        return 130
    except BrokenPipeError:
        return 0
    finally:
        from faciesseq.parallel import stop_local_workers

        stop_local_workers()  # no worker process outlives the command
