"""The ingredient library: ingredients, sources, stored formulas, table import and export."""
