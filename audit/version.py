"""netdim's version (the one place it is written; pyproject.toml reads it from here)."""

__all__ = ["__version__"]

__version__ = "0.2.0"
