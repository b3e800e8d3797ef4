"""``python -m siting`` runs the command-line interface."""

from siting.cli import main

raise SystemExit(main())
