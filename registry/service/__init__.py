"""Use cases of the catalogue: one transaction each. The shells (CLI, API) call only these."""
