"""The ``select`` command: evaluate the catalogue against a load envelope (parsing and printing only)."""
from __future__ import annotations

__all__ = ["select_cmd", "display_shortlist"]

import sys

import click

from . import Context, cli, handle_errors
from .output import FORMAT_OPTION, print_frame, echo


def display_shortlist(shortlist):
    """The shortlist in display units: margins in %, temperature in °C, mass in g."""
    import pandas as pd

    pct = lambda col: (shortlist[col] * 100).round(1)  # noqa: E731
    out = pd.DataFrame({
        "rank": shortlist["rank"].astype(int),
        "candidate": shortlist["candidate"],
        "worst segment": shortlist["worst_segment"],
        "V %": pct("voltage_margin"),
        "Ipk %": pct("peak_current_margin"),
        "Irms %": pct("rms_current_margin"),
        "ΔT K": shortlist["temperature_margin"].round(1),
        "speed %": pct("motor_speed_margin"),
        "gear %": pct("gear_peak_torque_margin"),
        "Tw °C": (shortlist["winding_temperature"] - 273.15).round(1),
        "Irms A": shortlist["rms_current"].round(3),
        "mass g": (shortlist["mass"] * 1e3).round(0),
        "price": shortlist["price"],
    })
    if "currency" in shortlist:
        currencies = sorted({c for c in shortlist["currency"] if c})
        if len(currencies) == 1:
            out = out.rename(columns={"price": f"price {currencies[0]}"})
        elif currencies:
            out["cur"] = shortlist["currency"]
    if shortlist["pareto"].any():
        out["pareto"] = shortlist["pareto"].map({True: "yes", False: ""})
    if "available" in shortlist:  # the shelf (catalog.inventory.selection): complete sets on hand, where
        out["in stock"] = shortlist["available"]
        out["location"] = shortlist["location"]
    return out


@cli.command("select")
@click.argument("envelope", type=click.Path(dir_okay=False))
@click.option("--top", type=click.IntRange(min=1), default=None, metavar="N",
              help="Shortlist length (default: the envelope's ranking.top, else 10).")
@FORMAT_OPTION
@click.option("--explain", "explain", default=None, metavar="ID",
              help="Print every segment and every margin of one candidate instead of the shortlist.")
@click.option("--stock", type=click.Choice(["only", "prefer", "ignore"]), default=None,
              help="The shelf: only stocked parts, stocked first, or ignore it (default: the envelope's ranking.stock).")
@click.option("--out", "out", type=click.Path(dir_okay=False), default=None, metavar="FILE",
              help="Also write the shortlist (XLSX: with rejected, envelope, provenance, cautions) to FILE: "
                   ".xlsx, .csv, .json or .parquet.")
@click.option("--units", "units", type=click.Choice(["si", "metric", "imperial", "datasheet"]), default="metric",
              show_default=True, help="Units of the --out file (Parquet always keeps SI).")
@click.pass_obj
@handle_errors
def select_cmd(obj: Context, envelope, top, fmt, explain, stock, out, units):
    """Pick motors (with gear options) that meet a load envelope (TOML, see queries/).

    Exit code 0 when at least one candidate passes, 1 when none does, 2 on input errors.
    """
    if out:
        from ..export.writers import format_for

        format_for(out)   # a wrong extension is an input error before any work
    cat = obj.catalog()
    sel = cat.select(envelope, top=top, stock=stock)
    if explain:
        echo(sel.explain(explain))
        return
    if out:
        from ..export.selection import write_selection

        written = write_selection(sel, out, units=units, catalog=cat)
        echo(f"{written}: shortlist of {len(sel.shortlist)} written ({units} units)", err=fmt != "table")
    env = sel.envelope
    n_pass, n_rej = sel.counts
    if fmt != "table":
        print_frame(sel.shortlist, fmt)
        sys.exit(0 if n_pass else 1)
    echo(f"envelope {env.name} ({env.source}): {n_pass + n_rej} candidate(s), "
               f"{n_pass} pass, {n_rej} rejected")
    if n_pass:
        print_frame(display_shortlist(sel.shortlist), "table",
                    title=f"best {len(sel.shortlist)} by {', '.join(env.rank_keys)}"
                    + {"only": ", stocked parts only", "prefer": ", stocked first"}.get(getattr(sel, "stock_mode", ""), ""))
        for row in sel.shortlist.itertuples(index=False):
            if row.notes:
                echo(f"  note {int(row.rank)}: {row.notes}")
    elif n_rej == 0:
        echo(f"no candidate: {cat.path} holds no motors (`motorshelf import FILE` adds datasheets)")
    else:
        echo("no candidate meets the envelope")
    counts = sel.reason_counts()
    if len(counts):
        from ..select import CHECKS

        echo("rejections per check (a candidate can fail several):")
        for key, count in counts.items():
            echo(f"  {count:>5}  {key}: {CHECKS[key]}")
    sys.exit(0 if n_pass else 1)
