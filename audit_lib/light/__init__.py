"""Light at the input boundary.

Units, spectra, published weighting functions, weighted quantities, meters and the sun.
"""
