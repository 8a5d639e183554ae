"""Every figure and the circuit diagram, as PNG bytes.

matplotlib's Agg canvas, imported only when drawing.
"""
