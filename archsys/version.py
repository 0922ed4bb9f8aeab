"""The package version (kept here so modules can read it without importing the package's __init__)."""

__all__ = ["__version__"]

__version__ = "0.2.0"
