"""Use cases: import a table, check a formula, store a formula. Each owns its transaction."""
