"""Views that explain the eversion: parts, latitude slices, build-up order, level points.

Everything here is bpy-free numpy; faces are in ``SphereMesh.triangles()`` order and vertices
in SphereMesh order.
"""
from .levels import BOWL, DOME, SADDLE, LevelPointError, LevelPoints, level_points  # noqa: F401
