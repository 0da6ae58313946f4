"""meshgen: graded, tagged structured meshes for external boundary-layer flows."""

__version__ = "0.1.0"
