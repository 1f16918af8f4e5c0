"""The glossary: formula symbol, the one name of each quantity in code, its SI unit.

A catalogue quantity is named by its schema field everywhere (relation inputs and
outputs, physics parameters, DataFrame columns); its symbol is the ``x-symbol`` of the
schema.  The physics kernels also take quantities of an operating point or of the
thermal network that are no catalogue field: :data:`OTHER_QUANTITIES` names them,
once.  ``docs/glossary.md`` is generated from both by :func:`glossary_markdown`
(``tests/test_docs.py`` checks it is current; ``tests/physics`` checks that every
physics parameter is a schema field or listed here).
"""
from __future__ import annotations

__all__ = ["OTHER_QUANTITIES", "OPTION_PARAMETERS", "glossary_markdown"]

#: (symbol, name, SI unit, meaning) of the quantities physics functions take that are not
#: catalogue fields.
OTHER_QUANTITIES = (
    ("V", "supply_voltage", "V",
     "terminal voltage of an operating point; the datasheet relations take it at `nominal_voltage`"),
    ("T", "torque", "N·m", "shaft torque of an operating point (`nominal_torque` at the nominal point)"),
    ("ω", "speed", "rad/s", "shaft speed of an operating point (`nominal_speed` at the nominal point)"),
    ("I", "current", "A", "motor current of an operating point (`nominal_current`, `max_continuous_current`)"),
    ("Ik", "currents", "A", "motor current of each duty-cycle segment"),
    ("Δtk", "durations", "s", "duration of each duty-cycle segment"),
    ("Pk", "losses", "W", "loss in the winding during each duty-cycle segment"),
    ("Pcu,a", "copper_loss", "W", "copper loss of each segment with R and Kt at ambient, T²·R(Ta)/Kt(Ta)²"),
    ("P0(t0)", "no_load_loss_start", "W",
     "no-load loss (friction and iron, Kt·I0·ω) at each segment's start; independent of the winding temperature"),
    ("P0(t1)", "no_load_loss_end", "W", "the same at each segment's end (it ramps linearly between)"),
    ("P(t0)", "loss_start", "W", "loss at each segment's start, independent of the temperatures"),
    ("P(t1)", "loss_end", "W", "the same at each segment's end (it ramps linearly between)"),
    ("θ0", "start_rise", "K", "winding rise at which an iteration starts (a guess of the solution)"),
    ("P", "power", "W", "power of each segment (energy per cycle)"),
    ("Tw", "winding_temperature", "K", "mean winding temperature"),
    ("Tw(0)", "initial_winding_temperature", "K", "winding temperature at the start of a transient"),
    ("Th(0)", "initial_housing_temperature", "K", "housing temperature at the start of a transient"),
    ("T", "temperature", "K", "a winding temperature at which a resistance is wanted or was measured"),
    ("R(T)", "resistance", "Ω", "a winding resistance measured at `temperature`"),
    ("Ta", "ambient_temperature", "K", "air around the motor (the envelope's `environment.ambient_temperature`)"),
    ("Tmag", "magnet_temperature", "K", "magnet temperature (taken as the winding temperature in selection)"),
    ("Tref", "reference_temperature", "K",
     "temperature a constant or a coefficient is stated at (for Kt the catalogue uses "
     "`resistance_reference_temperature`)"),
    ("α", "temperature_coefficient", "1/K", "resistance temperature coefficient (copper α20 = 0.00393 /K)"),
    ("Tα", "coefficient_reference_temperature", "K", "temperature α refers to (20 °C for α20)"),
    ("β", "remanence_coefficient", "1/K", "reversible temperature coefficient of the magnet's remanence"),
    ("–", "magnet_material", "–", "schema field of the motor; sets β (`magnet_coefficient`)"),
    ("–", "insulation_class", "–", "IEC 60085 thermal class letter"),
    ("θcold", "cold_rise", "K", "winding temperature rise with R and Kt held at ambient"),
    ("a", "resistance_rise_coefficient", "1/K", "relative growth of R per kelvin, (dR/dT)/R(Ta)"),
    ("b", "torque_constant_rise_coefficient", "1/K", "relative change of Kt per kelvin, (dKt/dT)/Kt(Ta)"),
    ("Jg", "gear_inertia", "kg·m²",
     "gearhead inertia at its input (the gearhead field `inertia`, or the envelope's `gearing.inertia`)"),
    ("JL", "load_inertia", "kg·m²", "load inertia at the gear output (the envelope's `load.inertia`)"),
    ("TL", "load_torque", "N·m", "torque at the gear output"),
    ("ωL", "load_speed", "rad/s", "speed at the gear output"),
    ("αL", "load_acceleration", "rad/s²", "angular acceleration at the gear output"),
    ("Tmot", "motor_torque", "N·m", "torque at the gear input (motor shaft)"),
    ("ωmot", "motor_speed", "rad/s", "speed at the gear input (motor shaft)"),
    ("ηback", "back_driving_efficiency", "1", "gear efficiency when the load drives the motor"),
    ("p", "lead", "m", "travel of a screw per revolution"),
    ("r", "radius", "m", "effective radius of a mechanism: pulley, pinion, drum or wheel radius, lead/2π of a screw"),
    ("a", "acceleration", "m/s²", "linear acceleration of a mechanism's moving mass"),
    ("θ", "slope_angle", "rad", "angle of travel above the horizontal (a slope for a wheel)"),
    ("μ", "friction_coefficient", "1", "Coulomb friction coefficient of a linear guide"),
    ("Fext", "external_force", "N", "external force opposing positive travel"),
    ("Crr", "rolling_resistance", "1", "rolling resistance coefficient of a wheel"),
    ("nw", "wheels", "1", "driven wheels sharing a vehicle's load"),
    ("F", "force", "N", "force on a linear mechanism at its effective radius"),
    ("Jmech", "mechanism_inertia", "kg·m²", "a mechanism's own inertia at its input (screw, pulleys, drum)"),
    ("α", "angular_acceleration", "rad/s²", "angular acceleration of a mechanism's input"),
    ("Text", "external_torque", "N·m", "external torque on a rotary load (e.g. an unbalance)"),
    ("D", "distance", "m or rad", "travel of a move (an angle for a rotary mechanism)"),
    ("tmove", "move_time", "s", "duration of a whole move"),
    ("fa", "accel_fraction", "1", "part of a move's time spent accelerating (the same decelerating)"),
    ("Cw", "winding_heat_capacity", "J/K", "heat capacity of the winding node, τw/Rth1 of the datasheet"),
    ("Ch", "housing_heat_capacity", "J/K",
     "heat capacity of the housing node, τmotor/Rth2 of the datasheet (a cooling factor leaves it unchanged)"),
)

#: Physics parameters that are options or containers, not quantities (not in the glossary).
OPTION_PARAMETERS = frozenset({"bound", "missing", "periodic", "regenerative", "samples_per_segment",
                               "segments_first", "trajectory", "maps", "response", "values", "end_values",
                               "end_power", "node",
                               "no_load_at_winding", "tolerance"})


def _meaning(description: str) -> str:
    """A schema description without its bracketed unit and closing full stop."""
    import re

    return re.sub(r"\s*\[[^\[\]]+\]", "", description).rstrip(".").strip()


_HEAD = """Every quantity has one name in code: the schema field name for a catalogue quantity (relation
inputs and outputs in `catalog/derive.py`, physics parameters, DataFrame columns), the name below
for a quantity of an operating point or of the thermal network. Formulas, docstrings and the
relation names of `docs/relations.md` use the symbols. Inside a kernel a short local variable may
stand for a name (`r`, `kt`, `rth1`, `tau_w` for τw, `tau_motor` for τmotor); this table maps them.
"""


def glossary_markdown() -> str:
    """The body of ``docs/glossary.md`` (:mod:`catalog.docs` adds its title): catalogue fields with a symbol, then the other quantities."""
    from .fields import RECORD_TYPES, fields_for

    lines = [_HEAD, "| symbol | name | SI unit | record | meaning |", "|---|---|---|---|---|"]
    for record_type in RECORD_TYPES:
        for f in fields_for(record_type).values():
            if f.symbol:
                lines.append(f"| {f.symbol} | `{f.name}` | {f.si_unit or '–'} | {record_type} | "
                             f"{_meaning(f.description)} |")
    lines += ["", "| symbol | name | SI unit | meaning |", "|---|---|---|---|"]
    for symbol, name, unit, meaning in OTHER_QUANTITIES:
        lines.append(f"| {symbol} | `{name}` | {unit} | {meaning} |")
    lines += ["", "## Text values", "",
              "A text field takes one of its values, read in any case and with words joined by spaces,",
              "hyphens or underscores alike; the other spellings below (`x-synonyms` of the schema) are read",
              "as the value too. The value is stored, the text as written is kept beside it.", "",
              "| field | value | also read |", "|---|---|---|"]
    for record_type in RECORD_TYPES:
        for f in fields_for(record_type).values():
            for value in f.enum or ():
                also = ", ".join(f"`{s}`" for s, v in f.synonyms if v == value)
                lines.append(f"| `{f.name}` | `{value}` | {also or '–'} |")
    return "\n".join(lines) + "\n"
