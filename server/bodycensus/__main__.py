"""``python -m bodycensus`` runs the command-line interface."""

from bodycensus.cli.main import main

raise SystemExit(main())
