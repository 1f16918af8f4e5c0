"""The ``select`` command: evaluate the catalogue against a load envelope (parsing and printing only)."""
from __future__ import annotations

__all__ = ["select_cmd", "display_misses"]

import sys

import click

from . import Context, cli, handle_errors
from ..export.formats import extension_list
from .options import FORMAT_OPTION, OUT_UNITS_OPTION, TOP_OPTION
from .output import echo, print_frame


def display_misses(misses):
    """The closest misses: one line each with its shortfall and failed checks, then what would do."""
    if not len(misses):
        echo("closest misses: none measurable (every rejected candidate lacks data or fails a check "
             "without a measure, such as the commutation or mount)")
        return
    echo(f"closest misses ({len(misses)}; shortfall: how far each failed check is from passing, as a "
         "fraction of its limit, summed):")
    for row in misses.itertuples(index=False):
        echo(f"  {int(row.miss)}. {row.candidate}: short by {row.shortfall * 100:.1f} % ({row.failed})")
        if row.suggestions:
            echo(f"     {row.suggestions}")


@cli.command("select")
@click.argument("envelope", type=click.Path(dir_okay=False))
@TOP_OPTION
@FORMAT_OPTION
@click.option("--explain", "explain", default=None, metavar="ID",
              help="Print every segment and every margin of one candidate instead of the shortlist.")
@click.option("--stock", type=click.Choice(["only", "prefer", "ignore"]), default=None,
              help="The shelf: only stocked parts, stocked first, or ignore it (default: the envelope's ranking.stock).")
@click.option("--out", "out", type=click.Path(dir_okay=False), default=None, metavar="FILE",
              help="Also write the shortlist (XLSX: with rejected, envelope, provenance, cautions) to FILE: "
                   f"{extension_list()}.")
@click.option("--misses", type=int, default=None, metavar="N",
              help="Also list the N closest misses: the rejected candidates that fail by the least, with the "
                   "supply voltage, drive current or ratio that would do (listed anyway when nothing passes).")
@OUT_UNITS_OPTION
@click.pass_obj
@handle_errors
def select_cmd(obj: Context, envelope, top, fmt, explain, stock, out, units, misses):
    """Pick motors (with gear options) that meet a load envelope (TOML, see queries/).

    Exit code 0 when at least one candidate passes, 1 when none does, 2 on input errors.
    """
    cat = obj.catalog()
    sel = cat.select(envelope, top=top, stock=stock, out=None if explain else out, units=units, misses=misses)
    if explain:
        echo(sel.explain(explain))
        return
    if out:
        echo(f"{out}: shortlist of {len(sel.shortlist)} written ({units} units)", err=fmt != "table")
    env = sel.envelope
    n_pass, n_rej = sel.counts
    if fmt != "table":
        print_frame(sel.shortlist, fmt)
        sys.exit(0 if n_pass else 1)
    echo(f"envelope {env.name} ({env.source}): {n_pass + n_rej} candidate(s), "
               f"{n_pass} pass, {n_rej} rejected")
    if n_pass:
        from ..present import display_shortlist

        print_frame(display_shortlist(sel.shortlist), "table",
                    title=f"best {len(sel.shortlist)} by {', '.join(env.rank_keys)}"
                    + {"only": ", stocked parts only", "prefer": ", stocked first"}.get(sel.stock_mode, ""))
        for row in sel.shortlist.itertuples(index=False):
            if row.notes:
                echo(f"  note {int(row.rank)}: {row.notes}")
    elif n_rej == 0:
        echo(f"no candidate: {cat.path} holds no motors (`motorshelf import FILE` adds datasheets)")
    else:
        echo("no candidate meets the envelope")
    if sel.shows_misses:
        display_misses(sel.misses())
    counts = sel.reason_counts()
    if len(counts):
        from ..select.registry import CHECKS

        echo("rejections per check (a candidate can fail several):")
        for key, count in counts.items():
            echo(f"  {count:>5}  {key}: {CHECKS[key]}")
    sys.exit(0 if n_pass else 1)
