"""What each screen shows: data functions, template contexts, URL state and the standalone report.
"""
