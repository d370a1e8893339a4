"""The package version, one definition (read by the package and recorded in every store)."""

__version__ = "0.1.0"
