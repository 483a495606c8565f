"""peakrank: rank the structures a molecular formula allows against a 1H NMR peak list."""

__version__ = "0.1.0"
