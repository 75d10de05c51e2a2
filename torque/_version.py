"""The package's version, in one place (pyproject.toml reads it too)."""

__version__ = "0.1.0"
