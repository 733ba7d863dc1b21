"""Storage: SQLAlchemy models, the Library (engine and units of work), queries.

Knows nothing of rules. Importing it changes nothing outside formdb: the audit trail's sealing
hooks listen to formdb's own session class (formdb.store.sealing.LibrarySession).
"""
