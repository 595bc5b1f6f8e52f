"""Error types raised for problems the user can fix (bad input, file, config)."""

from __future__ import annotations

__all__ = ["InferError", "CatalogError", "ConfigError", "ChainError"]


class InferError(ValueError):
    """A problem with the user's input; the message says what is wrong and what to do.

    The command line turns it into exit code 2 and one line on stderr.
    """


class CatalogError(InferError):
    """An invalid or unreadable clump catalog."""


class ConfigError(InferError):
    """An invalid run configuration."""


class ChainError(InferError):
    """A missing, corrupted or mismatched saved chain or output folder."""
