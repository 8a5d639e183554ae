"""The circuit description.

Gate table, format-1 models, placements, expansion into a gate program, loading, bundled
references and OpenQASM 3 in and out.
"""
