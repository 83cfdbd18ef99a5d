"""``python -m profiler`` runs the terrahop command."""

from .cli.main import main

main()
