"""occplan: plan stellar occultations by planetary rings.

Importing the package loads nothing: kernels and time scales are opened on first use
by :mod:`occplan.ephemeris`.
"""

__version__ = "0.1.0"
