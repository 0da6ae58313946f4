"""Studies: refinement families, domain sweeps, their runner and manifests, results, GCI and domain verdicts."""
