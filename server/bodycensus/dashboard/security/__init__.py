"""Who may reach the dashboard: the token gate, login and cross-site checks."""
