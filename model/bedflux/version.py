"""The version of bedflux (one place; the package metadata reads the same number)."""
__version__ = "0.1.0"
