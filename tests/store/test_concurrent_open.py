"""Several processes opening one fresh SQLite file at the same moment must all get in.

Regression: switching a new file to WAL needs an exclusive lock, and SQLite answered "database is
locked" at once (without its busy handler) to the loser of the race; about 1 in 8 trials of three
threads failed before the switch was retried.
"""

from __future__ import annotations

import threading
from pathlib import Path

from sqlalchemy import text

from formdb.store.db import make_engine


def test_three_openers_of_a_fresh_file_all_succeed(tmp_path: Path) -> None:
    failures: list[BaseException] = []
    for trial in range(40):
        url = f"sqlite:///{tmp_path / f'race{trial}.sqlite'}"

        def open_and_write(url: str = url) -> None:
            try:
                engine = make_engine(url)
                with engine.begin() as conn:
                    conn.execute(text("CREATE TABLE IF NOT EXISTS t (a INTEGER)"))
                engine.dispose()
            except BaseException as exc:  # collected and asserted below
                failures.append(exc)

        threads = [threading.Thread(target=open_and_write) for _ in range(3)]
        for thread in threads:
            thread.start()
        for thread in threads:
            thread.join()
    assert failures == []
