"""Load envelopes: read a TOML file (or a dict), validate it, convert it to SI.

The structure is checked against ``schemas/envelope.schema.json`` (JSON Schema
2020-12, ``additionalProperties: false`` everywhere); every quantity string is
then read with :func:`catalog.units.parse_quantity` in the dimension the schema
names (``x-dimension``) and checked for sign (``x-sign``) and range
(``x-min``/``x-max``); finally limits that contradict each other are refused.
Every problem becomes a :class:`~catalog.errors.Problem` whose field is the key
path (``cycle.segments[2].duration``, positions from 0), collected into one
:class:`~catalog.errors.InputError`.

A cycle segment whose speed ramp passes through zero is split at the crossing
into two segments with the same name, so that within every evaluated segment
the speed keeps its sign (friction and gear power flow then stay constant).

A load given as a mechanism (``[load.mechanism]``) with moves
(``[[motion.moves]]``) or with segments at the mechanism is turned into
segments at the gear output by :mod:`catalog.select.motion`; the envelope
keeps those segments, so the selection reads every envelope alike, plus the
source of each segment and the reflected load inertia.
"""
from __future__ import annotations

__all__ = ["Envelope", "load_envelope", "envelope_schema", "RANK_KEYS", "MAX_ENVELOPE_BYTES",
           "MAX_ENVELOPE_DEPTH", "MAX_SEGMENTS", "MAX_RATIOS", "ratio_label"]

import json
import math
import re
import tomllib
from dataclasses import dataclass, field
from functools import lru_cache
from pathlib import Path

import numpy as np

from ..errors import InputError, Problem
from ..units import UnitError, dimension_noun, parse_quantity
from ..units.dimensions import get_dimension
from . import motion

SCHEMA_PATH = Path(__file__).resolve().parents[2] / "schemas" / "envelope.schema.json"

#: Ranking keys and what they mean (units as in the shortlist columns).
RANK_KEYS = {
    "mass": "motor plus gearhead mass [kg]",
    "price": "motor plus gearhead price [catalogue currency]",
    "length": "motor plus gearhead length [m]",
    "diameter": "largest diameter of motor and gearhead [m]",
    "winding_temperature": "peak winding temperature [K]",
    "energy_per_cycle": "energy drawn from the supply per cycle [J]",
    "rms_current": "RMS motor current [A]",
    "smallest_margin": "smallest margin over all checks, as a fraction "
                       "(temperature as (Tmax - Tw)/(Tmax - Ta)) [1]",
    "ratio": "gear ratio [1]",
}


@dataclass
class Envelope:
    """A validated load envelope in SI units.

    Segment arrays have shape (S,): ``duration`` [s], ``torque`` load torque
    at the gear output [N·m], ``speed_start``/``speed_end`` load speed [rad/s],
    ``continuous`` whether a segment counts for thermal/RMS limits [-].
    For operating points the duration is 1 s (a weight only).
    """

    name: str
    description: str
    source: str
    mode: str                      # "points" or "cycle"
    names: list
    duration: np.ndarray
    torque: np.ndarray
    speed_start: np.ndarray
    speed_end: np.ndarray
    continuous: np.ndarray
    repeat: bool = True
    nominal_voltage: float = math.nan      # [V]
    min_voltage: float = math.nan          # [V]
    drive_voltage_drop: float = 0.0        # [V]
    brush_voltage_drop: float | None = None  # [V] of brushed motors that state none; None: not given (0 V)
    drive_continuous_current: float = math.inf  # [A]
    drive_peak_current: float = math.inf   # [A]
    regenerative: bool = False
    ambient_temperature: float = 298.15    # [K]
    housing_cooling_factor: float = 1.0    # [1]
    load_inertia: float = 0.0              # [kg·m²]
    back_drive: bool = True
    limits: dict = field(default_factory=dict)   # max_diameter [m], max_length [m], max_mass [kg], max_price
    commutation: list | None = None
    mount: list | None = None
    margins: dict = field(default_factory=dict)  # voltage/current/torque/speed [1], temperature [K]
    tolerance: dict = field(default_factory=dict)  # torque_constant, terminal_resistance: (low, high) [1]
    direct: bool = True
    catalogue_gears: bool = True
    ratios: list = field(default_factory=list)    # assumed gear ratios [1]
    stage_efficiency: float = 0.9          # [1]
    stages: int | None = None
    gear_inertia: float = 0.0              # [kg·m²]
    rank_keys: list = field(default_factory=lambda: ["mass"])
    top: int = 10
    pareto: list | None = None
    currency: str | None = None            # prices are compared in this currency
    exchange_rates: dict = field(default_factory=dict)  # other currency -> value in `currency`
    raw: dict = field(default_factory=dict, repr=False)
    #: per segment: the input it came from (:class:`catalog.select.motion.SegmentSource`)
    segment_source: list = field(default_factory=list)
    mechanism: object = None               # catalog.select.motion.Mechanism, or None
    reflected_inertia: float = 0.0         # of the mechanism at the gear output, already in `torque` [kg·m²]
    max_inertia_ratio: float | None = None  # largest load-to-motor inertia ratio [1]
    #: estimates for assumed gears: mass_per_stage [kg], length_per_stage [m], price (only those given)
    assumed_gear: dict = field(default_factory=dict)

    @property
    def available_voltage(self) -> float:
        """Voltage at the motor terminals in the worst case [V]."""
        return self.min_voltage - self.drive_voltage_drop

    @property
    def output_inertia(self) -> float:
        """The whole load inertia at the gear output [kg·m²]: the mechanism's reflected inertia (already
        in ``torque``) plus ``load.inertia`` (added by the evaluation); an envelope has one or the other."""
        return float(self.reflected_inertia + self.load_inertia)

    @property
    def period(self) -> float:
        """Cycle duration [s]."""
        return float(np.sum(self.duration))


def envelope_schema(data: dict | None = None) -> dict:
    """The envelope JSON Schema as a dict; for a parsed envelope ``data``, the schema that applies to it.

    An envelope with a mechanism has that mechanism's keys and reads its
    segments and moves in the mechanism's dimensions
    (:func:`catalog.select.motion.specialise_schema`).  Shared: do not change it.
    """
    if data is not None:
        from .motion import specialise_schema

        return specialise_schema(data)
    return _file_schema()


@lru_cache(maxsize=1)
def _file_schema() -> dict:
    return json.loads(SCHEMA_PATH.read_text(encoding="utf-8"))


def _path(parts) -> str:
    out = ""
    for p in parts:
        out += f"[{p}]" if isinstance(p, int) else (f".{p}" if out else str(p))
    return out


def _join(parent, key):
    return _path(list(parent) + [key])


def _schema_problem(err, source) -> Problem:
    """Our own one-line wording for a JSON-Schema error."""
    where = list(err.absolute_path)
    v, val, sch = err.validator, err.validator_value, err.schema
    if v == "additionalProperties":
        allowed = ", ".join(sch.get("properties", {}))
        extra = sorted(set(err.instance) - set(sch.get("properties", {})))
        return Problem(source, None, _join(where, extra[0]),
                       f"unknown key, expected one of {allowed}")
    if v == "required":
        missing = [k for k in val if k not in err.instance][0]
        return Problem(source, None, _join(where, missing), "missing, this key is required")
    if v == "minItems":
        what = "segment" if where and where[-1] == "segments" else "entry"
        if val > 1:
            what = f"{val} entries"
        return Problem(source, None, _path(where),
                       f"empty, expected at least one {what}" if not err.instance
                       else f"has {len(err.instance)} entries, expected at least {val}")
    if v == "maxItems":
        return Problem(source, None, _path(where), f"has {len(err.instance)} entries, expected at most {val}")
    if v == "type":
        if "x-dimension" in sch and isinstance(err.instance, (int, float)) and not isinstance(err.instance, bool):
            dim = get_dimension(sch["x-dimension"])
            return Problem(source, None, _path(where),
                           f"{err.instance!r} has no unit, expected {dim.noun} as text with its unit, "
                           f"such as \"{err.instance} {dim.si_unit}\"")
        want = {"string": "a quantity string with a unit" if "x-dimension" in sch else "a string",
                "boolean": "true or false", "integer": "a whole number", "number": "a number",
                "array": "a list", "object": "a table"}
        kinds = val if isinstance(val, list) else [val]
        return Problem(source, None, _path(where),
                       f"{err.instance!r} is not {' or '.join(want.get(k, k) for k in kinds)}")
    if v == "enum":
        return Problem(source, None, _path(where),
                       f"{err.instance!r} is not allowed, expected one of {', '.join(map(str, val))}")
    if v == "pattern" and where and where[-2] in ("keys", "pareto"):
        return Problem(source, None, _path(where),
                       f"{err.instance!r} is not a ranking key, expected one of "
                       f"{', '.join(RANK_KEYS)} (optionally with a leading '-')")
    if v in ("minimum", "exclusiveMinimum", "maximum", "exclusiveMaximum"):
        word = {"minimum": "at least", "exclusiveMinimum": "above",
                "maximum": "at most", "exclusiveMaximum": "below"}[v]
        return Problem(source, None, _path(where), f"{err.instance!r} is out of range, expected {word} {val}")
    if v == "uniqueItems":
        return Problem(source, None, _path(where), "lists an entry twice, expected each once")
    return Problem(source, None, _path(where) or None, err.message)


def _quantities(node, sch, where, source, problems):
    """Convert every quantity of ``node`` (per the schema) to SI, in place."""
    if isinstance(node, dict):
        props = sch.get("properties", {})
        for key, value in node.items():
            if key in props:
                new = _quantities(value, props[key], where + [key], source, problems)
                node[key] = new
        return node
    if isinstance(node, list):
        items = sch.get("items", {})
        return [_quantities(v, items, where + [i], source, problems) for i, v in enumerate(node)]
    dim = sch.get("x-dimension")
    if dim is None:
        return node
    if sch.get("x-tolerance") and isinstance(node, str):
        symmetric = _SYMMETRIC.match(node)
        if symmetric:
            return _symmetric_tolerance(node, symmetric.group(1), dim, where, source, problems)
    try:
        value = float(node) if isinstance(node, (int, float)) else parse_quantity(node, dim)
    except UnitError as exc:
        problems.append(Problem(source, None, _path(where), exc.message))
        return math.nan
    text = repr(node) if isinstance(node, str) else str(node)
    noun = dimension_noun(dim).split(" ", 1)[1]
    if dim == "temperature" and value <= 0:
        problems.append(Problem(source, None, _path(where), f"{text} is {value:.6g} K, at or below absolute "
                                                            "zero, expected a temperature above 0 K"))
        return value
    sign = sch.get("x-sign")
    if sign == "positive" and value <= 0:
        word = "zero" if value == 0 else "negative"
        problems.append(Problem(source, None, _path(where),
                                f"{text} is {word}, expected a positive {noun}"))
    elif sign == "nonnegative" and value < 0:
        problems.append(Problem(source, None, _path(where),
                                f"{text} is negative, expected zero or a positive {noun}"))
    for key, word, bad in (("x-min", "at least", lambda a, b, inc: a < b if inc else a <= b),
                           ("x-max", "at most", lambda a, b, inc: a > b if inc else a >= b)):
        bound = sch.get(key)
        if bound and bad(value, bound["value"], bound["inclusive"]):
            rel = word if bound["inclusive"] else ("above" if key == "x-min" else "below")
            problems.append(Problem(source, None, _path(where),
                                    f"{text} is out of range, expected {rel} {bound['value']:g}"))
    return value


#: a symmetric tolerance: "±10 %", "+/- 10 %", "+-0.1"
_SYMMETRIC = re.compile(r"^\s*(?:±|\+/-|\+-)\s*(.*?)\s*$")


def _symmetric_tolerance(text, rest, dim, where, source, problems):
    """(−v, +v) of a symmetric tolerance ``±v`` (v a fraction or percentage in [0, 1))."""
    try:
        value = parse_quantity(rest, dim)
    except UnitError as exc:
        problems.append(Problem(source, None, _path(where), exc.message))
        return (math.nan, math.nan)
    if not 0.0 <= value < 1.0:
        problems.append(Problem(source, None, _path(where), f"{text!r} is out of range, expected a symmetric "
                                                            "tolerance of at least 0 and below 100 %"))
    return (-value, value)


def _contradictions(d, source, problems):
    sup = d.get("supply", {})

    def bad(field_, message):
        problems.append(Problem(source, None, field_, message))

    nom, vmin, drop = (sup.get(k) for k in ("nominal_voltage", "min_voltage", "drive_voltage_drop"))
    raw = d["_raw"].get("supply", {})
    if vmin is not None and nom is not None and vmin > nom:
        bad("supply.min_voltage", f"{raw['min_voltage']!r} is above supply.nominal_voltage "
                                  f"{raw['nominal_voltage']!r}, expected at most the nominal voltage")
    low = vmin if vmin is not None else nom
    if drop is not None and low is not None and drop >= low:
        bad("supply.drive_voltage_drop", f"{raw['drive_voltage_drop']!r} leaves no voltage for the motor, "
                                         f"expected less than the lowest supply voltage")
    cont, peak = sup.get("drive_continuous_current"), sup.get("drive_peak_current")
    if cont is not None and peak is not None and peak < cont:
        bad("supply.drive_peak_current", f"{raw['drive_peak_current']!r} is below "
                                         f"supply.drive_continuous_current {raw['drive_continuous_current']!r}, "
                                         f"expected at least the continuous current")
    rr = d.get("gearing", {}).get("ratio_range")
    if rr and rr["min"] > rr["max"]:
        bad("gearing.ratio_range.min", f"{rr['min']!r} is above gearing.ratio_range.max {rr['max']!r}, "
                                       "expected min <= max")
    forms = [f for f in ("points", "cycle", "motion") if f in d]
    if len(forms) != 1:
        written = {"points": "[[points]]", "cycle": "[cycle]", "motion": "[[motion.moves]]"}
        found = ("both " + " and ".join(written[f] for f in forms) if len(forms) == 2 else
                 "[[points]], [cycle] and [[motion.moves]]" if forms else
                 "neither [[points]], [cycle] nor [[motion.moves]]")
        bad("/".join(forms) if len(forms) > 1 else "points/cycle", f"found {found}, expected exactly one form of load")
    gear = d.get("gearing", {})
    if not (gear.get("direct", True) or gear.get("catalogue", True) or gear.get("ratios")
            or gear.get("ratio_range")):
        bad("gearing", "no gear option left, expected direct, catalogue, ratios or ratio_range")


def _unique_names(d, source, problems):
    """Segment (or point) names name the segment in every reason: each must be used once."""
    for key, items in (("points", d.get("points")), ("cycle.segments", d.get("cycle", {}).get("segments"))):
        first = {}
        for i, item in enumerate(items or []):
            name = item.get("name")
            if name in first:
                problems.append(Problem(source, None, f"{key}[{i}].name",
                                        f"{name!r} is already the name of {key}[{first[name]}], "
                                        "expected a name of its own (reasons name the segment)"))
            else:
                first[name] = i


def _non_finite(node, where, source) -> list:
    """A TOML ``nan`` or ``inf`` where a number goes: one problem each."""
    if isinstance(node, dict):
        return [p for k, v in node.items() for p in _non_finite(v, where + [k], source)]
    if isinstance(node, list):
        return [p for i, v in enumerate(node) for p in _non_finite(v, where + [i], source)]
    if isinstance(node, float) and not math.isfinite(node):
        return [Problem(source, None, _path(where), f"{node} is not a finite number, expected a number "
                                                    "(or leave the key out for its default)")]
    if isinstance(node, int) and not isinstance(node, bool) and abs(node) > 1e300:
        return [Problem(source, None, _path(where), f"an integer of {len(str(abs(node)))} digits, expected a "
                                                    "number of ordinary size")]
    return []


#: Envelopes are a few kilobytes; anything much larger is not one.
MAX_ENVELOPE_BYTES = 1 << 20
#: Tables and lists inside each other (an envelope needs 3: ``cycle.segments[0].torque``).
MAX_ENVELOPE_DEPTH = 16
#: Cycle segments (or operating points) of one envelope, as written.  Every candidate is
#: evaluated segment by segment (memory and time grow with candidates x segments; the
#: thermal response of a motor with its segments squared): a measured profile of more
#: segments is resampled or split.
MAX_SEGMENTS = 1000
#: Assumed gear ratios (``gearing.ratios`` plus ``gearing.ratio_range.steps``): every motor
#: is a candidate with each, so they multiply the catalogue.
MAX_RATIOS = 1000


def _read_toml(path: Path, source: str) -> dict:
    """The parsed TOML of an envelope file, or :class:`InputError` with one clear line.

    A UTF-8 byte-order mark is accepted; other encodings, binary data and files
    too large to be an envelope are refused, as are TOML syntax errors (with the
    line the parser names).
    """
    def refuse(message, line=None):
        return InputError(f"{source}: {message}", [Problem(source, line, None, message)])

    try:
        if path.is_dir():
            raise refuse("is a folder, expected an envelope file (TOML)")
        size = path.stat().st_size
        if size > MAX_ENVELOPE_BYTES:
            raise refuse(f"{size / 2**20:.1f} MiB, expected an envelope of at most {MAX_ENVELOPE_BYTES / 2**20:g} MiB")
        raw = path.read_bytes()
    except FileNotFoundError:
        raise InputError(f"{source}: no such envelope file",
                         [Problem(source, None, None, "no such file")]) from None
    except OSError as exc:
        raise refuse(f"cannot read the file ({exc.strerror or exc})") from None
    if raw.startswith(b"\xef\xbb\xbf"):
        raw = raw[3:]
    if b"\0" in raw:
        line = raw[:raw.index(b"\0")].count(b"\n") + 1
        raise refuse("binary data (a NUL byte), expected a TOML text file", line)
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError as exc:
        line = raw[:exc.start].count(b"\n") + 1
        raise refuse(f"byte 0x{raw[exc.start]:02x} is not UTF-8, expected a UTF-8 text file "
                     "(save the envelope as UTF-8)", line) from None
    if not text.strip():
        raise refuse("empty, expected a load envelope (see the examples in queries/)")
    try:
        return tomllib.loads(text)
    except RecursionError:
        raise refuse(_TOO_DEEP) from None
    except tomllib.TOMLDecodeError as exc:
        message = str(exc)
        match = re.search(r"\s*\(at line (\d+), column (\d+)\)$", message)
        line = None
        if match:
            line = int(match.group(1))
            message = message[:match.start()] + f" (column {match.group(2)})"
        elif message.endswith("(at end of document)"):
            line = text.count("\n") + 1
            message = message[:-len("(at end of document)")].rstrip() + " (at the end of the file)"
        raise refuse(f"not valid TOML: {message[:1].lower() + message[1:]}", line) from None
    except ValueError as exc:  # an integer of more digits than Python converts
        digits = re.search(r"has (\d+) digits", str(exc))
        what = f"an integer of {digits.group(1)} digits" if digits else str(exc).split(";")[0]
        raise refuse(f"not valid TOML: {what}, expected numbers of ordinary size") from None


_TOO_DEEP = (f"tables or lists nested more than {MAX_ENVELOPE_DEPTH} levels deep, expected the tables of an "
             "envelope (see the examples in queries/)")


def _too_deep(data) -> bool:
    """True if ``data`` nests tables and lists deeper than :data:`MAX_ENVELOPE_DEPTH` (walked
    without recursion: the checks after it recurse)."""
    stack = [(data, 0)]
    while stack:
        node, depth = stack.pop()
        if isinstance(node, (dict, list)):
            if depth >= MAX_ENVELOPE_DEPTH:
                return True
            stack.extend((v, depth + 1) for v in (node.values() if isinstance(node, dict) else node))
    return False


def _sizes(data, source) -> list:
    """Segments, points and assumed ratios beyond the documented limits: one problem each."""
    problems = []
    cycle = data.get("cycle")
    for key, items, what in (("points", data.get("points"), "operating points"),
                             ("cycle.segments", cycle.get("segments") if isinstance(cycle, dict) else None,
                              "segments")):
        if isinstance(items, list) and len(items) > MAX_SEGMENTS:
            problems.append(Problem(source, None, key, f"{len(items)} {what}, expected at most {MAX_SEGMENTS}; "
                                                       "merge segments of one load or split the cycle"))
    gear = data.get("gearing")
    if isinstance(gear, dict):
        listed = gear.get("ratios") if isinstance(gear.get("ratios"), list) else []
        rr = gear.get("ratio_range")
        steps = rr.get("steps") if isinstance(rr, dict) else None
        steps = steps if isinstance(steps, int) and not isinstance(steps, bool) and steps > 0 else 0
        if len(listed) + steps > MAX_RATIOS:
            key = "gearing.ratios" if len(listed) > MAX_RATIOS or not steps else "gearing.ratio_range.steps"
            problems.append(Problem(source, None, key,
                                    f"{len(listed) + steps} assumed ratios (ratios and ratio_range.steps), "
                                    f"expected at most {MAX_RATIOS}; every motor is a candidate with each"))
    return problems


def ratio_label(ratio: float) -> float:
    """A gear ratio as the envelope keeps it: two decimals below 10, one above (ids and reasons name it)."""
    return round(ratio, 2) if ratio < 10 else round(ratio, 1)


def _segments(d):
    if "points" in d:
        pts = d["points"]
        names = [p["name"] for p in pts]
        speed = np.array([p["speed"] for p in pts], dtype=float)
        return ("points", names, np.ones(len(pts)), np.array([p["torque"] for p in pts], dtype=float),
                speed, speed.copy(), np.array([p["kind"] == "continuous" for p in pts]),
                [motion.SegmentSource(f"points[{i}]", p["name"]) for i, p in enumerate(pts)])
    names, dur, tq, w0, w1, src = [], [], [], [], [], []
    for i, s in enumerate(d["cycle"]["segments"]):
        a, b = s["speed_start"], s.get("speed_end", s["speed_start"])
        origin = motion.SegmentSource(f"cycle.segments[{i}]", s["name"])
        if a * b < 0:   # split at the zero crossing: speed keeps its sign per segment
            f = a / (a - b)
            for frac, x, y in ((f, a, 0.0), (1.0 - f, 0.0, b)):
                names.append(s["name"]); dur.append(s["duration"] * frac)
                tq.append(s["torque"]); w0.append(x); w1.append(y); src.append(origin)
        else:
            names.append(s["name"]); dur.append(s["duration"]); tq.append(s["torque"])
            w0.append(a); w1.append(b); src.append(origin)
    n = len(names)
    return ("cycle", names, np.array(dur), np.array(tq), np.array(w0), np.array(w1), np.ones(n, bool), src)


def load_envelope(envelope, source: str | None = None) -> Envelope:
    """Read, validate and convert a load envelope.

    Parameters
    ----------
    envelope : str, Path, dict or Envelope
        A TOML file, an already parsed dict (quantities still as unit strings)
        or an :class:`Envelope` (returned as is).
    source : str, optional
        Name used in messages; default the file path (or ``envelope``).

    Returns
    -------
    Envelope
        Every quantity in SI.

    Raises
    ------
    InputError
        One :class:`Problem` per mistake, each naming its key path.
    """
    import copy

    from jsonschema import Draft202012Validator

    if isinstance(envelope, Envelope):
        return envelope
    if isinstance(envelope, (str, Path)):
        path = Path(envelope)
        source = source or str(envelope)
        data = _read_toml(path, source)
    elif isinstance(envelope, dict):
        source, data = source or "envelope", envelope
    else:
        raise TypeError("envelope must be a path, a dict or an Envelope")
    if _too_deep(data):
        raise InputError(f"{source}: {_TOO_DEEP}", [Problem(source, None, None, _TOO_DEEP)])
    problems = _sizes(data, source)
    if problems:
        raise InputError(f"{source}: {len(problems)} problem(s) in the envelope", problems)
    schema = envelope_schema(data)
    problems = _non_finite(data, [], source)
    errors = sorted(Draft202012Validator(schema).iter_errors(data), key=lambda e: list(map(str, e.absolute_path)))
    for err in errors:
        problem = _schema_problem(err, source)
        if problem not in problems:  # two rules can say the same thing of one key
            problems.append(problem)
    if problems:
        raise InputError(f"{source}: {len(problems)} problem(s) in the envelope", problems)
    d = _quantities(copy.deepcopy(data), schema, [], source, problems)
    d["_raw"] = data
    _contradictions(d, source, problems)
    _unique_names(d, source, problems)
    motion.check(d, source, problems)
    if problems:
        raise InputError(f"{source}: {len(problems)} problem(s) in the envelope", problems)
    return _build(d, data, source)


def _build(d, data, source) -> Envelope:
    mech, reflected = None, 0.0
    if "mechanism" in d.get("load", {}):      # segments at the gear output made from the mechanism
        gen = motion.build(d)
        mode, names, dur, tq, w0, w1 = "cycle", gen.names, gen.duration, gen.torque, gen.speed_start, gen.speed_end
        cont, src = np.ones(len(names), bool), gen.sources
        mech, reflected = gen.mechanism, gen.mechanism.reflected_inertia
    else:
        mode, names, dur, tq, w0, w1, cont, src = _segments(d)
    sup, envi, load = d["supply"], d.get("environment", {}), d.get("load", {})
    con, gear, rank = d.get("constraints", {}), d.get("gearing", {}), d.get("ranking", {})
    cont_i = sup.get("drive_continuous_current", math.inf)
    ratios = list(gear.get("ratios", []))
    if "ratio_range" in gear:
        rr = gear["ratio_range"]
        ratios += list(np.geomspace(rr["min"], rr["max"], rr["steps"]))
    ratios = sorted({ratio_label(r) for r in ratios})
    margins = {"voltage": 0.0, "current": 0.0, "torque": 0.0, "speed": 0.0, "temperature": 0.0}
    margins.update(con.get("margins", {}))
    # (low, high) relative deviation of each constant: a signed deviation is both ends
    tol = {"torque_constant": (0.0, 0.0), "terminal_resistance": (0.0, 0.0)}
    tol.update({k: tuple(v) if isinstance(v, tuple) else (v, v) for k, v in con.get("tolerance", {}).items()})
    return Envelope(
        name=d["name"], description=d.get("description", ""), source=source, mode=mode,
        names=names, duration=dur, torque=tq, speed_start=w0, speed_end=w1, continuous=cont,
        repeat=d.get("cycle", d.get("motion", {})).get("repeat", True),
        nominal_voltage=sup["nominal_voltage"], min_voltage=sup.get("min_voltage", sup["nominal_voltage"]),
        drive_voltage_drop=sup.get("drive_voltage_drop", 0.0), brush_voltage_drop=sup.get("brush_voltage_drop"),
        drive_continuous_current=cont_i,
        drive_peak_current=sup.get("drive_peak_current", cont_i), regenerative=sup.get("regenerative", False),
        ambient_temperature=envi.get("ambient_temperature", 298.15),
        housing_cooling_factor=envi.get("housing_cooling_factor", 1.0),
        load_inertia=load.get("inertia", 0.0), back_drive=load.get("back_drive", True),
        limits={k: con[k] for k in ("max_diameter", "max_length", "max_mass", "max_price") if k in con},
        commutation=con.get("commutation"), mount=con.get("mount"), margins=margins, tolerance=tol,
        direct=gear.get("direct", True), catalogue_gears=gear.get("catalogue", True), ratios=ratios,
        stage_efficiency=gear.get("stage_efficiency", 0.9), stages=gear.get("stages"),
        gear_inertia=gear.get("inertia", 0.0), rank_keys=rank.get("keys", ["mass"]),
        top=rank.get("top", 10), pareto=rank.get("pareto"), currency=rank.get("currency"),
        exchange_rates=dict(rank.get("exchange_rates", {})), raw=data,
        segment_source=src, mechanism=mech, reflected_inertia=reflected,
        max_inertia_ratio=con.get("max_inertia_ratio"), assumed_gear=dict(gear.get("assumed", {})))
