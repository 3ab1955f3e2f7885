"""``python -m bodycensus`` runs the command-line interface."""

from bodycensus.cli import main

raise SystemExit(main())
