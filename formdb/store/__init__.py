"""Storage: SQLAlchemy models, engine and session factory, queries. Knows nothing of rules."""

from formdb.store import sealing as _sealing

_sealing.install()  # every session seals the change log and review records (formdb.store.sealing)
