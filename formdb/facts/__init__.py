"""The facts of a formula: the numbers a chemist works out by hand, computed once per check.

``compute_facts(formula, reference, settings)`` (``formdb.facts.compute``) is the entry point; the
rules read its ``FormulaFacts`` and never redo the arithmetic. One module per topic: soap formed
in place, phases, HLB, emulsion type, phase volume, droplets, composition, exposure, allergens.
"""

from formdb.facts.compute import compute_facts

__all__ = ["compute_facts"]
