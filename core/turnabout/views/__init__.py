"""Views that explain the eversion: parts, latitude slices, build-up order, level points.

Everything here is bpy-free numpy; faces are in ``SphereMesh.triangles()`` order and vertices
in SphereMesh order.
"""
from .parts import (  # noqa: F401
    CAP_NAMES,
    SurfaceParts,
    ViewError,
    extract,
    surface_parts,
    symmetry_face_maps,
    symmetry_matrices,
    symmetry_vertex_maps,
)
from .levels import BOWL, DOME, SADDLE, LevelPointError, LevelPoints, level_points  # noqa: F401
