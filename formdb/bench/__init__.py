"""The benchmark: a deterministic synthetic library, and figures measured against raw floors.

``python -m formdb.bench generate`` builds a library of invented ingredients and formulas (every
synthetic value cites the ``synthetic-bench`` source, evidence "estimated"); ``python -m
formdb.bench run`` times ``check --all``, ingredient import and one ``formdb check FILE`` against
what plain ``sqlite3``/``pandas``/``python -c import`` do with the same data, in one run.
"""
