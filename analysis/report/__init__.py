"""The report.

Analysis options, report assembly, text and Markdown summaries, policies, ranking and the
work estimate.
"""
