"""formdb: a shared ingredient library and a pre-batch checker for emulsion formulas.

Everything the command line does is reachable from Python; see ``formdb.api``.
"""

__version__ = "0.1.0"
