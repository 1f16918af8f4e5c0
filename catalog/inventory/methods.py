"""The shelf part of the Python API: ``Catalog.stock_*`` (the ``motorshelf stock ...`` commands).

:class:`StockMethods` is a base class of :class:`catalog.api.Catalog`; every
method is one operation on the catalogue file (``self.store``), writes in one
transaction, and raises :class:`~catalog.errors.InputError` or
:class:`~catalog.errors.NotFound` with one clear message when it refuses.
"""
from __future__ import annotations

__all__ = ["StockMethods"]


class StockMethods:
    """Stock items, movements, reservations and stock files of a catalogue."""

    store = None  # set by Catalog.__init__

    # -- movements -----------------------------------------------------------
    def stock_receive(self, record_id, quantity, location, condition="new", serial_numbers=None, notes=None,
                      person=None, reason=None, min_quantity=None, at=None):
        """Record pieces arriving at ``location``; returns a :class:`~catalog.inventory.StockChange`."""
        from . import receive

        return receive(self.store, record_id, quantity, location, condition, serial_numbers, notes, person,
                       reason, min_quantity, at)

    def stock_take(self, record_id=None, quantity=None, location=None, condition=None, person=None, project=None,
                   reason=None, reservation=None, serial_numbers=None, at=None):
        """Take pieces for a project (who: ``person``); ``reservation`` turns a reservation into the take."""
        from . import take

        return take(self.store, record_id, quantity, location, condition, person, project, reason, reservation,
                    serial_numbers, at)

    def stock_return(self, record_id, quantity, location, condition="used", person=None, project=None,
                     reason=None, serial_numbers=None, at=None):
        """Pieces come back from a project to ``location``."""
        from . import return_

        return return_(self.store, record_id, quantity, location, condition, person, project, reason,
                       serial_numbers, at)

    def stock_move(self, record_id, quantity, to_location, from_location=None, condition=None, to_condition=None,
                   person=None, reason=None, serial_numbers=None, at=None):
        """Move pieces to another location (``to_condition`` re-classifies them, e.g. after testing)."""
        from . import move

        return move(self.store, record_id, quantity, to_location, from_location, condition, to_condition, person,
                    reason, serial_numbers, at)

    def stock_adjust(self, record_id, counted, location=None, condition=None, person=None, reason=None, at=None):
        """Set an item to the quantity a count found (writes the difference as an adjust movement)."""
        from . import adjust

        return adjust(self.store, record_id, counted, location, condition, person, reason, at)

    def stock_write_off(self, record_id, quantity, reason, location=None, condition=None, person=None,
                        serial_numbers=None, at=None):
        """Take pieces off the books for good (scrapped, lost); ``reason`` is required."""
        from . import write_off

        return write_off(self.store, record_id, quantity, reason, location, condition, person, serial_numbers, at)

    def stock_reserve(self, record_id, quantity, project, location=None, condition=None, person=None, reason=None,
                      at=None):
        """Hold pieces for a project; the change's ``reservation_id`` names the reservation."""
        from . import reserve

        return reserve(self.store, record_id, quantity, project, location, condition, person, reason, at)

    def stock_release(self, reservation_id, quantity=None, person=None, reason=None, at=None):
        """Give the pieces of a reservation (all that is left, or ``quantity``) back to everyone."""
        from . import release

        return release(self.store, reservation_id, quantity, person, reason, at)

    # -- stock files -----------------------------------------------------------
    def stock_import(self, files, person=None, reason=None, at=None, again: bool = False):
        """Receive every row of stock files (schema ``stock``) in one transaction.

        Returns ``(rows, pieces, batch_id)``; a file with any problem raises
        :class:`~catalog.errors.ImportRejected` and nothing is written.  A file
        whose content was received before is such a problem unless ``again``.
        """
        from pathlib import Path

        from . import import_stock

        files = [files] if isinstance(files, (str, Path)) else list(files)
        return import_stock(self.store, files, person=person, reason=reason, at=at, again=again)

    def stock_count(self, path, apply: bool = False, keep_unlisted: bool = False, person=None):
        """Reconcile a counted shelf file; see :func:`catalog.inventory.count_stock`.

        Returns ``(differences, applied, batch_id)``.
        """
        from . import count_stock

        return count_stock(self.store, path, apply=apply, keep_unlisted=keep_unlisted, person=person)

    # -- reading -----------------------------------------------------------------
    def stock_list(self, location=None, record_id=None, include_empty: bool = False, low: bool = False):
        """Stock items with on hand, reserved and available pieces (``location``: text it contains).

        ``include_empty`` also lists items with nothing left on hand; ``low``
        lists instead the records below their reorder level (:meth:`stock_low`).
        """
        from . import stock_list

        if low:
            return self.stock_low(location)
        with self.store.read() as con:
            return stock_list(con, location, record_id, include_empty)

    def stock_value(self, location=None):
        """Value on hand at catalogue prices per location and currency, then totals per currency.

        Faulty pieces are not valued; see :func:`catalog.inventory.stock_value`.
        """
        from . import stock_value

        with self.store.read() as con:
            return stock_value(con, location)

    def stock_low(self, location=None):
        """Records with fewer usable pieces available than their reorder level (default 1)."""
        from . import low_stock

        with self.store.read() as con:
            return low_stock(con, location)

    def stock_history(self, record_id):
        """Every stock movement of a record, oldest first, with the quantities after each."""
        from . import stock_history

        with self.store.read() as con:
            return stock_history(con, record_id)

    def stock_movements(self, limit: int = 50, location=None):
        """The latest movements of the whole shelf, newest first (``location``: text it contains)."""
        from . import recent_movements

        with self.store.read() as con:
            return recent_movements(con, limit, location)

    def stock_reservations(self, open_only: bool = True, project=None):
        """Reservations (open ones by default) with what is left of each."""
        from . import reservations

        with self.store.read() as con:
            return reservations(con, open_only, project)

    def stock_available(self):
        """Per record: usable pieces available and where; what selection uses."""
        from . import available_stock

        with self.store.read() as con:
            return available_stock(con)
