"""Renderers: results shown to a person (terminal, and later HTML and Excel)."""
