"""Mesh writers, one module per format; importing this package fills the registry."""

from . import cgns, foam, foam_setup, foam_stream, msh, plot3d, su2, su2_setup, vtu  # noqa: F401  (each registers itself)  # noqa: F401  (solver set-up beside the mesh)
from .registry import FORMATS, Format, get_format, register

__all__ = ["FORMATS", "Format", "get_format", "register"]
