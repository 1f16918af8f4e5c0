"""The load as engineers describe it: a mechanism and its moves, turned into segments at the gear output.

An envelope may describe its load by a mechanism (``[load.mechanism]``: a
screw, belt, rack and pinion, cable drum, wheel or a rotary load, keys in
``schemas/envelope.schema.json`` under ``$defs/mechanism_<kind>``) and either
moves (``[[motion.moves]]``: a distance in a time, or a constant-speed run,
then a dwell) or hand-written ``[cycle]`` segments whose values are at the
mechanism (a force and linear speeds for a linear mechanism).  This module
turns them into the duty-cycle segments every other part of the selection
reads: duration, torque at the gear output (gravity, friction, external
forces and the acceleration of the mechanism's masses, through its
efficiency in the direction of the power flow) and the gear output speed at
both ends, with the source of every segment and the load inertia reflected
to the gear output.  The physics is :mod:`catalog.physics.mechanism`.

Schema: the file's generic ``load.mechanism`` (kind only, with ``if/then``
per kind for other JSON-Schema tools) is replaced by the kind's definition
before validation (:func:`specialise_schema`), and keys whose dimension
depends on the mechanism carry ``x-dimension-linear``/``x-dimension-rotary``.
"""
from __future__ import annotations

__all__ = ["SegmentSource", "Mechanism", "Generated", "GearOutputCycle", "specialise_schema", "mechanism_kinds",
           "check", "build", "gear_output_cycle", "PHASES", "DEFAULT_ACCEL_FRACTION"]

import copy
import math
from dataclasses import dataclass, field
from functools import lru_cache

import numpy as np

from ..errors import Problem

#: Part of a move's time spent accelerating (the same decelerating) unless given: a trapezoid
#: of three equal thirds (common practice).
DEFAULT_ACCEL_FRACTION = 1.0 / 3.0
#: Phases of a move, in order: accelerate, run at constant speed, decelerate, dwell at standstill.
#: A generated segment is named ``"<move> <phase>"``; phases are single words, so names stay unique.
PHASES = ("accel", "run", "decel", "dwell")


@dataclass(frozen=True)
class SegmentSource:
    """Where one evaluated segment came from.

    ``key`` is the key path of the input (``motion.moves[0]``,
    ``cycle.segments[2]``, ``points[1]``), ``name`` its name, ``phase`` the part
    of a move (one of :data:`PHASES`, None for a written segment) and
    ``mechanism`` the kind of mechanism it passed through (None: written at the
    gear output).
    """

    key: str
    name: str
    phase: str | None = None
    mechanism: str | None = None

    def __str__(self) -> str:
        what = f"move {self.name!r}" if self.key.startswith("motion.") else repr(self.name)
        text = f"{what} ({self.key})" + (f", {self.phase}" if self.phase else "")
        return text + (f", through the {self.mechanism.replace('_', ' and ')}" if self.mechanism else "")


# -- the schema per mechanism -------------------------------------------------------------------


def mechanism_kinds(schema: dict) -> dict:
    """kind -> its schema definition (``$defs/mechanism_<kind>``), in the file's order."""
    return {k.removeprefix("mechanism_"): v for k, v in schema.get("$defs", {}).items()
            if k.startswith("mechanism_")}


def _mechanism_kind(data) -> str | None:
    load = data.get("load") if isinstance(data, dict) else None
    mech = load.get("mechanism") if isinstance(load, dict) else None
    kind = mech.get("kind") if isinstance(mech, dict) else None
    return kind if isinstance(kind, str) else None


def specialise_schema(data) -> dict:
    """The envelope schema for the parsed envelope ``data``: the mechanism's keys and the dimensions they imply.

    Without a (known) mechanism: hand-written segments are at the gear output
    (``force`` is not theirs).  With one: ``load.mechanism`` is its kind's
    definition, segments are at the mechanism (a linear one takes ``force``
    and linear speeds, a rotary one ``torque``; neither is required) and moves
    take a length (an angle for a rotary one).  The result is shared: do not
    change it.
    """
    from .envelope import envelope_schema

    kind = _mechanism_kind(data)
    return _specialised(kind if kind in mechanism_kinds(envelope_schema()) else None)


@lru_cache(maxsize=None)
def _specialised(kind: str | None) -> dict:
    from .envelope import envelope_schema

    out = copy.deepcopy(envelope_schema())
    seg = out["properties"]["cycle"]["properties"]["segments"]["items"]
    if kind is None:
        seg["properties"].pop("force", None)
        return out
    definition = copy.deepcopy(out["$defs"][f"mechanism_{kind}"])
    motion = definition["x-motion"]
    out["properties"]["load"]["properties"]["mechanism"] = definition
    seg["properties"].pop("torque" if motion == "linear" else "force")
    seg["required"] = [k for k in seg["required"] if k != "torque"]
    for node in (seg, out["properties"]["motion"]["properties"]["moves"]["items"]):
        for prop in node["properties"].values():
            if f"x-dimension-{motion}" in prop:
                prop["x-dimension"] = prop[f"x-dimension-{motion}"]
    return out


# -- the mechanism in SI ------------------------------------------------------------------------


@dataclass(frozen=True)
class Mechanism:
    """A mechanism with every parameter in SI (defaults filled in).

    ``radius`` [m] turns travel into input angle (a screw's lead/(2π); 1 for a
    rotary load, whose speeds are already angular), ``mass`` the moving mass
    [kg] (a vehicle's whole mass), ``inertia`` the mechanism's own inertia at
    its input [kg·m²] (a rotary load's inertia), ``angle`` [rad], ``friction``
    the guide's (or the rolling-resistance) coefficient [1], ``force`` the
    external force [N] (``torque`` [N·m] and ``friction_torque`` [N·m] for a
    rotary load), ``wheels`` the driven wheels sharing the load [1].
    """

    kind: str
    motion: str                  # "linear" or "rotary"
    radius: float = 1.0
    mass: float = 0.0
    inertia: float = 0.0
    efficiency: float = 1.0
    back_efficiency: float = 1.0
    angle: float = 0.0
    friction: float = 0.0
    force: float = 0.0
    wheels: int = 1
    friction_torque: float = 0.0
    torque: float = 0.0
    given: dict = field(default_factory=dict, compare=False, repr=False)   # the table as written

    @classmethod
    def from_table(cls, table: dict, raw: dict | None = None) -> "Mechanism":
        """From the SI values of ``[load.mechanism]`` (``raw``: the same as written)."""
        from ..physics import screw_effective_radius

        kind = table["kind"]
        given = dict(raw or {})
        if kind == "rotary":
            return cls(kind, "rotary", inertia=table["inertia"], friction_torque=table.get("friction_torque", 0.0),
                       torque=table.get("torque", 0.0), given=given)
        eff = table["efficiency"]
        common = dict(mass=table["mass"], inertia=table.get("inertia", 0.0), efficiency=eff,
                      back_efficiency=table.get("back_efficiency", eff), given=given)
        if kind == "screw":
            radius = float(screw_effective_radius(table["lead"]))
        else:
            radius = table["radius"]
        if kind == "drum":
            return cls(kind, "linear", radius=radius, angle=math.pi / 2.0, **common)
        if kind == "wheel":
            return cls(kind, "linear", radius=radius, angle=table.get("angle", 0.0),
                       friction=table.get("rolling_resistance", 0.0), wheels=int(table.get("wheels", 1)), **common)
        return cls(kind, "linear", radius=radius, angle=table.get("angle", 0.0), friction=table.get("friction", 0.0),
                   force=table.get("force", 0.0), **common)

    @property
    def reflected_inertia(self) -> float:
        """Load inertia at the mechanism's input (the gear output): m·r² + own [kg·m²] (per driven wheel)."""
        from ..physics import reflected_mechanism_inertia

        if self.motion == "rotary":
            return float(self.inertia)
        return float(reflected_mechanism_inertia(self.mass / self.wheels, self.radius, self.inertia))

    def input_torque(self, duration, speed_start, speed_end, extra):
        """Torque at the input [N·m] of segments with these speeds at the mechanism (arrays).

        ``duration`` [s], ``speed_start``/``speed_end`` at the mechanism [m/s or
        rad/s], ``extra`` an external force [N] (torque [N·m] for a rotary load)
        during the segment, opposing positive travel.  The acceleration is
        constant within a segment and the speed keeps its sign (segments are
        split at zero speed before).
        """
        from ..physics import linear_load_force, mechanism_input_torque, rotary_load_torque, wheel_load_force

        dur, v0, v1 = (np.asarray(x, dtype=float) for x in (duration, speed_start, speed_end))
        accel = (v1 - v0) / dur
        direction = np.sign(v0 + v1)      # sign of the mean speed: friction and power flow per segment
        if self.motion == "rotary":
            return rotary_load_torque(self.inertia, accel, direction, self.friction_torque, self.torque + extra)
        if self.kind == "wheel":
            force = wheel_load_force(self.mass, accel, direction, self.angle, self.friction, self.force + extra,
                                     self.wheels)
        else:
            force = linear_load_force(self.mass, accel, direction, self.angle, self.friction, self.force + extra)
        return mechanism_input_torque(force, self.radius, self.efficiency, self.back_efficiency, direction,
                                      self.inertia, accel / self.radius)

    def describe(self) -> str:
        """One line: the kind and its parameters as written."""
        shown = ", ".join(f"{k} {v}" for k, v in self.given.items() if k != "kind")
        radius = f"; effective radius {self.radius * 1e3:.4g} mm" if self.kind == "screw" else ""
        return f"{self.kind.replace('_', ' and ')}: {shown}{radius}"


# -- checks that need the SI values -------------------------------------------------------------


def check(d: dict, source: str, problems: list) -> None:
    """Mistakes of mechanisms and moves the schema cannot see: one :class:`Problem` each."""
    raw = d["_raw"]
    load, mech = d.get("load", {}), d.get("load", {}).get("mechanism")

    def bad(key, message):
        problems.append(Problem(source, None, key, message))

    if mech is not None:
        if "inertia" in load:
            bad("load.inertia", "given beside load.mechanism, expected the mechanism's own inertia as "
                                "load.mechanism.inertia (its masses are reflected from the mechanism)")
        if "points" in d:
            bad("points", "operating points are at the gear output, expected [[motion.moves]] or [cycle] "
                          "segments with load.mechanism")
        angle = mech.get("angle", 0.0)
        if math.isfinite(angle) and not -math.pi / 2 <= angle <= math.pi / 2:   # NaN: reported when read
            bad("load.mechanism.angle", f"{raw['load']['mechanism']['angle']!r} is out of range, expected an "
                                        "angle from -90 deg to 90 deg above the horizontal")
    moves = d.get("motion", {}).get("moves")
    if moves is None:
        return
    if mech is None:
        bad("motion", "moves need a mechanism, expected [load.mechanism] (kind = \"rotary\" for a load on the "
                      "gear output itself)")
    first: dict = {}
    for i, (move, given) in enumerate(zip(moves, raw["motion"]["moves"])):
        key = f"motion.moves[{i}]"
        if move["name"] in first:
            bad(f"{key}.name", f"{move['name']!r} is already the name of motion.moves[{first[move['name']]}], "
                               "expected a name of its own (reasons name the segment)")
        first.setdefault(move["name"], i)
        has_d, has_v = "distance" in move, "speed" in move
        if has_d and has_v:
            bad(f"{key}.speed", "given beside distance, expected either distance (a move from rest to rest) "
                                "or speed (a run at constant speed)")
        elif not (has_d or has_v):
            bad(f"{key}.distance", "missing, expected distance (a move from rest to rest) or speed (a run at "
                                   "constant speed)")
        for what in ("distance", "speed"):
            if move.get(what) == 0:
                bad(f"{key}.{what}", f"{given[what]!r} is zero, expected a {what} other than zero "
                                     "(a standstill is the dwell of a move)")
        if has_d and not has_v and move.get("accel_fraction") == 0:
            bad(f"{key}.accel_fraction", f"{given['accel_fraction']!r} leaves no time to accelerate, "
                                         "expected above 0 and at most 0.5 for a move from rest to rest")


# -- segments -----------------------------------------------------------------------------------


def _move_rows(moves: list, kind: str) -> list:
    """(source, duration, speed start, speed end, extra load) per segment of the moves, at the mechanism."""
    from ..physics import move_peak_speed

    rows = []
    for i, m in enumerate(moves):
        key, time = f"motion.moves[{i}]", m["time"]
        if "distance" in m:
            frac = m.get("accel_fraction", DEFAULT_ACCEL_FRACTION)
            top = float(move_peak_speed(m["distance"], time, frac))
        else:
            frac, top = m.get("accel_fraction", 0.0), m["speed"]
        ramp = frac * time
        steady = time - 2.0 * ramp
        parts = [(ramp, 0.0, top), (steady, top, top), (ramp, top, 0.0), (m.get("dwell", 0.0), 0.0, 0.0)]
        for phase, (dur, v0, v1) in zip(PHASES, parts):
            if dur > 1e-12 * time:
                rows.append((SegmentSource(key, m["name"], phase, kind), dur, v0, v1, 0.0))
    return rows


def _written_rows(segments: list, mech: Mechanism) -> list:
    """Rows as :func:`_move_rows` of the segments written at the mechanism, split where a ramp passes zero speed."""
    extra_key = "torque" if mech.motion == "rotary" else "force"
    rows = []
    for i, s in enumerate(segments):
        src = SegmentSource(f"cycle.segments[{i}]", s["name"], None, mech.kind)
        a, b, extra = s["speed_start"], s.get("speed_end", s["speed_start"]), s.get(extra_key, 0.0)
        if a * b < 0:
            f = a / (a - b)
            rows += [(src, s["duration"] * f, a, 0.0, extra), (src, s["duration"] * (1.0 - f), 0.0, b, extra)]
        else:
            rows.append((src, s["duration"], a, b, extra))
    return rows


@dataclass(frozen=True)
class Generated:
    """Segments at the gear output made from a mechanism (arrays of shape (S,), SI)."""

    names: list
    duration: np.ndarray
    torque: np.ndarray
    speed_start: np.ndarray
    speed_end: np.ndarray
    sources: list
    mechanism: Mechanism
    repeat: bool


def build(d: dict) -> Generated:
    """The segments of a validated envelope (SI values) that has a mechanism."""
    mech = Mechanism.from_table(d["load"]["mechanism"], d["_raw"]["load"]["mechanism"])
    if "motion" in d:
        rows, repeat = _move_rows(d["motion"]["moves"], mech.kind), d["motion"].get("repeat", True)
    else:
        rows, repeat = _written_rows(d["cycle"]["segments"], mech), d["cycle"].get("repeat", True)
    sources = [r[0] for r in rows]
    dur, v0, v1, extra = (np.array([r[k] for r in rows], dtype=float) for k in (1, 2, 3, 4))
    torque = np.asarray(mech.input_torque(dur, v0, v1, extra), dtype=float)
    names = [f"{s.name} {s.phase}" if s.phase else s.name for s in sources]
    return Generated(names, dur, torque, v0 / mech.radius, v1 / mech.radius, sources, mech, repeat)


# -- what the motor's gear must deliver ---------------------------------------------------------


@dataclass(frozen=True)
class GearOutputCycle:
    """The envelope's load at the gear output, segment by segment (SI).

    ``torque`` includes the acceleration of every load inertia (the
    mechanism's masses through its efficiency, ``load.inertia`` as the
    selection adds it); ``inertia`` is the load inertia reflected to the gear
    output, for information (it is in the torques already).  For operating
    points ``duration`` is None.
    """

    envelope: str
    source: str
    mode: str
    repeat: bool
    inertia: float
    mechanism: Mechanism | None
    names: list
    duration: list
    torque: list
    speed_start: list
    speed_end: list
    sources: list

    def to_dict(self) -> dict:
        """``{"inertia": J, "segments": [{"name", "duration", "torque", "speed_start", "speed_end"}]}``."""
        return {"inertia": self.inertia,
                "segments": [{"name": n, "duration": d, "torque": t, "speed_start": a, "speed_end": b}
                             for n, d, t, a, b in zip(self.names, self.duration, self.torque, self.speed_start,
                                                      self.speed_end)]}

    @property
    def period(self) -> float:
        """Cycle time [s] (NaN for operating points)."""
        return math.nan if self.mode == "points" else float(sum(self.duration))


def gear_output_cycle(env) -> GearOutputCycle:
    """The duty cycle of an :class:`~catalog.select.Envelope` at the gear output."""
    cycle = env.mode == "cycle"
    alpha = (env.speed_end - env.speed_start) / env.duration if cycle else np.zeros(len(env.names))
    torque = env.torque + env.load_inertia * alpha
    sources = env.segment_source or [SegmentSource(f"segment[{i}]", n) for i, n in enumerate(env.names)]
    return GearOutputCycle(
        envelope=env.name, source=env.source, mode=env.mode, repeat=env.repeat,
        inertia=float(env.reflected_inertia + env.load_inertia), mechanism=env.mechanism,
        names=[str(n) for n in env.names],
        duration=[float(x) for x in env.duration] if cycle else [None] * len(env.names),
        torque=[float(x) for x in torque], speed_start=[float(x) for x in env.speed_start],
        speed_end=[float(x) for x in env.speed_end], sources=list(sources))
