"""The storage floor: the data directory (catalogue folders, manifests, SQLite) and durable writes.
"""
