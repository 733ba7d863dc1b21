"""Users and roles, database administration, PostgreSQL grants."""
