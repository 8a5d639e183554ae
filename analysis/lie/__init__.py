"""The dynamical Lie algebra.

Pauli algebra, circuit generators, closure, ideals and the predicted loss variance of deep
circuits.
"""
