"""Closed sphere meshes on a (longitude, latitude) grid with single pole vertices.

Vertex order: the south pole, then ``n_lat`` rings from south to north, each ring
``n_lon`` vertices in increasing longitude, then the north pole. There is no seam
duplicate: the ring closes on itself, so V - E + F = 2 and every edge lies in two
faces. Faces are quads between rings and triangle fans at the poles, ordered so
that the normal (p1 - p0) x (p2 - p0) points outward on the round sphere.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np


@dataclass(frozen=True)
class SphereMesh:
    """A fixed sphere topology with the parameter value of every vertex.

    theta : (n_lon,) float64, longitudes in [0, 2*pi), increasing
    lat : (n_lat,) float64, latitudes in (-pi/2, pi/2), increasing (poles excluded)
    """

    theta: np.ndarray
    lat: np.ndarray

    @property
    def n_lon(self) -> int:
        return int(self.theta.shape[0])

    @property
    def n_lat(self) -> int:
        return int(self.lat.shape[0])

    @property
    def n_vertices(self) -> int:
        return self.n_lon * self.n_lat + 2

    @property
    def vertex_params(self) -> tuple[np.ndarray, np.ndarray]:
        """(theta, lat) of every vertex, each (V,) float64; poles get theta 0 and lat -+pi/2."""
        th = np.concatenate([[0.0], np.tile(self.theta, self.n_lat), [0.0]])
        la = np.concatenate([[-np.pi / 2], np.repeat(self.lat, self.n_lon), [np.pi / 2]])
        return th, la

    def polygons(self) -> tuple[np.ndarray, np.ndarray]:
        """Faces as quads and triangles.

        Returns (quads (Q, 4) int32, tris (T, 3) int32): the quads between rings and the
        triangle fans at both poles.
        """
        n, m = self.n_lon, self.n_lat
        i = np.arange(n)
        ip = (i + 1) % n
        ring = 1 + np.arange(m)[:, None] * n  # first vertex of each ring
        a = ring[:-1] + i  # (m-1, n)
        b = ring[:-1] + ip
        c = ring[1:] + ip
        d = ring[1:] + i
        quads = np.stack([a, b, c, d], axis=-1).reshape(-1, 4)
        south = np.stack([np.zeros(n, int), 1 + ip, 1 + i], axis=-1)
        north_pole = self.n_vertices - 1
        top = 1 + (m - 1) * n
        north = np.stack([top + i, top + ip, np.full(n, north_pole)], axis=-1)
        tris = np.concatenate([south, north])
        return quads.astype(np.int32), tris.astype(np.int32)

    def triangles(self) -> np.ndarray:
        """All faces as triangles, (M, 3) int32; each quad is split along its a-c diagonal."""
        quads, tris = self.polygons()
        split = np.concatenate([quads[:, [0, 1, 2]], quads[:, [0, 2, 3]]])
        return np.concatenate([tris[: self.n_lon], split, tris[self.n_lon :]]).astype(np.int32)

    def uv(self) -> np.ndarray:
        """Per-vertex texture coordinates, (V, 2) float32: u = theta/2pi, v = (lat + pi/2)/pi."""
        th, la = self.vertex_params
        return np.stack([th / (2 * np.pi), (la + np.pi / 2) / np.pi], axis=-1).astype(np.float32)


def uniform_sphere_mesh(n_lon: int, n_lat: int) -> SphereMesh:
    """A sphere mesh of ``n_lon`` equal longitude steps and ``n_lat`` equally spaced rings."""
    if n_lon < 3 or n_lat < 1:
        raise ValueError(f"a sphere mesh needs n_lon >= 3 and n_lat >= 1, got {n_lon} x {n_lat}")
    theta = np.arange(n_lon) * (2 * np.pi / n_lon)
    lat = -np.pi / 2 + np.pi * (np.arange(n_lat) + 1) / (n_lat + 1)
    return SphereMesh(theta=theta, lat=lat)


def round_sphere_positions(mesh: SphereMesh, radius: float = 1.0) -> np.ndarray:
    """Vertex positions of the round sphere, (V, 3) float64."""
    th, la = mesh.vertex_params
    c = np.cos(la)
    return radius * np.stack([c * np.cos(th), c * np.sin(th), np.sin(la)], axis=-1)
