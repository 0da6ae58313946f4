"""Grid-refinement and domain studies: families, sweeps and grid-convergence uncertainty."""
