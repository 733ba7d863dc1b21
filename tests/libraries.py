"""Libraries opened by tests through the public Library object, closed after each test.

``opened(url)`` gives the same Library for the same URL within a test (as one command would
hold it); the autouse fixture ``_close_opened_libraries`` in tests/conftest.py disposes them, so
a PostgreSQL test database can be dropped afterwards.
"""

from __future__ import annotations

from formdb.store.library import Library

_OPEN: dict[str, Library] = {}


def opened(url: str) -> Library:
    library = _OPEN.get(url)
    if library is None:
        library = _OPEN[url] = Library.open(url)
    return library


def close_all() -> None:
    while _OPEN:
        _OPEN.popitem()[1].close()
