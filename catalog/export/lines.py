"""The lines of a speed-torque diagram, computed in SI on the motor shaft.

Plain inputs (:class:`MotorModel`, :class:`Conditions`, :class:`OperatingPoint`)
and the physics of the diagram (:func:`characteristics`), from
:mod:`catalog.physics` only; :mod:`catalog.export.plots` draws them.
"""
from __future__ import annotations

__all__ = ["MotorModel", "Conditions", "OperatingPoint", "characteristics", "to_side", "mirror",
           "rms_point"]

import math
from dataclasses import dataclass


@dataclass
class MotorModel:
    """Constants of one motor (with its gear) in SI, as the selection used them."""

    label: str
    terminal_resistance: float          # R at the reference temperature [Ω]
    torque_constant: float              # Kt at the reference temperature [N·m/A]
    back_emf_constant: float            # Ke at the reference temperature [V·s/rad]
    friction_torque: float = 0.0        # Tf [N·m]
    reference_temperature: float = 298.15   # [K]
    magnet_coefficient: float = 0.0     # β [1/K]
    max_winding_temperature: float = math.nan   # [K]
    thermal_resistance_winding_housing: float = math.nan   # [K/W]
    thermal_resistance_housing_ambient: float = math.nan   # [K/W]
    max_speed: float = math.nan         # [rad/s]
    ratio: float = 1.0                  # [1]
    efficiency: float = 1.0             # [1]
    gear_max_speed: float = math.nan    # gearhead input limit [rad/s]
    gear_continuous_torque: float = math.nan   # gearhead output rating, continuous [N·m]
    gear_peak_torque: float = math.nan  # gearhead output rating, intermittent [N·m]
    gear_label: str = ""

    @classmethod
    def from_record(cls, record, label: str | None = None, magnet_coefficient: float = 0.0):
        """From a plain motor record (catalogue field names, SI values)."""
        def g(name, default=math.nan):
            v = record.get(name, default)
            return default if v is None or (isinstance(v, float) and math.isnan(v)) else float(v)

        kt = g("torque_constant")
        ke = g("back_emf_constant", kt)
        tf = g("friction_torque", kt * g("no_load_current", 0.0))
        ms = g("max_speed")
        return cls(label or str(record.get("id", "motor")), g("terminal_resistance"), kt, ke, tf,
                   g("resistance_reference_temperature", 298.15), magnet_coefficient,
                   g("max_winding_temperature"), g("thermal_resistance_winding_housing"),
                   g("thermal_resistance_housing_ambient"), ms if not math.isnan(ms) else g("no_load_speed"))


@dataclass
class Conditions:
    """Supply, drive and temperatures of the diagram (SI)."""

    voltage: float                      # worst-case voltage at the motor (min supply − drive drop) [V]
    nominal_voltage: float              # nominal voltage at the motor (nominal supply − drive drop) [V]
    ambient_temperature: float = 298.15  # [K]
    winding_temperature: float = math.nan  # computed (hot) winding temperature [K]
    peak_current: float = math.inf      # drive peak current [A]
    continuous_current: float = math.inf  # drive continuous current [A]


@dataclass
class OperatingPoint:
    """One segment or point on the motor shaft (SI): constant torque, speed ramp."""

    name: str
    torque: float                       # motor shaft torque [N·m]
    speed: float                        # motor speed at the start [rad/s]
    speed_end: float | None = None      # at the end; None: constant speed [rad/s]
    duration: float = math.nan          # [s]; NaN for operating points
    kind: str = "segment"               # segment, continuous or peak

    @property
    def end(self) -> float:
        return self.speed if self.speed_end is None else self.speed_end


def characteristics(model: MotorModel, cond: Conditions) -> dict:
    """The lines of the diagram in SI on the motor shaft.

    Returns ``hot`` and ``cold`` (each a dict of voltage [V], temperature [K],
    R [Ω], Kt, Ke, I0 [A], ``stall_torque`` [N·m], ``no_load_speed`` [rad/s]),
    ``continuous_torque`` [N·m] with ``continuous_current`` [A],
    ``peak_torque`` [N·m], ``max_speed`` and ``gear_max_speed`` [rad/s].
    ``continuous_torque_back`` and ``peak_torque_back`` [N·m, negative] are the
    same current limits where the load drives the motor: the shaft torque at
    −I is −(Kt·I + Tf), friction now helping the current hold the load.
    """
    from .. import physics as ph

    m = model
    tw = cond.winding_temperature
    if not math.isfinite(tw):
        tw = m.max_winding_temperature if math.isfinite(m.max_winding_temperature) else 428.15

    def line(voltage, temp):
        r = ph.resistance_at_temperature(m.terminal_resistance, temp, m.reference_temperature)
        kt = ph.torque_constant_at_temperature(m.torque_constant, temp, m.magnet_coefficient,
                                               m.reference_temperature)
        ke = ph.torque_constant_at_temperature(m.back_emf_constant, temp, m.magnet_coefficient,
                                               m.reference_temperature)
        i0 = m.friction_torque / kt
        return {"voltage": voltage, "temperature": temp, "R": r, "Kt": kt, "Ke": ke, "I0": i0,
                "stall_torque": ph.stall_torque(kt, ph.stall_current(voltage, r), i0),
                "no_load_speed": ph.no_load_speed(voltage, r, i0, ke)}

    hot = line(cond.voltage, tw)
    cold = line(cond.nominal_voltage, cond.ambient_temperature)
    i_cont = ph.max_continuous_current(m.max_winding_temperature, m.terminal_resistance,
                                       m.thermal_resistance_winding_housing,
                                       m.thermal_resistance_housing_ambient, cond.ambient_temperature,
                                       m.reference_temperature)
    kt_max = ph.torque_constant_at_temperature(m.torque_constant, m.max_winding_temperature,
                                               m.magnet_coefficient, m.reference_temperature)
    t_cont = kt_max * i_cont - m.friction_torque
    t_peak = hot["Kt"] * cond.peak_current - m.friction_torque if math.isfinite(cond.peak_current) else math.nan
    t_cont_back = -(kt_max * i_cont + m.friction_torque)
    t_peak_back = -(hot["Kt"] * cond.peak_current + m.friction_torque) if math.isfinite(cond.peak_current) \
        else math.nan
    # gearhead output ratings on the motor shaft (motor driving)
    gear = m.ratio * m.efficiency
    return {"hot": hot, "cold": cold, "continuous_current": i_cont, "continuous_torque": t_cont,
            "peak_torque": t_peak, "continuous_torque_back": t_cont_back, "peak_torque_back": t_peak_back, "max_speed": m.max_speed, "gear_max_speed": m.gear_max_speed,
            "gear_continuous_torque": m.gear_continuous_torque / gear,
            "gear_peak_torque": m.gear_peak_torque / gear}


def to_side(torque, speed, model: MotorModel, side: str):
    """(torque, speed) arrays on the ``motor`` or ``load`` side (SI)."""
    import numpy as np

    from ..physics import load_side_torque

    if side not in ("motor", "load"):
        raise ValueError(f"side must be 'motor' or 'load', got {side!r}")
    t = np.asarray(torque, dtype=float)
    w = np.asarray(speed, dtype=float)
    if side == "motor" or (model.ratio == 1.0 and model.efficiency == 1.0):
        return t, w
    # driving direction decided on the torque sign alone (speeds here are >= 0 after mirroring)
    return load_side_torque(t, np.where(w == 0, 1.0, w), model.ratio, model.efficiency), w / model.ratio


def mirror(p: OperatingPoint):
    """(direction, torque, start speed, end speed) mirrored so that speed >= 0."""
    s = p.speed if p.speed != 0 else p.end
    d = 1.0 if s > 0 else (-1.0 if s < 0 else (1.0 if p.torque >= 0 else -1.0))
    return d, p.torque * d, p.speed * d, p.end * d


def rms_point(points):
    """(RMS |torque| [N·m], mean |speed| [rad/s]) over the timed points, None for fewer than two."""
    import numpy as np

    from ..physics import rms, time_average

    cyc = [p for p in points if math.isfinite(p.duration) and p.duration > 0]
    if len(cyc) < 2:
        return None
    dur = np.array([p.duration for p in cyc])
    t = np.array([abs(p.torque) for p in cyc])
    w0 = np.array([abs(p.speed) for p in cyc])
    w1 = np.array([abs(p.end) for p in cyc])
    return float(rms(t, dur)), float(time_average(w0, dur, w1))
