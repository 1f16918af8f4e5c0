"""The check registry: every selection check as one declarative entry.

A :class:`Check` says what it checks (``key``, ``meaning``), which margin it
yields (:class:`Margin`: column, dimension, the envelope's required-margin key,
a short label), which candidate columns it reads (``needs``), when it applies
to an envelope (``active``), how it computes its margin and its failures, and
the reason text of a failed row.  A check whose data is missing fails by a data
check of its own (``motor_data``, ``gear_data`` ...), never passes.

Everything that lists checks is generated from :data:`REGISTRY`: the verdict
columns ``fails_<key>``, the shortlist's margin columns, the command line's
shortlist columns, ``select --explain``, the export's column units and the
meanings of the rejection counts.  A new check is one :func:`register` call
(or one entry below) plus its test.

A check that reads the motor constants declares its tolerance corners
(``corners``): which end of the envelope's tolerance band of Kt (= Ke, one
physical constant) and of R it is judged at.  The evaluation runs once per
distinct corner in use; a check with several corners takes, per candidate,
the one that gives it the smallest margin, and the result keys it ``owns``
come from that corner.  Every other number of a candidate (currents,
winding temperature, energy) is that of :data:`METRIC_CORNER`.

Fractional margins are (limit − value)/limit (voltage: (available −
needed)/available); the temperature margin is T_max − T_w in kelvin.  A NaN
margin (not checked) never fails its check.
"""
from __future__ import annotations

__all__ = ["Margin", "Check", "CheckInputs", "Corner", "HEAT", "VOLTAGE_CORNERS", "METRIC_CORNER", "REGISTRY",
           "register", "unregister", "checks", "margins", "margin_columns", "value_columns", "CHECKS",
           "below_required", "RPM", "corner_scales", "corner_label", "corners_in_use"]

from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Callable, NamedTuple

import numpy as np
import pandas as pd

from .candidates import GEAR_CATALOGUE

RPM = 30.0 / np.pi   #: rad/s → rpm [rpm·s/rad]


class Corner(NamedTuple):
    """One end of the envelope's tolerance band per constant: +1 the high end, −1 the low end.

    ``torque_constant`` moves Kt and Ke together (they are one constant in SI);
    a signed tolerance (no band) makes both ends the same value.
    """

    torque_constant: int
    terminal_resistance: int


#: Kt low and R high: the most current for a torque and the most copper loss (current and heat checks)
HEAT = Corner(-1, +1)
#: the voltage check's corners.  The needed |R·T/K + K·ω| is affine in R and, in each quadrant of the
#: speed-torque plane, convex or monotone in K, so its largest value over the band is at one of these four;
#: Ke and R high (first) is the usual worst at speed, R low only hurts a generating segment.
VOLTAGE_CORNERS = (Corner(+1, +1), Corner(-1, +1), Corner(+1, -1), Corner(-1, -1))
#: the corner of the numbers shown beside the margins (currents, winding temperature, energy per cycle)
METRIC_CORNER = HEAT


def _end(env, key: str, side: int) -> float:
    low, high = env.tolerance.get(key, (0.0, 0.0))
    return high if side > 0 else low


def corner_scales(env, corner: Corner) -> tuple:
    """(factor on Kt and Ke, factor on R) of ``corner`` for the envelope's tolerances [1]."""
    return (1.0 + _end(env, "torque_constant", corner.torque_constant),
            1.0 + _end(env, "terminal_resistance", corner.terminal_resistance))


def corner_label(env, corner: Corner) -> str:
    """``Kt = Ke −10 %, R +10 %``: the corner in words (deviations from the datasheet)."""
    def pct(v):
        return f"{v * 100:+.3g} %".replace("-", "−")

    return (f"Kt = Ke {pct(_end(env, 'torque_constant', corner.torque_constant))}, "
            f"R {pct(_end(env, 'terminal_resistance', corner.terminal_resistance))}")


def corners_in_use(env) -> list:
    """The distinct corner scales the active checks need, the metric corner first."""
    out = [corner_scales(env, METRIC_CORNER)]
    for check in REGISTRY:
        if check.applies(env):
            for corner in check.corners or ():
                sc = corner_scales(env, corner)
                if sc not in out:
                    out.append(sc)
    return out


@dataclass(frozen=True)
class Margin:
    """The margin a check yields.

    ``column`` is its name in the shortlist, ``dimension`` ``dimensionless``
    (a fraction of the limit) or ``temperature_difference`` (kelvin),
    ``required`` the key of the envelope's ``constraints.margins`` it must
    reach (None: zero), ``label`` the short header of the command line.
    """

    column: str
    dimension: str = "dimensionless"
    required: str | None = None
    label: str = ""

    @property
    def is_fraction(self) -> bool:
        return self.dimension == "dimensionless"


@dataclass(frozen=True)
class Check:
    """One selection check.

    Parameters
    ----------
    key : str
        Verdict name (``fails_<key>`` column, the ``failed`` list).
    meaning : str
        One line for the rejection counts.
    margin : Margin, optional
        The margin it yields; data checks and limits yield none.
    needs : tuple of str
        Candidate columns the margin and failure functions read.
    compute : callable, optional
        ``compute(x) -> margin array (N,)`` of :class:`CheckInputs` ``x``.
    fails : callable, optional
        ``fails(x, margin) -> bool array (N,)``; default: margin below the
        required margin (NaN never fails).
    reason : callable
        ``reason(x, margin) -> texts (an array or Series) or one str``, run on
        the failed rows only (``x`` holds just them).
    active : callable, optional
        ``active(env) -> bool``: an inactive check never fails (limits and
        allowed lists the envelope does not set).
    columns : dict, optional
        Extra shortlist columns: name -> (``fn(x) -> array``, dimension).
    normalise : callable, optional
        ``normalise(x, margin)`` → the fraction compared in ``smallest_margin``
        (default: the margin itself for fractions; no contribution otherwise).
    corners : tuple of Corner, optional
        The tolerance corners the check is judged at (None: it does not read
        the motor constants).  Several: the worst per candidate.
    owns : tuple of str
        Evaluation keys taken from the check's own corner (required when its
        corners are not just :data:`METRIC_CORNER`).
    """

    key: str
    meaning: str
    reason: Callable
    margin: Margin | None = None
    needs: tuple = ()
    compute: Callable | None = None
    fails: Callable | None = None
    active: Callable | None = None
    columns: dict = field(default_factory=dict)
    normalise: Callable | None = None
    corners: tuple | None = None
    owns: tuple = ()

    def applies(self, env) -> bool:
        return True if self.active is None else bool(self.active(env))


class CheckInputs:
    """What a check reads: the envelope, the candidate columns ``c``, the evaluation ``r``."""

    def __init__(self, env, c, r: dict, n: int):
        self.env, self.c, self.r, self.n = env, c, r, n
        self.check: Check | None = None     # the check being run (set by the runner)

    def required(self) -> float:
        """The required margin of the current check (0 without one)."""
        margin = self.check.margin
        return float(self.env.margins.get(margin.required, 0.0)) if margin and margin.required else 0.0

    def names(self, ix) -> np.ndarray:
        """Segment names at segment indices ``ix``, an object array of texts."""
        return np.asarray(self.env.names, dtype=object)[np.asarray(ix, dtype=int)]

    @staticmethod
    def fmt(values, spec: str = "{:.3g}") -> np.ndarray:
        """``values`` as texts in the format ``spec``, an object array (joins with ``+``); each distinct
        value (bit pattern: −0 and 0 apart) is formatted once (limits repeat over a motor's gear options)."""
        v = np.ascontiguousarray(values, dtype=float)
        if v.size <= 32:
            return np.array([spec.format(x) for x in v], dtype=object)
        bits, at = np.unique(v.view(np.int64), return_inverse=True)
        return np.array([spec.format(x) for x in bits.view(np.float64)], dtype=object)[at.reshape(v.shape)]

    def note(self, margin_value) -> np.ndarray:
        """``, margin 3.2 % < 10 %`` where a required margin was missed while the limit itself was kept."""
        required = self.required()
        m = np.asarray(margin_value, dtype=float)
        out = np.full(m.shape, "", dtype=object)
        shown = np.zeros(m.shape, dtype=bool) if not required > 0 else m >= 0
        if not shown.any():
            return out
        if self.check.margin.is_fraction:
            out[shown] = ", margin " + self.fmt(m[shown] * 100, "{:.1f}") + " % < " + f"{required * 100:.3g} %"
        else:
            out[shown] = ", margin " + self.fmt(m[shown], "{:.1f}") + " K < " + f"{required:.3g} K"
        return out


def below_required(x: CheckInputs, margin) -> np.ndarray:
    """The default failure: the margin below the required margin (NaN, not checked, never fails)."""
    with np.errstate(invalid="ignore"):
        return np.asarray(margin < x.required(), dtype=bool)


def _ratio_margin(limit, value):
    """(limit − value)/limit, NaN where either is missing or the limit is not finite."""
    limit = np.asarray(limit, dtype=float)
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(np.isfinite(limit), (limit - value) / limit, np.nan)


def _catalogue(x: CheckInputs) -> np.ndarray:
    return np.asarray(x.c["kind"]) == GEAR_CATALOGUE


def _gear_margin(limit_key: str, value: Callable) -> Callable:
    def compute(x):
        with np.errstate(invalid="ignore", divide="ignore"):
            return np.where(_catalogue(x), (x.c[limit_key] - value(x)) / x.c[limit_key], np.nan)
    return compute


def _missing(x: CheckInputs, names) -> np.ndarray:
    """Per row, the words of the candidate columns ``names`` ((key, words) pairs) that are NaN, joined."""
    out = np.full(x.n, "", dtype=object)
    for key, words in names:
        gap = np.isnan(np.asarray(x.c[key], dtype=float))
        out = out + np.where(gap & (out != ""), ", ", "") + np.where(gap, words, "")
    return np.where(out == "", "a constant", out).astype(object)


def _duty(x: CheckInputs, cycle: str, points: str) -> str:
    return cycle if x.env.mode == "cycle" else points


# -- the registry ---------------------------------------------------------------------------------
REGISTRY: list[Check] = [
    Check("constant_basis", "brushless constants on a basis that cannot be converted to the DC-equivalent model",
          needs=("basis_refused", "basis_note"),
          fails=lambda x, m: np.asarray(x.c["basis_refused"], dtype=bool),
          reason=lambda x, m: np.asarray(x.c["basis_note"], dtype=object)),
    Check("motor_data", "no motor constants: cannot check voltage",
          needs=("basis_refused", "terminal_resistance", "torque_constant", "rotor_inertia", "friction_torque"),
          fails=lambda x, m: np.isnan(x.r["voltage_margin"]) & ~np.asarray(x.c["basis_refused"], dtype=bool),
          reason=lambda x, m: "no motor constants: cannot check voltage (" + _missing(
              x, (("terminal_resistance", "R"), ("torque_constant", "Kt"), ("rotor_inertia", "rotor inertia"),
                  ("friction_torque", "friction torque"))) + " missing)"),
    Check("voltage", "needs more voltage than the supply gives after the drive drop",
          margin=Margin("voltage_margin", required="voltage", label="V %"),
          corners=VOLTAGE_CORNERS,
          owns=("voltage_margin", "voltage_need", "voltage_seg", "voltage_speed", "voltage_hot",
                "voltage_temperature", "seg_voltage", "seg_hot_worse"),
          compute=lambda x: x.r["voltage_margin"],
          reason=lambda x, m: (
              "segment " + x.names(x.r["voltage_seg"]) + ": needs " + x.fmt(x.r["voltage_need"], "{:.1f}")
              + " V at " + x.fmt(x.r["voltage_speed"] * RPM, "{:.0f}") + " rpm"
              + np.where(x.r["voltage_hot"], " (hot)", " (cold)").astype(object)
              + f", has {x.env.available_voltage:.1f} V after the drive drop"
              + x.note(m))),
    Check("peak_current", "a segment needs more current than the drive's peak limit",
          corners=(HEAT,),
          margin=Margin("peak_current_margin", required="current", label="Ipk %"),
          compute=lambda x: _ratio_margin(np.full(x.n, x.env.drive_peak_current), x.r["peak_current"]),
          reason=lambda x, m: (
              "segment " + x.names(x.r["peak_current_seg"]) + ": needs " + x.fmt(x.r["peak_current"]) + " A"
              + f", drive gives {x.env.drive_peak_current:.3g} A peak"
              + x.note(m))),
    Check("motor_peak_current", "a segment needs more current than the motor's own peak limit",
          corners=(HEAT,),
          margin=Margin("motor_peak_current_margin", required="current", label="Imot %"),
          needs=("max_peak_current", "current_basis_factor"),
          # a motor that states no limit is not checked (NaN margin); line-to-line records state their
          # limit in phase current: the DC-equivalent current × current_basis_factor
          compute=lambda x: _ratio_margin(x.c["max_peak_current"], x.r["peak_current"] * x.c["current_basis_factor"]),
          reason=lambda x, m: (
              "segment " + x.names(x.r["peak_current_seg"]) + ": needs "
              + x.fmt(x.r["peak_current"] * x.c["current_basis_factor"]) + " A, the motor's peak limit is "
              + x.fmt(x.c["max_peak_current"]) + " A" + x.note(m))),
    Check("rms_current", "RMS current above the drive's continuous limit",
          corners=(HEAT,),
          margin=Margin("rms_current_margin", required="current", label="Irms %"),
          compute=lambda x: _ratio_margin(np.full(x.n, x.env.drive_continuous_current), x.r["rms_current"]),
          reason=lambda x, m: (
              _duty(x, "RMS current", "continuous current") + " " + x.fmt(x.r["rms_current"])
              + f" A, drive gives {x.env.drive_continuous_current:.3g} A continuous"
              + x.note(m))),
    Check("thermal_data", "no thermal data: cannot check temperature",
          fails=lambda x, m: x.r["thermal_missing"],
          reason=lambda x, m: "no thermal data: cannot check temperature"),
    Check("temperature", "winding too hot, or no steady winding temperature (thermal runaway)",
          corners=(HEAT,),
          margin=Margin("temperature_margin", "temperature_difference", required="temperature", label="ΔT K"),
          needs=("max_winding_temperature",),
          compute=lambda x: x.c["max_winding_temperature"] - x.r["winding_temperature"],
          # a runaway (margin −inf) is the hottest case of all; no thermal data is a check of its own
          fails=lambda x, m: ~x.r["thermal_missing"] & (x.r["runaway"] | (m < x.required())),
          normalise=lambda x, m: m / (x.c["max_winding_temperature"] - x.env.ambient_temperature),
          reason=lambda x, m: np.where(
              x.r["runaway"],
              "thermal runaway: no steady winding temperature at " + x.fmt(x.r["rms_current"]) + " A RMS",
              "winding reaches " + x.fmt(x.r["winding_temperature"] - 273.15, "{:.0f}") + " °C, limit "
              + x.fmt(x.c["max_winding_temperature"] - 273.15, "{:.0f}") + " °C" + x.note(m)).astype(object)),
    Check("speed_data", "no motor speed limit: cannot check speed", needs=("max_speed",),
          fails=lambda x, m: np.isnan(x.c["max_speed"]),
          reason=lambda x, m: "no motor speed limit: cannot check speed"),
    Check("motor_speed", "motor speed above its limit",
          margin=Margin("motor_speed_margin", required="speed", label="speed %"), needs=("max_speed",),
          compute=lambda x: _ratio_margin(x.c["max_speed"], x.r["motor_speed"]),
          reason=lambda x, m: (
              "segment " + x.names(x.r["speed_seg"]) + ": motor at " + x.fmt(x.r["motor_speed"] * RPM, "{:.0f}")
              + " rpm, limit " + x.fmt(x.c["max_speed"] * RPM, "{:.0f}") + " rpm"
              + x.note(m))),
    Check("gear_data", "no gearhead rating: cannot check the gearhead",
          needs=("kind", "gear_max_input_speed", "gear_max_intermittent_torque", "gear_max_continuous_torque"),
          fails=lambda x, m: _catalogue(x) & (np.isnan(x.c["gear_max_input_speed"])
                                              | np.isnan(x.c["gear_max_intermittent_torque"])
                                              | np.isnan(x.c["gear_max_continuous_torque"])),
          reason=lambda x, m: "no gearhead rating: cannot check the gearhead (speed or torque rating missing)"),
    Check("gear_speed", "gearhead input speed above its limit",
          margin=Margin("gear_speed_margin", required="speed", label="gear speed %"),
          needs=("kind", "gear_max_input_speed"),
          compute=_gear_margin("gear_max_input_speed", lambda x: x.r["motor_speed"]),
          reason=lambda x, m: (
              "segment " + x.names(x.r["speed_seg"]) + ": gearhead input at "
              + x.fmt(x.r["motor_speed"] * RPM, "{:.0f}") + " rpm, limit "
              + x.fmt(x.c["gear_max_input_speed"] * RPM, "{:.0f}") + " rpm"
              + x.note(m))),
    Check("gear_peak_torque", "gearhead output torque above its intermittent rating",
          margin=Margin("gear_peak_torque_margin", required="torque", label="gear Tpk %"),
          needs=("kind", "gear_max_intermittent_torque"),
          compute=_gear_margin("gear_max_intermittent_torque", lambda x: x.r["gear_out_peak"]),
          reason=lambda x, m: (
              "segment " + x.names(x.r["gear_out_seg"]) + ": gearhead output " + x.fmt(x.r["gear_out_peak"])
              + " N·m, intermittent rating " + x.fmt(x.c["gear_max_intermittent_torque"]) + " N·m"
              + x.note(m))),
    Check("gear_continuous_torque", "RMS gearhead output torque above its continuous rating",
          margin=Margin("gear_continuous_torque_margin", required="torque", label="gear Trms %"),
          needs=("kind", "gear_max_continuous_torque"),
          compute=_gear_margin("gear_max_continuous_torque", lambda x: x.r["gear_out_rms"]),
          reason=lambda x, m: (
              _duty(x, "RMS", "continuous") + " gearhead output " + x.fmt(x.r["gear_out_rms"])
              + " N·m, continuous rating " + x.fmt(x.c["gear_max_continuous_torque"]) + " N·m"
              + x.note(m))),
]


def _limit(key: str, unit: str, scale: float) -> Check:
    """A size, mass or price limit of the envelope (``constraints.max_<key>``)."""
    name = f"max_{key}"

    def limit(env):
        return env.limits.get(name)

    return Check(key, f"{key} above the limit", needs=(key,), active=lambda env: limit(env) is not None,
                 fails=lambda x, m: ~np.isnan(x.c[key]) & (x.c[key] > limit(x.env)),
                 reason=lambda x, m: key + " " + x.fmt(x.c[key] * scale, "{:.4g}") + f" {unit} > "
                 + f"{limit(x.env) * scale:.4g} {unit}".rstrip())


LIMITS = (("diameter", "mm", 1e3), ("length", "mm", 1e3), ("mass", "g", 1e3), ("price", "", 1.0))


def _limit_gaps(x: CheckInputs) -> dict:
    """Limit key -> rows without data, for the limits the envelope sets."""
    return {k: np.isnan(x.c[k]) for k, _, _ in LIMITS if x.env.limits.get(f"max_{k}") is not None}


def _size_data_text(x: CheckInputs, m):
    gaps = _limit_gaps(x)
    text = np.full(x.n, "", dtype=object)
    for k, gap in gaps.items():
        text = text + np.where(gap, " " + k, "")
    return "no data for a limit:" + text


def _allowed(key: str) -> Check:
    """A list of allowed values of the envelope (``constraints.<key>``)."""
    return Check(key, f"{key} not allowed", needs=(key,), active=lambda env: getattr(env, key) is not None,
                 fails=lambda x, m: ~pd.Series(x.c[key]).isin(getattr(x.env, key)).to_numpy(),
                 reason=lambda x, m: key + " " + _or_unknown(x.c[key]) + f" not in {', '.join(getattr(x.env, key))}")


def _or_unknown(values) -> np.ndarray:
    """Texts with ``unknown`` for the empty ones, an object array."""
    v = np.asarray(values, dtype=object)
    return np.where(v == "", "unknown", v).astype(object)


REGISTRY += [_limit(*spec) for spec in LIMITS]
REGISTRY.append(Check(
    "size_data", "no size, mass or price data for a limit", needs=tuple(k for k, _, _ in LIMITS),
    active=lambda env: any(env.limits.get(f"max_{k}") is not None for k, _, _ in LIMITS),
    fails=lambda x, m: np.logical_or.reduce([np.zeros(x.n, bool), *_limit_gaps(x).values()]),
    reason=_size_data_text))
REGISTRY += [_allowed("commutation"), _allowed("mount")]


def _inertia_ratio(x: CheckInputs) -> np.ndarray:
    """Load inertia seen at the motor over rotor plus gear inertia, (J_load/n²)/(J_rotor + J_gear) [1]."""
    from ..physics import inertia_ratio

    return np.asarray(inertia_ratio(x.env.output_inertia, x.c["ratio"], x.c["rotor_inertia"],
                                    x.c["gear_inertia"]), dtype=float)


# The load inertia is the mechanism's reflected inertia or load.inertia (Envelope.output_inertia), never
# both: the value column is on every selection, the margin only where constraints.max_inertia_ratio is set.
REGISTRY.append(Check(
    "inertia_ratio", "load-to-motor inertia ratio above constraints.max_inertia_ratio",
    margin=Margin("inertia_ratio_margin", label="Jratio %"), needs=("rotor_inertia", "gear_inertia", "ratio"),
    compute=lambda x: (_ratio_margin(np.full(x.n, np.inf if x.env.max_inertia_ratio is None
                                             else x.env.max_inertia_ratio), _inertia_ratio(x))),
    columns={"inertia_ratio": (_inertia_ratio, None)},   # a plain number, not a percentage
    reason=lambda x, m: "load-to-motor inertia ratio " + x.fmt(_inertia_ratio(x))
    + f" > {x.env.max_inertia_ratio:g}" + x.note(m)))


class _Meanings(Mapping):
    """check key -> one-line meaning, a live view of :data:`REGISTRY` in verdict order."""

    def __getitem__(self, key):
        for c in REGISTRY:
            if c.key == key:
                return c.meaning
        raise KeyError(key)

    def __iter__(self):
        return iter([c.key for c in REGISTRY])

    def __len__(self):
        return len(REGISTRY)

    def __repr__(self):
        return f"CHECKS({dict(self)!r})"


#: check key -> meaning of every registered check (the rejection counts' explanations)
CHECKS = _Meanings()


def register(check: Check, before: str | None = None) -> Check:
    """Add a check to the registry (at the end, or before the check ``before``); returns it."""
    if any(c.key == check.key for c in REGISTRY):
        raise ValueError(f"a check {check.key!r} is registered already")
    if check.corners not in (None, (METRIC_CORNER,)) and not check.owns:
        raise ValueError(f"check {check.key!r} is judged at its own corners: name the keys it owns")
    at = next((i for i, c in enumerate(REGISTRY) if c.key == before), len(REGISTRY))
    REGISTRY.insert(at, check)
    return check


def unregister(key: str) -> None:
    """Remove the check ``key`` from the registry."""
    REGISTRY[:] = [c for c in REGISTRY if c.key != key]


def checks() -> list[Check]:
    """The registered checks, in verdict order."""
    return list(REGISTRY)


def margins() -> list[Margin]:
    """The margins of the registered checks, in verdict order."""
    return [c.margin for c in REGISTRY if c.margin is not None]


def margin_columns() -> list[str]:
    """The shortlist's margin columns: every check's margin, then ``smallest_margin``."""
    return [m.column for m in margins()] + ["smallest_margin"]


def value_columns() -> dict:
    """Extra shortlist columns of the checks: name -> dimension."""
    return {name: dim for c in REGISTRY for name, (_, dim) in c.columns.items()}


