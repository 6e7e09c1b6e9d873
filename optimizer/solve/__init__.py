"""The pick: a CP-SAT model over the catalog, exact verification of every candidate, cuts,
ranked alternatives and the infeasibility diagnosis. Never prints, never reads files."""
