"""One module per metric: its row of the registry (:mod:`haarline.report.registry`).

Each module wires the computation of one metric (in :mod:`haarline.metrics` or
:mod:`haarline.lie`) into the report: how it is called with the options, its work
estimate, its progress stages, cautions, summary lines, plots and policy paths.
"""
