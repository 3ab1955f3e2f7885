"""The distributed engine: the same check on a Dask cluster (``bodycensus check --engine dask``).

Imported only when chosen: the base install does not need Dask (``pip install
'bodycensus[distributed]'`` brings it).
"""
