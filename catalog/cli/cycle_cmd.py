"""The ``cycle`` command: the duty cycle of a load envelope at the gear output (parsing and printing only)."""
from __future__ import annotations

__all__ = ["cycle_cmd"]

import click

from . import Context, cli, handle_errors
from .options import FORMAT_OPTION, UNITS_OPTION
from .output import echo, print_frame


def _frame(cyc, units: str):
    """The segments as a table (:func:`catalog.export.cycle.cycle_frame`, also in the HTML report)."""
    from ..export.cycle import cycle_frame

    return cycle_frame(cyc, units)


@cli.command("cycle")
@click.argument("envelope", type=click.Path(dir_okay=False))
@FORMAT_OPTION
@UNITS_OPTION
@click.pass_obj
@handle_errors
def cycle_cmd(obj: Context, envelope, fmt, units):
    """Show the duty cycle of a load envelope at the gear output: what the gear must deliver.

    One row per segment: its name, the input it came from (a move of the
    mechanism, a written segment), its duration, the torque at the gear output
    (with the acceleration of the load's masses through the mechanism's
    efficiency) and the speed at its start and end; then the load inertia
    reflected to the gear output (for information: it is in the torques).
    `--format json` prints SI: {"inertia": kg*m^2, "segments": [{"name",
    "duration" s, "torque" N*m, "speed_start" and "speed_end" rad/s}]}.
    Reads no catalogue.
    """
    import json

    from ..units import to_display

    cyc = obj.catalog().cycle(envelope)
    if fmt == "json":
        click.echo(json.dumps(cyc.to_dict(), indent=2))
        return
    if fmt == "csv":
        print_frame(_frame(cyc, "si"), "csv")
        return
    form = "operating point(s)" if cyc.mode == "points" else (
        f"segment(s), {cyc.period:.4g} s per cycle" + (", repeated" if cyc.repeat else ", one pass from cold"))
    echo(f"envelope {cyc.envelope} ({cyc.source}): {len(cyc.names)} {form}, at the gear output")
    if cyc.mechanism is not None:
        echo(f"mechanism {cyc.mechanism.describe()}")
    print_frame(_frame(cyc, units), "table")
    value, unit = to_display([cyc.inertia], "inertia", units)
    origin = "reflected from the mechanism" if cyc.mechanism is not None else "load.inertia"
    echo(f"load inertia at the gear output: {value[0]:.4g} {unit} ({origin}; for information: "
         "the torques include its acceleration)")
