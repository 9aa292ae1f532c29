"""One module per CLI subcommand: ``add_parser(subparsers)`` and ``run(args) -> int``."""
