"""The package version, defined once."""

__version__ = "0.1.0"
