"""Checking formulas: the flow of a check, blend plans, labels, the demo."""
