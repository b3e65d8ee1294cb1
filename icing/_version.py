"""The package version (single source, read by pyproject.toml)."""

__version__ = "0.2.0"
SCHEMA_VERSION = "1.2"
