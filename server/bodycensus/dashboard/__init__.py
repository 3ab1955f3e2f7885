"""The web application: the FastAPI app, its routes, what each screen shows, upload jobs and
security."""
