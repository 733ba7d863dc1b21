"""Loading the bundled seed library."""
