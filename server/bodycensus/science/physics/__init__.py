"""Pure physics: each formula written once, usable on floats, numpy arrays and polars expressions.
"""
