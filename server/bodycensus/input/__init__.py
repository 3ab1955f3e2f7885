"""The input floor: file formats, readers, the column mapping and ingest into the normalised table.
"""
