"""Jobs.

The SQLite store, the dispatcher and its process pool (or Dask), the worker's unit of work,
the score route's own pool, Retry-After rules and the free-space check.
"""
