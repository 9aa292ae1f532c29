"""The one entry point: ``reviewapp [PATH]`` opens the workbench; subcommands run headless.

Each subcommand lives in its own module under ``reviewapp.commands`` exposing
``add_parser(subparsers)`` and ``run(args) -> int``. Any ``ReviewError`` becomes one line on
stderr and exit code 2; nothing else reaches the user as a traceback.
"""

from __future__ import annotations

import argparse
import importlib
import sys
from collections.abc import Sequence

from reviewapp import CLINICAL_CAUTION, __version__
from reviewapp.core.errors import ReviewError

SUBCOMMANDS = ("open", "info", "measure", "batch", "export", "samples")


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="reviewapp",
        description="ECG review and caliper workbench. " + CLINICAL_CAUTION,
    )
    parser.add_argument("--version", action="version", version=f"reviewapp {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    for name in SUBCOMMANDS:
        module = importlib.import_module(f"reviewapp.commands.{name}")
        module.add_parser(sub)
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    args_in = list(sys.argv[1:] if argv is None else argv)
    # `reviewapp` and `reviewapp PATH` open the window: treat them as the `open` subcommand.
    if not args_in or (args_in[0] not in SUBCOMMANDS and not args_in[0].startswith("-")):
        args_in = ["open", *args_in]
    parser = build_parser()
    args = parser.parse_args(args_in)
    module = importlib.import_module(f"reviewapp.commands.{args.command}")
    try:
        return int(module.run(args) or 0)
    except ReviewError as err:
        print(f"reviewapp: {err}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print("reviewapp: interrupted", file=sys.stderr)
        return 130
    except MemoryError:
        print("reviewapp: not enough memory for this operation", file=sys.stderr)
        return 2


if __name__ == "__main__":
    raise SystemExit(main())
