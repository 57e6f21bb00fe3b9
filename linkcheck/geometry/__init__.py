"""Geometry: closed-form primitives, meshes, URI resolution, convex-hull queries."""
