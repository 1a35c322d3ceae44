"""``python -m trackplan`` runs the command line."""

from trackplan.cli import main

main()
