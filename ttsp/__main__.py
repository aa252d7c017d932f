"""``python -m ttsp`` runs the command line."""

from .cli import main

main()
