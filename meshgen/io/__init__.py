"""Files: atomic writing, the format writers (with their registry) and the readers."""
