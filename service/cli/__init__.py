"""The ``haarline`` command line.

Argument parsing, output files, progress, ``serve`` and ``keys``.
"""
