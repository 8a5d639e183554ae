"""The batched statevector engine.

Its internals, the seeded sampling streams and the chunk and worker loop of the sampled
metrics.
"""
