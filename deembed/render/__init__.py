"""Rendering: terminal text, plots (matplotlib Figures without pyplot) and HTML pages."""
