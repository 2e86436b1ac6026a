"""The library version, in one place (imported by every writer of provenance)."""

__all__ = ["__version__"]

__version__ = "0.1.0"
