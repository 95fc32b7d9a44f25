"""Figures and printed reports (matplotlib); shells over the core."""
