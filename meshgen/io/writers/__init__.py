"""Mesh writers, one module per format; importing this package fills the registry."""

from . import cgns, foam, msh, plot3d, su2, vtu  # noqa: F401  (each registers itself)
from .registry import FORMATS, Format, get_format, register

__all__ = ["FORMATS", "Format", "get_format", "register"]
