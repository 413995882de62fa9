"""Figures of the report, one module per family; each function returns a Figure."""
