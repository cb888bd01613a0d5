"""The package version (one place; the package, the summaries and the pages read it)."""

__version__ = "0.1.0"
