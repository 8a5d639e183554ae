"""One module per metric.

And the statistics they share: Haar values, intervals, cost operators, gradients.
"""
