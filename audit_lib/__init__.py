"""Audit the UV and visible lighting of reptile and amphibian enclosures.

The library turns spectra and meter readings into weighted irradiances (UV Index,
vitamin-D-weighted, UVB, illuminance), maps over an enclosure, daily doses over the
photoperiod and verdicts against species-group targets. See ``design.md`` in the
repository for the data flow. Heavy optional libraries (colour-science, pvlib) are
imported lazily inside the functions that need them.
"""

__version__ = "0.1.0"
