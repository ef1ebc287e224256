"""One module per ``strainline`` subcommand; each has ``register(subparsers)`` and ``run(args)``."""
