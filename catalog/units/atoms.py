"""The spelling tables: atoms, glued spellings and known misprints (data only).

An *atom* is one unit word as datasheets write it (``mN``, ``oz``, ``rpm``, ``°C``).
Each atom has one or more *meanings*, a pint expression plus the canonical symbol
we render it as.  Atoms with two meanings (``oz``, ``lb``, ``kg``, ``g``: a mass or
the matching force) are resolved by the dimension the field expects, see
:mod:`catalog.units.spelling`.

``kind`` drives the special rules:

========== ==================================================================
length     a digit glued on is a power (``cm2`` = cm²)
time       ditto (``s2``); a bare reciprocal second in a speed field is an
           ambiguity error (rad/s or rev/s?)
minute     a bare reciprocal minute/hour in a speed field means revolutions
angle      counts one angle (rad, rev, deg, arcmin)
speed      counts one angle per time (rpm, krpm, rps)
hz         Hz: ambiguous in every speed-like field
temp       °C, °F, K: absolute in a ``temperature`` field, differences elsewhere
bare_temp  bare ``C``/``F``: only in the temperature fields (never coulomb/farad)
percent    ``%``: only in ``dimensionless`` fields
energy     J, Wh: tells an energy from a torque in error messages
========== ==================================================================

Keep every table explicit: a spelling that is not here is an error, never a guess.
"""
from __future__ import annotations

__all__ = [
    "Meaning",
    "Atom",
    "ATOMS",
    "FOLDED",
    "GLUED",
    "MISPRINTS",
    "lookup_run",
    "spelling_table_markdown",
]

from dataclasses import dataclass


@dataclass(frozen=True)
class Meaning:
    """One reading of an atom: ``pint`` expression, ``symbol`` for canonical text.

    ``delta`` is the pint expression used outside absolute-temperature fields
    (temperature atoms only).
    """

    symbol: str
    pint: str
    delta: str | None = None


@dataclass(frozen=True)
class Atom:
    """A unit word: its spellings' common meanings, kind and documentation note."""

    spelling: str
    meanings: tuple[Meaning, ...]
    kind: str = ""
    note: str = ""

    @property
    def angle(self) -> int:
        """Angles this atom counts per unit power (1 for rad, rpm ...; else 0)."""
        return 1 if self.kind in ("angle", "speed") else 0


def _m(symbol: str, pint: str, delta: str | None = None) -> Meaning:
    return Meaning(symbol, pint, delta)


_MASS_FORCE = "a mass or the matching force, chosen by the field"

# (spellings, meanings, kind, fold, note).  ``fold``: the spellings may also be
# written in any letter case ('OZ-IN', 'Rpm'); never set for prefixed atoms,
# where case is meaning (mOhm vs MOhm).
_TABLE: list[tuple[tuple[str, ...], tuple[Meaning, ...], str, bool, str]] = [
    # --- length -----------------------------------------------------------
    (("m",), (_m("m", "meter"),), "length", False, ""),
    (("mm",), (_m("mm", "millimeter"),), "length", False, ""),
    (("cm",), (_m("cm", "centimeter"),), "length", False, ""),
    (("µm", "um"), (_m("um", "micrometer"),), "length", False, ""),
    (("in", "inch", "inches"), (_m("in", "inch"),), "length", True, ""),
    (("ft", "foot", "feet"), (_m("ft", "foot"),), "length", True, ""),
    # --- mass and force ---------------------------------------------------
    (("g",), (_m("g", "gram"), _m("gf", "gram_force")), "mass_force", False, _MASS_FORCE),
    (("kg",), (_m("kg", "kilogram"), _m("kgf", "kilogram_force")), "mass_force", False, _MASS_FORCE),
    (("oz",), (_m("oz", "ounce"), _m("ozf", "ounce_force")), "mass_force", True, _MASS_FORCE),
    (("lb", "lbs"), (_m("lb", "pound"), _m("lbf", "pound_force")), "mass_force", True, _MASS_FORCE),
    (("mg",), (_m("mg", "milligram"),), "", False, ""),
    (("lbm",), (_m("lb", "pound"),), "", True, "mass only"),
    (("N",), (_m("N", "newton"),), "", False, ""),
    (("mN",), (_m("mN", "millinewton"),), "", False, ""),
    (("µN", "uN"), (_m("uN", "micronewton"),), "", False, ""),
    (("cN",), (_m("cN", "centinewton"),), "", False, ""),
    (("kN",), (_m("kN", "kilonewton"),), "", False, ""),
    (("gf",), (_m("gf", "gram_force"),), "", False, "g_n = 9.80665 m/s² exactly"),
    (("kgf", "kp"), (_m("kgf", "kilogram_force"),), "", False, ""),
    (("ozf",), (_m("ozf", "ounce_force"),), "", True, ""),
    (("lbf",), (_m("lbf", "pound_force"),), "", True, ""),
    # --- time -------------------------------------------------------------
    (("s", "sec", "secs"), (_m("s", "second"),), "time", False, ""),
    (("ms", "msec"), (_m("ms", "millisecond"),), "time", False, "millisecond, never m·s"),
    (("µs", "us"), (_m("us", "microsecond"),), "time", False, ""),
    (("min", "mins"), (_m("min", "minute"),), "minute", False, "minute, never m·in"),
    (("h", "hr", "hrs"), (_m("h", "hour"),), "minute", False, ""),
    (("d", "day", "days"), (_m("d", "day"),), "minute", False, "lead times"),
    (("wk", "week", "weeks"), (_m("wk", "week"),), "minute", False, "lead times"),
    (("Hz",), (_m("Hz", "hertz"),), "hz", False, "ambiguous in speed fields"),
    # --- angle and angular speed -----------------------------------------
    (("rad",), (_m("rad", "radian"),), "angle", True, ""),
    (("mrad",), (_m("mrad", "milliradian"),), "angle", False, ""),
    (("rev", "r", "turn", "turns"), (_m("rev", "revolution"),), "angle", False, "r as in r/min"),
    (("deg", "°"), (_m("deg", "degree"),), "angle", True, "angle degree"),
    (("arcmin",), (_m("arcmin", "arcminute"),), "angle", True, ""),
    (("arcsec",), (_m("arcsec", "arcsecond"),), "angle", True, ""),
    (("rpm", "RPM", "Rpm"), (_m("rpm", "revolution / minute"),), "speed", True, "revolutions per minute"),
    (("krpm", "kRPM", "Krpm"), (_m("krpm", "1000 * revolution / minute"),), "speed", True, "1000 rpm"),
    (("rps", "RPS"), (_m("rps", "revolution / second"),), "speed", True, ""),
    # --- electrical -------------------------------------------------------
    (("A", "ADC", "Adc"), (_m("A", "ampere"),), "", False, ""),
    (("mA",), (_m("mA", "milliampere"),), "", False, ""),
    (("µA", "uA"), (_m("uA", "microampere"),), "", False, ""),
    (("kA",), (_m("kA", "kiloampere"),), "", False, ""),
    (("V", "VDC", "Vdc"), (_m("V", "volt"),), "", False, ""),
    (("mV",), (_m("mV", "millivolt"),), "", False, ""),
    (("µV", "uV"), (_m("uV", "microvolt"),), "", False, ""),
    (("kV",), (_m("kV", "kilovolt"),), "", False, ""),
    (("Ω", "ohm", "ohms", "Ohm", "Ohms"), (_m("ohm", "ohm"),), "", True, ""),
    (("mΩ", "mOhm", "mohm", "mOhms"), (_m("mohm", "milliohm"),), "", False, ""),
    (("µΩ", "uOhm", "uohm"), (_m("uohm", "microohm"),), "", False, ""),
    (("kΩ", "kOhm", "kohm", "kOhms"), (_m("kohm", "kiloohm"),), "", False, ""),
    (("MΩ", "MOhm", "Mohm", "MOhms"), (_m("Mohm", "megaohm"),), "", False, "mega, not milli"),
    (("H",), (_m("H", "henry"),), "", False, ""),
    (("mH",), (_m("mH", "millihenry"),), "", False, ""),
    (("µH", "uH"), (_m("uH", "microhenry"),), "", False, "µ (U+00B5) or μ (U+03BC)"),
    (("nH",), (_m("nH", "nanohenry"),), "", False, ""),
    (("W",), (_m("W", "watt"),), "", False, ""),
    (("mW",), (_m("mW", "milliwatt"),), "", False, ""),
    (("kW",), (_m("kW", "kilowatt"),), "", False, ""),
    (("J",), (_m("J", "joule"),), "energy", False, ""),
    (("mJ",), (_m("mJ", "millijoule"),), "energy", False, ""),
    (("kJ",), (_m("kJ", "kilojoule"),), "energy", False, ""),
    (("Wh",), (_m("Wh", "watt_hour"),), "energy", False, ""),
    # --- temperature ------------------------------------------------------
    (("°C", "degC"), (_m("degC", "degree_Celsius", "delta_degree_Celsius"),), "temp", False, ""),
    (("°F", "degF"), (_m("degF", "degree_Fahrenheit", "delta_degree_Fahrenheit"),), "temp", False, ""),
    (("K",), (_m("K", "kelvin", "kelvin"),), "temp", False, ""),
    (("C",), (_m("degC", "degree_Celsius", "delta_degree_Celsius"),), "bare_temp", False,
     "°C in temperature fields only; never coulomb"),
    (("F",), (_m("degF", "degree_Fahrenheit", "delta_degree_Fahrenheit"),), "bare_temp", False,
     "°F in temperature fields only; never farad"),
    # --- plain numbers ----------------------------------------------------
    (("%",), (_m("%", "percent"),), "percent", False, "dimensionless fields only"),
]

ATOMS: dict[str, Atom] = {}
FOLDED: dict[str, Atom] = {}  #: lower-cased spelling -> atom, for fold-able atoms only
for _spellings, _meanings, _kind, _fold, _note in _TABLE:
    for _s in _spellings:
        if _s in ATOMS:  # pragma: no cover - table sanity
            raise RuntimeError(f"atom spelling {_s!r} listed twice")
        ATOMS[_s] = Atom(_s, _meanings, _kind, _note)
        if _fold:
            FOLDED[_s.lower()] = ATOMS[_s]

#: Glued spellings (no separator) -> the atoms they are made of.  A power written
#: after a glued spelling binds to its last atom: ``gcm²`` = g·cm², ``kgm2`` = kg·m².
GLUED: dict[str, tuple[str, ...]] = {
    "Nm": ("N", "m"), "mNm": ("mN", "m"), "µNm": ("µN", "m"), "uNm": ("uN", "m"),
    "cNm": ("cN", "m"), "kNm": ("kN", "m"), "Ncm": ("N", "cm"), "Nmm": ("N", "mm"),
    "mNmm": ("mN", "mm"),
    "gcm": ("g", "cm"), "gfcm": ("gf", "cm"), "kgcm": ("kg", "cm"), "kgfcm": ("kgf", "cm"),
    "kgm": ("kg", "m"), "kgfm": ("kgf", "m"), "gmm": ("g", "mm"),
    "ozin": ("oz", "in"), "inoz": ("in", "oz"), "ozfin": ("ozf", "in"), "inozf": ("in", "ozf"),
    "lbin": ("lb", "in"), "inlb": ("in", "lb"), "lbfin": ("lbf", "in"), "inlbf": ("in", "lbf"),
    "lbft": ("lb", "ft"), "ftlb": ("ft", "lb"), "lbfft": ("lbf", "ft"), "ftlbf": ("ft", "lbf"),
    "Vs": ("V", "s"), "mVs": ("mV", "s"), "Ws": ("W", "s"),
}
_GLUED_FOLDED = {k.lower(): v for k, v in GLUED.items()
                 if all(a.lower() in FOLDED for a in v)}

#: Known misprints, per dimension: spelling (spaces removed, lower case) ->
#: the spelling meant.  Each use returns a warning.
MISPRINTS: dict[str, dict[str, str]] = {
    "torque": {
        "kg/cm": "kgf*cm", "kgf/cm": "kgf*cm", "g/cm": "gf*cm", "gf/cm": "gf*cm",
        "oz/in": "ozf*in", "ozf/in": "ozf*in", "lb/in": "lbf*in", "lbf/in": "lbf*in",
        "lb/ft": "lbf*ft", "lbf/ft": "lbf*ft", "n/m": "N*m", "mn/m": "mN*m",
    },
}


def lookup_run(run: str) -> tuple[Atom, ...] | None:
    """Atoms of a run of letters: exact atom, case-folded atom, glued spelling."""
    atom = ATOMS.get(run) or FOLDED.get(run.lower())
    if atom is not None:
        return (atom,)
    parts = GLUED.get(run) or _GLUED_FOLDED.get(run.lower())
    if parts is None:
        return None
    return tuple(ATOMS[p] for p in parts)


def spelling_table_markdown() -> str:
    """The atom, glued and misprint tables as Markdown (docs are generated from data)."""
    lines = ["| spellings | reads as (pint) | kind | note |", "| --- | --- | --- | --- |"]
    for spellings, meanings, kind, fold, note in _TABLE:
        spell = ", ".join(f"`{s}`" for s in spellings) + (" (any case)" if fold else "")
        reads = " or ".join(f"{m.symbol} (`{m.pint}`)" for m in meanings)
        lines.append(f"| {spell} | {reads} | {kind or '-'} | {note} |".replace("|  |", "| |"))
    lines += ["", "| glued spelling | atoms |", "| --- | --- |"]
    lines += [f"| `{k}` | {' · '.join(v)} |" for k, v in GLUED.items()]
    lines += ["", "| field | misprint | read as (with a warning) |", "| --- | --- | --- |"]
    for dim, table in MISPRINTS.items():
        lines += [f"| {dim} | `{k}` | `{v}` |" for k, v in table.items()]
    return "\n".join(lines) + "\n"
