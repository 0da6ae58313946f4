"""Meshing: the gmsh session, the builder, the Mesh arrays, extrusion and verification."""
