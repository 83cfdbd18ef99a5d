"""The ``terrahop`` command: one module per subcommand, shared options in options.py."""
