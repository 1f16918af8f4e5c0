"""The Python API: ``catalog.open(path)`` returns a :class:`Catalog`.

Every method is one operation on the catalogue file (opened, used, closed), so a
notebook and the command line can share one file.  DataFrames are in SI units with
the canonical field names as columns, unless a method takes ``units`` (a display
preset: ``si``, ``datasheet`` or ``imperial``).

The command line mirrors this class: ``motorshelf CMD`` calls ``Catalog.CMD``
(``stock take`` calls ``stock_take``; ``import``, a Python keyword, calls
``import_``) and every option is named like the keyword argument it fills
(``--keep-valid`` is ``keep_valid``; a repeatable option is named for one item:
``--candidate`` fills ``candidates``).  ``tests/cli/test_mirror.py`` checks it.
"""
from __future__ import annotations

__all__ = ["Catalog", "RecordView", "Provenance", "PROVENANCE_COLUMNS", "open_catalog"]

import warnings
from pathlib import Path
from typing import NamedTuple

from .errors import InputError, Problem
from .inventory.methods import StockMethods
from .store import Store, default_path, is_damage, one

#: ``list``/``export`` kind → (view, record type); the view name never comes from a caller's text.
_KINDS = {"motors": ("motors", "motor"), "gearheads": ("gearheads", "gearhead")}


#: The columns of :attr:`Provenance.values`, in order.
PROVENANCE_COLUMNS = ("record_id", "field", "value_num", "value_text", "raw_text", "raw_unit", "origin", "relation",
                      "inputs", "source_file", "source_row")


class Provenance(NamedTuple):
    """The stored values of some records and where they came from, as :meth:`Catalog.provenance` returns them."""

    values: object         #: DataFrame of :data:`PROVENANCE_COLUMNS`, by record and field
    record_types: dict     #: record id -> ``motor`` or ``gearhead``


class RecordView(NamedTuple):
    """One catalogue record as :meth:`Catalog.show` returns it."""

    record_type: str
    manufacturer: str
    part_number: str
    values: object   #: DataFrame, one row per schema field (see :meth:`Catalog.show`)
    flags: list      #: the record's consistency flags (:class:`catalog.derive.Flag`)

    @property
    def basis_note(self) -> str:
        """How the selection reads a brushless motor's constants (empty for other records)."""
        return _basis_note(self.record_type, self.values)


def _input_problem(key: str, message: str) -> InputError:
    return InputError(f"{key}: {message}", [Problem(key, None, None, message)])


def _kind(kind: str) -> tuple[str, str]:
    if kind not in _KINDS:
        raise _input_problem("kind", f"{kind!r} is not {' or '.join(_KINDS)}")
    return _KINDS[kind]


def _preset(units: str) -> str:
    """``units`` checked: a display preset, or an older name of one (``datasheet`` is ``metric``)."""
    from .units import PRESETS
    from .units.dimensions import PRESET_ALIASES

    if units not in PRESETS and units not in PRESET_ALIASES:
        raise _input_problem("units", f"{units!r} is not a units preset, expected one of {', '.join(PRESETS)}")
    return units


def _as_list(paths) -> list:
    return [paths] if isinstance(paths, (str, Path)) else list(paths)


def _renamed(old: str, new: str) -> None:
    warnings.warn(f"Catalog.{old} is deprecated, use Catalog.{new}", DeprecationWarning, stacklevel=3)


class Catalog(StockMethods):
    """One catalogue file (the shelf methods ``stock_*``: :mod:`catalog.inventory.methods`).

    Parameters
    ----------
    path : str or Path, optional
        The DuckDB file; default ``$MOTORSHELF_DB`` or ``./motorshelf.duckdb``.
    wait : float
        Seconds to wait for a catalogue that another process is writing.
    """

    def __init__(self, path=None, wait: float = 30.0):
        self.path = Path(path) if path is not None else default_path()
        self.store = Store(self.path, wait=wait)

    def __repr__(self) -> str:
        return f"Catalog({str(self.path)!r})"

    # -- import ----------------------------------------------------------------
    def import_(self, files, mapping=None, keep_valid: bool = False, rejects=None, derive: bool = True,
                progress=None, manifest=None):
        """Import datasheet files (CSV, XLSX, JSON, YAML) in one transaction; see :func:`catalog.ingest.import_files`.

        ``mapping`` is a mapping profile for a supplier's own headers: one for every
        file, or ``{file: profile}``; ``manifest`` an import manifest choosing
        profiles by file pattern (:mod:`catalog.ingest.manifest`).  With
        ``keep_valid`` the valid rows are imported and the rejected ones written
        to ``rejects`` (CSV).  Returns an :class:`~catalog.ingest.ImportReport`.
        """
        from .ingest import import_files

        return import_files(self.store, _as_list(files), mapping=mapping, keep_valid=keep_valid,
                            rejects=rejects, derive=derive, progress=progress, manifest=manifest)

    def validate(self, files, mapping=None, manifest=None):
        """Check datasheet files as :meth:`import_` would; writes nothing.  Returns an ImportReport."""
        from .ingest import validate_files

        return validate_files(_as_list(files), mapping=mapping, manifest=manifest)

    # -- reading ---------------------------------------------------------------
    def _view(self, kind: str):
        view, _ = _kind(kind)
        with self.store.read() as con:
            return con.sql(f"SELECT * FROM {view} ORDER BY id").to_arrow_table().to_pandas()

    def motors(self):
        """Every motor as a pandas DataFrame, one SI column per canonical field."""
        return self._view("motors")

    def gearheads(self):
        """Every gearhead as a pandas DataFrame, one SI column per canonical field."""
        return self._view("gearheads")

    def list(self, kind: str, units: str = "metric"):
        """The ``motors`` or ``gearheads`` as ``motorshelf list`` shows them.

        The main columns (:data:`catalog.present.LIST_COLUMNS`) in the display
        preset ``units``, each quantity header carrying its unit
        (``stall_torque [mN·m]``).  :meth:`motors` and :meth:`gearheads` give every
        column in SI.
        """
        from .present import LIST_COLUMNS, display_frame

        _, rtype = _kind(kind)
        return display_frame(self._view(kind), rtype, _preset(units), columns=LIST_COLUMNS[rtype])

    def sql(self, query: str, params=None, time_limit=None, memory_limit=None):
        """Run a read-only SQL query; returns a pandas DataFrame.

        The query gets ``time_limit`` seconds and ``memory_limit`` (bytes, or ``"4GB"``) at
        most, defaults :data:`catalog.store.limits.DEFAULT_TIME_LIMIT` and
        ``DEFAULT_MEMORY_LIMIT``; it cannot change settings or reach other files.
        """
        import duckdb

        from .store.limits import QueryLimits, bounded, fetch_arrow

        limits = QueryLimits.of(time_limit, memory_limit, "sql")
        limits.refuse_settings(query)
        with self.store.read() as con:
            try:
                with bounded(con, limits):
                    rel = con.sql(query, params=params) if params else con.sql(query)
                    if rel is None:
                        import pandas as pd

                        return pd.DataFrame()
                    return fetch_arrow(rel, limits).to_pandas()
            except duckdb.Error as exc:
                if is_damage(exc):
                    raise self.store.damaged(exc) from None
                first = str(exc).splitlines()[0]
                raise InputError(f"sql: {first}", [Problem("sql", None, None, first)]) from None

    def ids(self) -> list[str]:
        """Every record id of the catalogue, sorted."""
        with self.store.read() as con:
            return [r[0] for r in con.execute("SELECT record_id FROM records ORDER BY record_id").fetchall()]

    def show(self, record_id: str, units: str = "metric") -> RecordView:
        """One record: every field with its value, unit and origin, and the record's consistency flags.

        Returns a :class:`RecordView`.  Its ``values`` frame has one row per field
        of the record type's schema (but ``id``, ``manufacturer`` and
        ``part_number``, which the view holds), in schema order: ``value`` and
        ``unit`` in the display preset ``units`` (numbers only), ``value_num``
        in SI, ``value_text``, the raw text and unit as written, ``origin``
        (given, derived, or empty for a field without a value), the relation and
        its inputs of a derived value, and the source file and row of a given one.
        An unknown id raises :class:`~catalog.errors.NotFound` with suggestions.
        """
        from .derive import DEFAULT_TOLERANCE
        from .inventory.ledger import require_record

        _preset(units)
        with self.store.read() as con:
            rtype, manufacturer, part_number = require_record(con, record_id)
            stored = _stored_values(con, record_id)
            flags = _flags(con, DEFAULT_TOLERANCE, record_id)
        return RecordView(rtype, manufacturer, part_number, _shown_values(stored, rtype, units), flags)

    def provenance(self, record_ids) -> Provenance:
        """The stored values of the records ``record_ids`` with where each came from.

        Returns a :class:`Provenance`: ``values``, the ``record_values`` rows of
        those records (:data:`PROVENANCE_COLUMNS`: the SI value, the text and unit
        as written, given or derived, the relation and its inputs, the source file
        and row) by record and field, and ``record_types`` (record id → ``motor``
        or ``gearhead``).  Ids that are not in the catalogue are left out.
        """
        ids = sorted({str(i) for i in record_ids})
        with self.store.read() as con:
            return _provenance(con, ids)

    def check(self, tolerance: float | None = None, record_id: str | None = None) -> list:
        """Consistency flags: over-determined relations whose relative residual exceeds ``tolerance``.

        ``tolerance`` defaults to :data:`catalog.derive.DEFAULT_TOLERANCE`;
        ``record_id`` keeps one record's flags.  Returns a list of
        :class:`catalog.derive.Flag`, by record and relation.
        """
        from .derive import DEFAULT_TOLERANCE

        with self.store.read() as con:
            return _flags(con, DEFAULT_TOLERANCE if tolerance is None else float(tolerance), record_id)

    def derive(self, tolerance: float | None = None):
        """Recompute every derived value and consistency residual of the catalogue.

        ``tolerance`` (default :data:`catalog.derive.DEFAULT_TOLERANCE`) is the
        relative residual above which a relation is flagged.  Returns the
        number of values derived and the flags.
        """
        from .derive import DEFAULT_TOLERANCE
        from .store.derived import derive_in_store

        tolerance = DEFAULT_TOLERANCE if tolerance is None else float(tolerance)
        with self.store.write() as con:
            batch = self.store.new_batch(con, "derive")
            outcome = derive_in_store(con, batch, record_ids=None, tolerance=tolerance)
        return outcome

    def history(self, record_id: str, changed_only: bool = True):
        """Every replaced value of a catalogue record: old and new value, when, and by which batch.

        One row per value a re-import or a derivation replaced (``value_history``):
        ``old_*`` the value replaced, ``new_*`` the one that followed it (the next
        replaced one, else the current value, empty when the field was removed),
        the batches and their files, and ``changed`` (false where a re-import
        wrote the same value again; such rows are left out unless
        ``changed_only`` is false).  ``frame.attrs["record"]`` holds the record's
        type, maker, part number and its creating and last updating batch.
        """
        from .inventory.ledger import require_record

        with self.store.read() as con:
            head = require_record(con, record_id)
            frame = _value_history(con, record_id, head)
        if changed_only:
            kept = frame[frame["changed"]].reset_index(drop=True)
            kept.attrs = frame.attrs
            return kept
        return frame

    # -- the team's server ------------------------------------------------------------
    def serve(self, host: str = "127.0.0.1", port: int = 8000, token: str | None = None, started=None) -> None:
        """Serve this catalogue to browsers and the JSON API until interrupted; see :mod:`catalog.web`.

        Anything but a loopback ``host`` needs a team ``token``; ``started(path)`` is
        called once the application is built, before the server listens.
        """
        from .web import create_app

        try:
            app = create_app(self.path, token=token, host=host)
        except ValueError as exc:
            raise _input_problem("token", str(exc)) from None
        import uvicorn

        if started is not None:
            started(app.state.catalog.path)
        uvicorn.run(app, host=host, port=port, log_level="warning", access_log=False, server_header=False)

    # -- the duty cycle at the gear output (reads no catalogue) ------------------------
    def cycle(self, envelope):
        """The duty cycle of a load envelope at the gear output; see :func:`catalog.select.motion.gear_output_cycle`.

        ``envelope`` is a TOML path or a parsed dict.  Returns a
        :class:`catalog.select.motion.GearOutputCycle`: per segment its name,
        duration, torque (with the acceleration of the load's masses) and the
        speeds at both ends, plus the reflected load inertia; ``to_dict()`` is
        the SI form ``motorshelf cycle --format json`` prints.
        """
        from .select import load_envelope
        from .select.motion import gear_output_cycle

        return gear_output_cycle(load_envelope(envelope))

    def summary(self) -> dict:
        """Counts: suppliers, motors, gearheads, values, derived values."""
        with self.store.read() as con:
            row = one(con.execute(
                "SELECT count(DISTINCT manufacturer), count(*) FILTER (WHERE record_type='motor'), "
                "count(*) FILTER (WHERE record_type='gearhead') FROM records"))
            vals = one(con.execute(
                "SELECT count(*) FILTER (WHERE origin='given'), count(*) FILTER (WHERE origin='derived') "
                "FROM record_values"))
        return {"suppliers": row[0], "motors": row[1], "gearheads": row[2],
                "given_values": vals[0], "derived_values": vals[1]}

    # -- selection and what comes out of it -------------------------------------
    def select(self, envelope, top: int | None = None, stock: str | None = None, out=None,
               units: str = "metric", misses: int | None = None, **kw):
        """Evaluate every motor × gear option against a load envelope; see :func:`catalog.select.select`.

        ``envelope`` is a TOML path or a parsed dict; ``top`` the shortlist length
        (default the envelope's ``ranking.top``).  ``stock`` (``only``, ``prefer``,
        ``ignore``; default the envelope's ``ranking.stock``) takes the shelf into
        account, see :mod:`catalog.inventory.selection`.  ``out`` also writes the
        selection to a file (the format by its extension, values in ``units``;
        see :func:`catalog.export.write_selection`).  ``misses`` also lists that
        many closest misses (``Selection.misses()``, shown and exported; without it
        they are listed only when nothing passes).  Returns a
        :class:`catalog.select.Selection`.
        """
        from .inventory import select_with_stock, stock_mode
        from .select import load_envelope, select

        if out is not None:
            from .export.writers import check_out

            check_out(out)   # a wrong file name is an input error before any work
            _preset(units)
        if misses is not None:
            from .select.misses import check_miss_count

            misses = check_miss_count(misses)
        envelope = load_envelope(envelope)   # envelope mistakes first, before reading the file
        kw.setdefault("motor_notes", self._flag_notes())
        kw["catalog"] = self  # exports read the provenance of the values used from here
        if out is not None:
            kw.setdefault("every_row", True)   # the export reads every candidate (the rejected ones too)
        if stock_mode(envelope, stock) != "ignore":
            sel = select_with_stock(self.motors(), self.gearheads(), envelope, self.stock_available(),
                                    stock, top=top, **kw)
        else:
            sel = select(self.motors(), self.gearheads(), envelope, top=top, **kw)
        sel.misses_wanted = misses
        if out is not None:
            from .export.selection import write_selection

            write_selection(sel, out, units=units, catalog=self)
        return sel

    def _flag_notes(self) -> dict:
        """motor id -> a warning for datasheets that contradict themselves (selection notes)."""
        counts: dict = {}
        for flag in self.check():
            counts[flag.record_id] = counts.get(flag.record_id, 0) + 1
        return {rid: f"datasheet contradicts itself in {n} relation(s) (see motorshelf check)"
                for rid, n in counts.items()}

    def export(self, kind: str, out, where: str | None = None, params: dict | None = None,
               units: str = "metric", time_limit=None, memory_limit=None):
        """Write the ``motors``, ``gearheads`` (all, or those matching ``where``) or the ``stock`` items
        with their value to the file ``out``.

        The format follows the extension (:data:`catalog.export.formats.FORMATS`);
        ``where`` is a SQL condition on the view (SI units) with named values in
        ``params`` (``where="mass < $m", params={"m": 0.2}``); values in the
        display preset ``units``.  Returns ``(path, number of records)``; see
        :func:`catalog.export.export_catalogue`.
        """
        from .export.catalogue import export_catalogue
        from .export.writers import check_out

        if kind != "stock":
            _kind(kind)
        path = check_out(out)
        return export_catalogue(self, kind, path, where=where, params=params, units=_preset(units),
                                time_limit=time_limit, memory_limit=memory_limit)

    def report(self, envelope, out, top: int | None = None, plots: int | None = None, units: str = "metric",
               side: str = "motor", stock: str | None = None):
        """Select against ``envelope`` and write the self-contained HTML report to ``out``.

        ``plots`` draws the first N shortlisted candidates (default all);
        ``side`` is ``motor`` (motor shaft) or ``load`` (gear output).  Returns the
        :class:`~catalog.select.Selection` (the report is written whether or not
        a candidate passes); see :func:`catalog.export.write_report`.
        """
        from .export.formats import REPORT_EXTENSIONS
        from .export.report import write_report
        from .export.writers import check_out

        path = check_out(out, REPORT_EXTENSIONS)
        sel = self.select(envelope, top=top, stock=stock)
        write_report(sel, path, units=_preset(units), catalog=self, side=side, plots=plots)
        return sel

    def plot(self, envelope, out, candidates=None, top: int | None = None, format: str = "png",  # noqa: A002
             units: str = "metric", side: str = "motor", stock: str | None = None) -> list:
        """Select against ``envelope`` and draw the speed-torque diagram of each shortlisted candidate.

        One file per candidate (or per id of ``candidates``) and ``compare.<format>``
        in the folder ``out``; ``format`` is one of
        :data:`catalog.export.formats.IMAGE_FORMATS`.  Returns the paths written
        (none when no candidate passes); see :func:`catalog.export.write_plots`.
        """
        from .export.figures import write_plots
        from .export.formats import IMAGE_FORMATS

        if format not in IMAGE_FORMATS:
            raise _input_problem("format", f"{format!r} is not an image format, expected one of "
                                           f"{', '.join(IMAGE_FORMATS)}")
        sel = self.select(envelope, top=top, stock=stock)
        return write_plots(sel, out, catalog=self, units=_preset(units), side=side, fmt=format,
                           candidates=list(candidates) if candidates else None)

    # -- old names -----------------------------------------------------------------
    def import_files(self, paths, mapping=None, keep_valid: bool = False, rejects=None, derive: bool = True,
                     progress=None, manifest=None):
        """Deprecated name of :meth:`import_`."""
        _renamed("import_files", "import_")
        return self.import_(paths, mapping=mapping, keep_valid=keep_valid, rejects=rejects, derive=derive,
                            progress=progress, manifest=manifest)

    def validate_files(self, paths, mapping=None, manifest=None):
        """Deprecated name of :meth:`validate`."""
        _renamed("validate_files", "validate")
        return self.validate(paths, mapping=mapping, manifest=manifest)

    def record(self, record_id: str):
        """Deprecated: ``(record_type, manufacturer, part_number, stored values)``; use :meth:`show`."""
        _renamed("record", "show")
        from .inventory.ledger import require_record

        with self.store.read() as con:
            head = require_record(con, record_id)
            return (*head, _stored_values(con, record_id))

    def flags(self, tolerance: float | None = None, record_id: str | None = None) -> list:
        """Deprecated name of :meth:`check`."""
        _renamed("flags", "check")
        return self.check(tolerance=tolerance, record_id=record_id)


def open_catalog(path=None, wait: float = 30.0) -> Catalog:
    """Open (or prepare to create) the catalogue file at ``path``."""
    return Catalog(path, wait=wait)


# -- queries behind the methods ---------------------------------------------------------
def _stored_values(con, record_id: str):
    """The ``record_values`` rows of one record, every column but ``record_id``."""
    return con.sql("SELECT * EXCLUDE (record_id) FROM record_values WHERE record_id = $id",
                   params={"id": record_id}).to_arrow_table().to_pandas()


def _provenance(con, ids: list) -> Provenance:
    """The ``record_values`` rows and record types of the records ``ids``, read on ``con``."""
    values = con.sql(f"SELECT {', '.join(PROVENANCE_COLUMNS)} FROM record_values WHERE list_contains($ids, record_id) "
                     "ORDER BY record_id, field", params={"ids": ids}).to_arrow_table().to_pandas()
    types = con.execute("SELECT record_id, record_type FROM records WHERE list_contains(?, record_id)", [ids]).fetchall()
    return Provenance(values, dict(types))


def _shown_values(stored, record_type: str, units: str):
    """One row per schema field of ``record_type`` (but the record's own columns), stored values
    joined, numbers also in the display preset ``units`` (``value``, ``unit``)."""
    import math

    import pandas as pd

    from .fields import fields_for
    from .present import display_value

    fields = {n: f for n, f in fields_for(record_type).items() if n not in ("id", "manufacturer", "part_number")}
    frame = pd.DataFrame({"field": list(fields)}).merge(stored, on="field", how="left")
    frame = frame.astype({"source_row": "Int64", "batch_id": "Int64"})   # whole numbers, empty where no value
    shown, labels = [], []
    for name, num in zip(frame["field"], frame["value_num"]):
        f = fields[name]
        if f.is_numeric and num is not None and not math.isnan(num):
            v, label = display_value(float(num), f.dimension, units, field=f)
        else:
            v, label = math.nan, None
        shown.append(v)
        labels.append(label)
    frame.insert(1, "value", shown)
    frame.insert(2, "unit", labels)
    return frame


def _basis_note(record_type: str, shown) -> str:
    """How the selection reads a motor's constants (line-to-line conversions named; empty for DC)."""
    if record_type != "motor":
        return ""
    from .select.candidates import constant_basis_note

    by = shown.set_index("field")

    def get(name, col):
        v = by[col].get(name) if name in by.index else None
        return None if v is None or (isinstance(v, float) and v != v) else v

    return constant_basis_note(get("commutation", "value_text"), get("constant_basis", "value_text"),
                               float(get("torque_constant", "value_num") or "nan"),
                               float(get("back_emf_constant", "value_num") or "nan"))


def _flags(con, tolerance: float, record_id: str | None) -> list:
    """The flags above ``tolerance`` (of one record, or all), with the given values of each relation."""
    from .derive import Flag

    sql = ("SELECT record_id, relation, field, given, given_value, implied_value, residual FROM flags "
           "WHERE abs(residual) > ?")
    params: list = [tolerance]
    if record_id is not None:
        sql += " AND record_id = ?"
        params.append(record_id)
    rows = con.execute(sql + " ORDER BY record_id, relation", params).fetchall()
    out = []
    for r in rows:  # the flagged few: show the given values of the relation's fields
        names = [f.strip() for f in (r[3] or "").split(",") if f.strip()]
        given = {}
        if names:
            vals = con.execute(
                "SELECT field, value_num FROM record_values WHERE record_id = ? AND origin = 'given'",
                [r[0]]).fetchall()
            given = {f: v for f, v in vals if f in names}
        text = ", ".join(f"{f}={given[f]:.6g}" for f in names if f in given)
        out.append(Flag(r[0], r[1], r[2], text, r[4], r[5], r[6]))
    return out


def _value_history(con, record_id: str, head: tuple):
    """The replaced values of one record (see :meth:`Catalog.history`); ``head`` is its
    (record_type, manufacturer, part_number)."""
    batches = con.execute(
        "SELECT r.created_batch, cb.started_at, cb.files, r.updated_batch, ub.started_at, ub.kind, ub.files "
        "FROM records r LEFT JOIN batches cb ON cb.batch_id = r.created_batch "
        "LEFT JOIN batches ub ON ub.batch_id = r.updated_batch WHERE r.record_id = ?", [record_id]).fetchall()[0]
    frame = con.execute(
        "WITH h AS (SELECT *, row_number() OVER (PARTITION BY field ORDER BY replaced_at, replaced_by_batch) "
        "AS n FROM value_history WHERE record_id = ?), "
        "nxt AS (SELECT h.field, h.n, coalesce(h2.value_num, CASE WHEN h2.field IS NULL THEN v.value_num END) "
        "AS new_num, coalesce(h2.value_text, CASE WHEN h2.field IS NULL THEN v.value_text END) AS new_text, "
        "coalesce(h2.raw_text, CASE WHEN h2.field IS NULL THEN v.raw_text END) AS new_raw, "
        "coalesce(h2.raw_unit, CASE WHEN h2.field IS NULL THEN v.raw_unit END) AS new_unit, "
        "coalesce(h2.origin, CASE WHEN h2.field IS NULL THEN v.origin END) AS new_origin "
        "FROM h LEFT JOIN h h2 ON h2.field = h.field AND h2.n = h.n + 1 "
        "LEFT JOIN record_values v ON v.record_id = ? AND v.field = h.field) "
        "SELECT h.replaced_at, h.field, h.value_num AS old_value, h.value_text AS old_text, "
        "h.raw_text AS old_raw, h.raw_unit AS old_unit, h.origin AS old_origin, "
        "nxt.new_num AS new_value, nxt.new_text, nxt.new_raw, nxt.new_unit, nxt.new_origin, "
        "h.batch_id AS old_batch, ob.started_at AS old_batch_at, ob.files AS old_files, "
        "h.replaced_by_batch, nb.kind AS replaced_by_kind, nb.files AS replaced_by_files, "
        "nb.user_name AS replaced_by_user "
        "FROM h JOIN nxt USING (field, n) LEFT JOIN batches ob ON ob.batch_id = h.batch_id "
        "LEFT JOIN batches nb ON nb.batch_id = h.replaced_by_batch ORDER BY h.replaced_at, h.field",
        [record_id, record_id]).fetchdf()
    same = lambda a, b: (a.isna() & b.isna()) | (a == b)  # noqa: E731
    frame["changed"] = ~(same(frame["old_value"], frame["new_value"]) & same(frame["old_text"], frame["new_text"])
                         & same(frame["old_raw"], frame["new_raw"]) & same(frame["old_origin"], frame["new_origin"]))
    frame.attrs["record"] = {"id": record_id, "record_type": head[0], "manufacturer": head[1],
                             "part_number": head[2], "created_batch": batches[0], "created_at": batches[1],
                             "created_files": batches[2], "updated_batch": batches[3], "updated_at": batches[4],
                             "updated_kind": batches[5], "updated_files": batches[6]}
    return frame
