"""Pydantic models for everything that crosses a boundary: files, CLI input, JSON output."""
