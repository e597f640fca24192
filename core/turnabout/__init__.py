"""Turnabout: build and check sphere eversions and regular homotopies of plane curves.

The core is pure Python over numpy and never imports Blender. Its unit of data is
an array of vertex positions per frame, ``positions : (frames, n, 3)``, plus one
fixed face array.
"""

__version__ = "0.1.0"
