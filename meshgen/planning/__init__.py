"""Planning: 1-D spacing laws, the block layout and the Plan (node distributions, derived figures, coarsening)."""
