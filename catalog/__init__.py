"""motorshelf: a catalogue of permanent-magnet DC motors and gearheads in SI units.

``catalog.open(path)`` gives a :class:`~catalog.api.Catalog`; see README.md.
Importing this package is cheap: heavy libraries load when an operation needs them.
"""
__version__ = "0.1.0"
__all__ = ["open", "Catalog", "__version__"]


def open(path=None, wait: float = 30.0):  # noqa: A001 - the API's name by design
    """Open the catalogue file at ``path`` (default ``$MOTORSHELF_DB`` or ./motorshelf.duckdb)."""
    from .api import open_catalog

    return open_catalog(path, wait=wait)


def __getattr__(name):
    if name == "Catalog":
        from .api import Catalog

        return Catalog
    raise AttributeError(name)
