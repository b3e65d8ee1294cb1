"""The package version (single source, read by pyproject.toml)."""

__version__ = "0.1.0"
SCHEMA_VERSION = "1.2"
