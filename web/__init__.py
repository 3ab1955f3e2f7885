"""Templates and static assets of the dashboard, importable as ``bodycensus.web`` once installed."""
