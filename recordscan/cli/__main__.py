"""``python -m recordscan.cli`` runs the command line."""

from recordscan.cli.main import main

main()
