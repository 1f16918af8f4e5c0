"""The physical dimensions the schemas use (data only), with display presets.

Each :class:`Dimension` names its SI unit, a noun for messages ("a torque"), an
example for messages, the angle powers it allows (rad is dimensionless to pint, so
we count angles ourselves) and its display units per preset:

``si``         the SI unit
``metric``     the metric units datasheets print (mN·m, rpm, g·cm², °C ...); the
               name ``datasheet`` is still read as ``metric`` (:data:`PRESET_ALIASES`)
``imperial``   oz·in, oz·in², lb, in, °F ...

A preset entry with several labels lists the habitual unit first and the others it
may switch to; :func:`~catalog.units.to_display` chooses by magnitude (a load inertia
of 0.347 kg·m² is shown as 3470 kg·cm², not 3,470,000 g·cm²).
Every label is itself a spelling :func:`~catalog.units.parse_unit` reads.
"""
from __future__ import annotations

__all__ = ["Dimension", "DIMENSIONS", "PRESETS", "PRESET_ALIASES", "dimension_noun", "get_dimension"]

from dataclasses import dataclass, field

PRESETS = ("si", "metric", "imperial")
#: Older preset names still accepted → the preset they mean.  ``datasheet`` was the
#: metric preset's first name; it never meant "the units each supplier used" (those
#: are kept per value as ``raw_unit`` and shown by ``show`` and the provenance sheet).
PRESET_ALIASES = {"datasheet": "metric"}


@dataclass(frozen=True)
class Dimension:
    """One physical dimension.

    ``si_unit`` is the ASCII SI spelling (``'N*m'``), ``pint_si`` the same for pint,
    ``angles`` the allowed powers of angle (``{1}`` for a speed), ``speed_like``:
    a bare reciprocal minute means revolutions (``1/min`` = rpm); ``back_emf``: a
    minute in the numerator means per revolution (``V·min`` = V/rpm).
    """

    name: str
    si_unit: str
    pint_si: str
    noun: str
    example: str
    display: dict = field(default_factory=dict, compare=False, hash=False)
    angles: frozenset = frozenset({0})
    speed_like: bool = False
    back_emf: bool = False
    absolute_temperature: bool = False
    temperature_family: bool = False
    accepts_percent: bool = False
    unitless_only: bool = False

    @property
    def expected(self) -> str:
        """``'a speed such as rpm or rad/s'``, for error messages."""
        return f"{self.noun} such as {self.example}"


def _d(name, si_unit, pint_si, noun, example, si, metric, imperial, **kw) -> Dimension:
    def tup(x):
        return x if isinstance(x, tuple) else (x,)

    display = {"si": tup(si), "metric": tup(metric), "imperial": tup(imperial)}
    if "angles" in kw:
        kw["angles"] = frozenset(kw["angles"])
    return Dimension(name, si_unit, pint_si, noun, example, display, **kw)


_SPEED = dict(angles={1}, speed_like=True)

_ALL = [
    _d("torque", "N*m", "newton * meter", "a torque", "mN*m or oz-in", "N·m", ("mN·m", "N·m"), ("oz·in", "lbf·in", "lbf·ft")),
    _d("angular_speed", "rad/s", "radian / second", "a speed", "rpm or rad/s",
       "rad/s", "rpm", "rpm", **_SPEED),
    _d("current", "A", "ampere", "a current", "A or mA", "A", "A", "A"),
    _d("voltage", "V", "volt", "a voltage", "V or mV", "V", "V", "V"),
    _d("resistance", "ohm", "ohm", "a resistance", "ohm or mOhm", "Ω", "Ω", "Ω"),
    _d("inductance", "H", "henry", "an inductance", "mH or uH", "H", ("mH", "µH"), ("mH", "µH")),
    _d("inertia", "kg*m**2", "kilogram * meter ** 2", "an inertia", "g*cm**2 or oz-in**2",
       "kg·m²", ("g·cm²", "kg·cm²", "kg·m²"), ("oz·in²", "lb·in²", "lb·ft²")),
    _d("mass", "kg", "kilogram", "a mass", "g or oz", "kg", ("g", "kg"), ("lb", "oz")),
    _d("length", "m", "meter", "a length", "mm or in", "m", ("mm", "m"), "in"),
    _d("time", "s", "second", "a time", "s or ms", "s", ("s", "ms", "min"), ("s", "ms", "min")),
    _d("temperature", "K", "kelvin", "a temperature", "°C or K", "K", "°C", "°F",
       absolute_temperature=True, temperature_family=True),
    _d("temperature_difference", "K", "kelvin", "a temperature difference", "K or °C",
       "K", "K", "°F", temperature_family=True),
    _d("thermal_resistance", "K/W", "kelvin / watt", "a thermal resistance", "K/W or °C/W",
       "K/W", "K/W", "°F/W", temperature_family=True),
    _d("power", "W", "watt", "a power", "W or mW", "W", ("W", "kW"), ("W", "kW")),
    _d("energy", "J", "joule", "an energy", "J or mJ", "J", "J", "J"),
    _d("torque_constant", "N*m/A", "newton * meter / ampere", "a torque constant",
       "mN*m/A, oz-in/A or V/krpm", "N·m/A", ("mN·m/A", "N·m/A"), "oz·in/A",
       angles={0, -1}, back_emf=True),
    _d("speed_constant", "(rad/s)/V", "radian / second / volt", "a speed constant",
       "rpm/V or (rad/s)/V", "(rad/s)/V", "rpm/V", "rpm/V", **_SPEED),
    _d("speed_torque_gradient", "(rad/s)/(N*m)", "radian / second / newton / meter",
       "a speed-torque gradient", "rpm/mN*m or rpm/oz-in",
       "(rad/s)/(N·m)", "rpm/(mN·m)", "rpm/(oz·in)", **_SPEED),
    _d("motor_constant", "N*m/sqrt(W)", "newton * meter / watt ** 0.5", "a motor constant",
       "mN*m/sqrt(W) or oz-in/sqrt(W)", "N·m/√W", "mN·m/√W", "oz·in/√W"),
    _d("angle", "rad", "radian", "an angle", "arcmin or deg", "rad", "arcmin", "arcmin",
       angles={1}),
    _d("force", "N", "newton", "a force", "N or lbf", "N", "N", "lbf"),
    _d("linear_speed", "m/s", "meter / second", "a linear speed", "mm/s or m/s", "m/s", "mm/s", "in/s"),
    _d("angular_acceleration", "rad/s**2", "radian / second ** 2", "an angular acceleration",
       "rad/s**2", "rad/s²", "rad/s²", "rad/s²", **_SPEED),
    _d("dimensionless", "1", "dimensionless", "a ratio", "a plain number or %",
       "", "%", "%", accepts_percent=True),
    _d("count", "1", "dimensionless", "a count", "a plain number without unit",
       "", "", "", unitless_only=True),
]

#: name -> :class:`Dimension`, in table order (the order decides the noun of a
#: found unit when two dimensions share one, e.g. torque before energy).
DIMENSIONS: dict[str, Dimension] = {d.name: d for d in _ALL}


def get_dimension(dimension) -> Dimension:
    """The :class:`Dimension` for a name (or a Dimension itself)."""
    if isinstance(dimension, Dimension):
        return dimension
    try:
        return DIMENSIONS[dimension]
    except KeyError:
        raise KeyError(f"unknown dimension {dimension!r}, expected one of "
                       f"{', '.join(DIMENSIONS)}") from None


def dimension_noun(dimension) -> str:
    """``'a torque'`` for ``'torque'``, for messages."""
    return get_dimension(dimension).noun
