"""Lowest layer: the project's exceptions and the one place units are parsed and printed. Imports nothing of the package."""
