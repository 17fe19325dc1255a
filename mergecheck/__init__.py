"""mergecheck: checks an entrance ramp's acceleration lane and merge.

The core is pure functions on SI floats and numpy arrays; units live only at
the edges (:mod:`mergecheck.units`).
"""

__version__ = "0.1.0"
