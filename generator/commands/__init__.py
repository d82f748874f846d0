"""One module per subcommand; each has ``register(subparsers)`` and ``run(args)``."""
