"""Catalogs: reading clump tables, metadata and dust settings, geometry, spacings, dust masses.

:func:`read_catalog` returns validated :class:`Region` objects ready for the likelihood.
"""

from .regions import Region, check_catalog, read_catalog

__all__ = ["Region", "read_catalog", "check_catalog"]
