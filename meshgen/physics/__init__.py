"""Boundary-layer physics: fluid properties and the flat-plate correlations, each formula with its source."""
