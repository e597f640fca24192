"""Views that explain the eversion: parts, latitude slices, build-up order, level points.

Everything here is bpy-free numpy; faces are in ``SphereMesh.triangles()`` order and vertices
in SphereMesh order.
"""

from .levels import BOWL, DOME, SADDLE, LevelPointError, LevelPoints, level_points  # noqa: F401
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
from .reveal import REVEAL_ORDERS, key_moments, reveal_order, reveal_weights  # noqa: F401
from .slices import (  # noqa: F401
    BandTrack,
    LatitudeBands,
    band_faces,
    band_track,
    band_vertices,
    latitude_bands,
)
