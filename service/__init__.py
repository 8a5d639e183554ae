"""haarline's outer layer: the command line (and, later, the REST service).

Nothing here does math: it translates input, output and errors around :mod:`analysis`.
"""
