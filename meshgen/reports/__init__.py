"""Reports: cell quality, structure recovery, the boundary-layer report, markdown, pictures, the BC sheet and plan text."""
