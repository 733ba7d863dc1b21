"""Storage: SQLAlchemy models, engine and session factory, queries. Knows nothing of rules."""
