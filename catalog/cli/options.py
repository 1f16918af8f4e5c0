"""What several commands share: options, the command classes, the old spellings of renamed options.

Every option more than one command module uses is defined here once: the catalogue
file (``--db``), the output format of what a command prints (``--format``), the
display units (``--units``), the units of a written file, ``--top`` and
``--side``.  Choices and help texts are made from the tables they describe (the
units presets of :mod:`catalog.units.dimensions`, the export formats of
:mod:`catalog.export.writers`), never written out by hand.

An option is named like the keyword argument of the ``Catalog`` method it fills.
Where a name changed, the old spelling still works for a while: it is listed in
:data:`RENAMED_OPTIONS`, hidden from ``--help``, and using it prints one
``warning:`` line on stderr naming the new spelling.
"""
from __future__ import annotations

__all__ = ["Command", "Group", "OutputOption", "LazyChoice", "RENAMED_OPTIONS", "DB_OPTION", "FORMAT_OPTION",
           "UNITS_OPTION", "OUT_UNITS_OPTION", "TOP_OPTION", "SIDE_OPTION", "QUERY_LIMIT_OPTIONS"]

import click

from ..export.formats import keeps_si_text

#: Old option spellings still read: old spelling → the parameters it may stand for (a command
#: that has one of them reads the old spelling as that option, with a deprecation note).
RENAMED_OPTIONS = {
    "--by": ("person",),
    "--min": ("min_quantity",),
    "--to": ("to_location",),
    "--from": ("from_location",),
    "--all": ("include_empty",),
}


class LazyChoice(click.Choice):
    """A choice among the values ``load()`` returns when first needed (parsing, help).

    The tables the choices come from (the units presets) live in packages that
    take a while to import; reading them lazily keeps ``motorshelf --help`` fast.
    """

    def __init__(self, load, case_sensitive: bool = True):
        self._load = load
        super().__init__((), case_sensitive)

    @property
    def choices(self):
        return tuple(self._load())

    @choices.setter
    def choices(self, value):   # click.Choice.__init__ sets it; the values come from load()
        pass


def _presets():
    from ..units.dimensions import PRESET_ALIASES, PRESETS

    return (*PRESETS, *PRESET_ALIASES)   # old names are still read


class OutputOption(click.Option):
    """An option that shapes only what a command prints; it fills no keyword of the API."""


class Command(click.Command):
    """A command that still reads the old spellings of its renamed options (:data:`RENAMED_OPTIONS`)."""

    def __init__(self, *args, **kwargs):
        super().__init__(*args, **kwargs)
        spelled = {o for p in self.params for o in (*p.opts, *p.secondary_opts)}
        #: old spelling → new spelling, for the options of this command
        self.renamed: dict[str, str] = {}
        for old, names in RENAMED_OPTIONS.items():
            target = next((p for p in self.params if isinstance(p, click.Option) and p.name in names), None)
            if target is not None and old not in spelled:
                self.renamed[old] = target.opts[0]

    def parse_args(self, ctx, args):
        return super().parse_args(ctx, self._respelled(ctx, list(args)) if self.renamed else args)

    def _respelled(self, ctx, args: list) -> list:
        """``args`` with every old option spelling replaced by the new one (option positions only)."""
        takes_value = {o for p in self.params if isinstance(p, click.Option) and not p.is_flag and not p.count
                       for o in p.opts}
        takes_value |= {old for old, new in self.renamed.items() if new in takes_value}
        out, i = [], 0
        while i < len(args):
            arg = args[i]
            if arg == "--":
                out += args[i:]
                break
            name, eq, value = arg.partition("=")
            if name in self.renamed:
                if not ctx.resilient_parsing:
                    click.echo(f"warning: {name} is deprecated, use {self.renamed[name]}", err=True)
                arg = self.renamed[name] + eq + value
            out.append(arg)
            if name in takes_value and not eq and i + 1 < len(args):
                out.append(args[i + 1])   # the option's value, whatever it looks like
                i += 1
            i += 1
        return out


class Group(click.Group):
    """A group whose commands are :class:`Command` and whose subgroups are groups like it."""

    command_class = Command
    group_class = type


DB_OPTION = click.option("--db", "db", type=click.Path(dir_okay=False), default=None, metavar="PATH",
                         help="Catalogue file (default: $MOTORSHELF_DB, else ./motorshelf.duckdb).")
FORMAT_OPTION = click.option("--format", "fmt", cls=OutputOption, type=click.Choice(["table", "csv", "json"]),
                             default="table", show_default=True, help="Output format.")
UNITS_OPTION = click.option("--units", "units", type=LazyChoice(_presets), default="metric",
                            show_default=True, help="Units to display values in.")
OUT_UNITS_OPTION = click.option("--units", "units", type=LazyChoice(_presets), default="metric",
                                show_default=True, help=f"Units of the values written ({keeps_si_text()}).")
TOP_OPTION = click.option("--top", type=click.IntRange(min=1), default=None, metavar="N",
                          help="Shortlist length (default: the envelope's ranking.top, else 10).")
SIDE_OPTION = click.option("--side", type=click.Choice(["motor", "load"]), default="motor", show_default=True,
                           help="Draw each candidate's diagram at the motor shaft or at the gear output.")


def QUERY_LIMIT_OPTIONS(func):  # noqa: N802 - used as a decorator like the options above
    """``--time-limit`` and ``--memory-limit`` of a query written by the user (sql, export --where)."""
    func = click.option("--memory-limit", "memory_limit", default=None, metavar="SIZE",
                        help="Memory the query may use, e.g. 4GB (default 1 GiB; spills to a temporary "
                             "folder up to 4 times this).")(func)
    return click.option("--time-limit", "time_limit", default=None, metavar="SECONDS",
                        help="Seconds the query may run before it is stopped (default 20).")(func)
