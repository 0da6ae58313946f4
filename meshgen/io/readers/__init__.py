"""Mesh readers, one module per format; each returns numpy arrays or a Mesh."""
