"""The package version, recorded in every store this code writes."""

__version__ = "0.1.0"
