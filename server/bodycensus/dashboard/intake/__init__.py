"""Uploads streamed to disk and the background jobs that check them."""
