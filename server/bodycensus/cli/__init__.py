"""The command line: serve, check, demo and bench over the same functions the app calls."""
