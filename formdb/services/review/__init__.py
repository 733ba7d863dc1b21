"""Review runs and sign-offs, the impact of a library change, the audit chains."""
