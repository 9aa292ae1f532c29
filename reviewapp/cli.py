"""The one entry point: ``reviewapp [PATH]`` opens the workbench; subcommands run headless.

Each subcommand lives in its own module under ``reviewapp.commands`` exposing
``add_parser(subparsers)`` and ``run(args) -> int``. Nothing reaches the user as a traceback:

- ``ReviewError`` (bad input the user can act on): one line on stderr, exit 2;
- ``OSError`` (a path that cannot be read or written): one line naming the path and the
  problem, exit 2;
- ``BrokenPipeError`` (output piped into ``head``, say): quiet, exit 141 (128 + SIGPIPE, what
  a shell reports for a command stopped by a closed pipe);
- anything else is a bug: one line ("internal error ... please report"), the traceback goes to
  a log file in the user cache folder, exit 3.

Exit codes are listed in ``EXIT_CODES`` and in ``reviewapp --help``.
"""

from __future__ import annotations

import argparse
import importlib
import os
import sys
import textwrap
import traceback
from collections.abc import Sequence
from datetime import UTC, datetime

from reviewapp import CLINICAL_CAUTION, __version__
from reviewapp.core.errors import ReviewError, printable
from reviewapp.core.log import cache_dir, capture_warnings

SUBCOMMANDS = ("open", "info", "measure", "batch", "study", "export", "samples", "lock")

EXIT_OK = 0
EXIT_SOME_FAILED = 1
EXIT_BAD_INPUT = 2
EXIT_INTERNAL = 3
# 128 + SIGPIPE (13): how a shell reports a command whose output pipe was closed.
EXIT_BROKEN_PIPE = 141

EXIT_CODES = f"""\
exit codes:
  {EXIT_OK}    done
  {EXIT_SOME_FAILED}    finished, but some records failed (measure with several files, batch);
       each failure is reported on stderr
  {EXIT_BAD_INPUT}    bad input or nothing could be done (unreadable record, no records found,
       every record failed, wrong option)
  {EXIT_INTERNAL}    internal error (a bug: please report it with the log file named)
  {EXIT_BROKEN_PIPE}  output pipe closed early (e.g. piped into head)"""
# The clinical caution as every --help prints it (top level and each subcommand).
HELP_CAUTION = textwrap.fill(CLINICAL_CAUTION, width=79)


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="reviewapp",
        description="ECG review and caliper workbench.",
        epilog=f"{HELP_CAUTION}\n\n{EXIT_CODES}",
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    parser.add_argument("--version", action="version", version=f"reviewapp {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    for name in SUBCOMMANDS:
        module = importlib.import_module(f"reviewapp.commands.{name}")
        module.add_parser(sub)
    for p in sub.choices.values():  # every subcommand's --help: the caution, the exit codes
        if p.epilog is None:
            p.epilog = EXIT_CODES
            p.formatter_class = argparse.RawDescriptionHelpFormatter
        p.epilog = f"{HELP_CAUTION}\n\n{p.epilog}"
    return parser


def _log_internal_error(err: BaseException, argv: Sequence[str]) -> str:
    """Write the traceback to the cache folder; returns where, or why it could not."""
    path = cache_dir() / "last-error.log"
    text = (
        f"reviewapp {__version__}, {datetime.now(UTC).isoformat(timespec='seconds')}\n"
        f"arguments: {list(argv)!r}\n\n"
        + "".join(traceback.format_exception(type(err), err, err.__traceback__))
    )
    try:
        path.parent.mkdir(parents=True, exist_ok=True)
        path.write_text(text, encoding="utf-8")
    except OSError as log_err:
        return f"the log could not be written to {path}: {log_err.strerror or log_err}"
    return str(path)


def _os_error_line(err: OSError) -> str:
    """``reviewapp: PATH: problem`` from an OSError (errno text, not the Python repr)."""
    problem = err.strerror or str(err) or type(err).__name__
    if isinstance(err, FileExistsError):
        problem += " (choose a path that does not exist yet)"
    elif isinstance(err, NotADirectoryError):
        problem += " (a part of the path is a file)"
    where = [str(f) for f in (err.filename, err.filename2) if f is not None]
    text = ": ".join([" -> ".join(where), problem] if where else [problem])
    return "reviewapp: " + printable(text)


def _quiet_broken_pipe() -> int:
    # Python docs, "Note on SIGPIPE" (signal module): point stdout at devnull so the
    # interpreter's final flush does not raise again.
    try:
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
    except (OSError, ValueError, AttributeError):
        pass
    return EXIT_BROKEN_PIPE


def main(argv: Sequence[str] | None = None) -> int:
    args_in = list(sys.argv[1:] if argv is None else argv)
    # `reviewapp` and `reviewapp PATH` open the window: treat them as the `open` subcommand.
    if not args_in or (
        args_in[0] not in SUBCOMMANDS and args_in[0] not in ("-h", "--help", "--version")
    ):
        # Window options (`reviewapp --speed 50 PATH`) belong to `open` as well.
        args_in = ["open", *args_in]
    if args_in[0] != "open":
        # Headless commands: third-party warnings go to the log file, not the terminal
        # (the window keeps Python's default, which Qt's message handling shows).
        capture_warnings()
    try:
        parser = build_parser()
        args = parser.parse_args(args_in)
        module = importlib.import_module(f"reviewapp.commands.{args.command}")
        code = int(module.run(args) or 0)
        sys.stdout.flush()  # a closed pipe shows up here, inside the handlers below
        return code
    except SystemExit:
        raise  # argparse usage errors (exit 2) and --help / --version (exit 0)
    except BrokenPipeError:
        return _quiet_broken_pipe()
    except ReviewError as err:
        print(f"reviewapp: {err}", file=sys.stderr)
        return EXIT_BAD_INPUT
    except KeyboardInterrupt:
        print("reviewapp: interrupted", file=sys.stderr)
        return 130
    except MemoryError:
        print("reviewapp: not enough memory for this operation", file=sys.stderr)
        return EXIT_BAD_INPUT
    except OSError as err:
        print(_os_error_line(err), file=sys.stderr)
        return EXIT_BAD_INPUT
    except Exception as err:  # last resort: a bug; one line for the user, details in a log
        where = printable(_log_internal_error(err, args_in))
        msg = printable(" ".join(str(err).split()))
        print(
            f"reviewapp: internal error: {type(err).__name__}: {msg} "
            f"(please report; details in {where})",
            file=sys.stderr,
        )
        return EXIT_INTERNAL


if __name__ == "__main__":
    raise SystemExit(main())
