"""One build end to end: output checks, meshing, files, reports, plan.json last."""
