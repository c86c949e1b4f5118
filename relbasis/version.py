"""The version of relbasis (a leaf module: importing it runs no other part of the package)."""

__version__ = "0.1.0"
