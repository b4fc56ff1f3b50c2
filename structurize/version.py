"""Versions recorded with every run."""

__version__ = "0.1.0"
#: Bump when extraction can give a different value for the same document and field
#: definition; cached values of another extractor version are not reused.
EXTRACTOR_VERSION = "2026.12.4.4"
