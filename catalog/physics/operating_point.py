"""Operating points, efficiency and power of the linear PM DC motor model.

Model and validity as in :mod:`catalog.physics.motor`: V = R·I + Ke·ω,
T = Kt·I − Tf with Tf = Kt·I0 constant; linear model (constant R, Kt, Ke),
constant friction, steady state (dI/dt = 0, dω/dt = 0), motoring quadrant.
Source: textbook chapter on DC machines (steady-state characteristics).
"""

from __future__ import annotations

import numpy as np

from .broadcast import vectorised

__all__ = [
    "speed_at_torque",
    "torque_at_speed",
    "current_at_torque",
    "torque_at_current",
    "voltage_at_torque_and_speed",
    "efficiency_at_current",
    "max_efficiency",
    "max_efficiency_current",
    "max_output_power",
    "max_output_power_from_no_load_speed_and_stall_torque",
    "no_load_rotational_loss",
    "back_emf_constant_from_operating_point",
    "resistance_from_operating_point",
]


@vectorised
def speed_at_torque(torque, supply_voltage, terminal_resistance, torque_constant,
                    back_emf_constant, no_load_current):
    """Steady speed at a given shaft torque.

    Parameters
    ----------
    torque : float or ndarray
        Shaft (load) torque T [N·m].
    supply_voltage : float or ndarray
        Supply voltage V [V].
    terminal_resistance : float or ndarray
        Terminal resistance R [Ω].
    torque_constant : float or ndarray
        Torque constant Kt [N·m/A].
    back_emf_constant : float or ndarray
        Back-EMF constant Ke [V·s/rad].
    no_load_current : float or ndarray
        No-load current I0 [A] (friction Tf = Kt·I0).

    Returns
    -------
    float or ndarray
        Speed ω = (V − R·(T + Tf)/Kt)/Ke [rad/s].

    Notes
    -----
    Relation: ω = (V − R·(T + Kt·I0)/Kt)/Ke = ω0 − T·R/(Kt·Ke).
    Validity: linear model, constant friction, steady state, ω ≥ 0.

    References
    ----------
    Textbook chapter on DC machines (speed-torque characteristic).
    """
    current = (torque + torque_constant * no_load_current) / torque_constant
    return (supply_voltage - terminal_resistance * current) / back_emf_constant


@vectorised
def torque_at_speed(speed, supply_voltage, terminal_resistance, torque_constant,
                    back_emf_constant, no_load_current):
    """Steady shaft torque at a given speed (inverse of speed_at_torque).

    Parameters
    ----------
    speed : float or ndarray
        Shaft speed ω [rad/s].
    supply_voltage : float or ndarray
        Supply voltage V [V].
    terminal_resistance : float or ndarray
        Terminal resistance R [Ω].
    torque_constant : float or ndarray
        Torque constant Kt [N·m/A].
    back_emf_constant : float or ndarray
        Back-EMF constant Ke [V·s/rad].
    no_load_current : float or ndarray
        No-load current I0 [A].

    Returns
    -------
    float or ndarray
        Shaft torque T = Kt·(V − Ke·ω)/R − Kt·I0 [N·m].

    Notes
    -----
    Relation: T = Kt·((V − Ke·ω)/R − I0).
    Validity: linear model, constant friction, steady state, ω ≥ 0.

    References
    ----------
    Textbook chapter on DC machines (speed-torque characteristic).
    """
    current = (supply_voltage - back_emf_constant * speed) / terminal_resistance
    return torque_constant * (current - no_load_current)


@vectorised
def current_at_torque(torque, torque_constant, no_load_current):
    """Current drawn at a given shaft torque.

    Parameters
    ----------
    torque : float or ndarray
        Shaft torque T [N·m].
    torque_constant : float or ndarray
        Torque constant Kt [N·m/A].
    no_load_current : float or ndarray
        No-load current I0 [A].

    Returns
    -------
    float or ndarray
        Current I = (T + Tf)/Kt = T/Kt + I0 [A].

    Notes
    -----
    Relation: I = (T + Kt·I0)/Kt.  Validity: linear model, constant friction,
    motoring direction (friction opposes positive speed).

    References
    ----------
    Textbook chapter on DC machines (torque equation).
    """
    return torque / torque_constant + no_load_current


@vectorised
def torque_at_current(current, torque_constant, no_load_current):
    """Shaft torque produced at a given current.

    Parameters
    ----------
    current : float or ndarray
        Motor current I [A].
    torque_constant : float or ndarray
        Torque constant Kt [N·m/A].
    no_load_current : float or ndarray
        No-load current I0 [A].

    Returns
    -------
    float or ndarray
        Shaft torque T = Kt·(I − I0) [N·m].

    Notes
    -----
    Relation: T = Kt·(I − I0).  Validity: linear model, constant friction.

    References
    ----------
    Textbook chapter on DC machines (torque equation).
    """
    return torque_constant * (current - no_load_current)


@vectorised
def voltage_at_torque_and_speed(torque, speed, terminal_resistance, torque_constant,
                                back_emf_constant, no_load_current):
    """Terminal voltage needed to hold a shaft torque at a speed.

    Parameters
    ----------
    torque : float or ndarray
        Shaft torque T [N·m].
    speed : float or ndarray
        Shaft speed ω [rad/s].
    terminal_resistance : float or ndarray
        Terminal resistance R [Ω].
    torque_constant : float or ndarray
        Torque constant Kt [N·m/A].
    back_emf_constant : float or ndarray
        Back-EMF constant Ke [V·s/rad].
    no_load_current : float or ndarray
        No-load current I0 [A].

    Returns
    -------
    float or ndarray
        Voltage U = R·I + Ke·ω with I = T/Kt + I0 [V].

    Notes
    -----
    Relation: U = R·(T + Kt·I0)/Kt + Ke·ω.
    Validity: linear model, constant friction, steady state.

    References
    ----------
    Textbook chapter on DC machines (armature circuit equation).
    """
    current = torque / torque_constant + no_load_current
    return terminal_resistance * current + back_emf_constant * speed


@vectorised
def efficiency_at_current(current, no_load_current, stall_current):
    """Efficiency at a given current.

    Parameters
    ----------
    current : float or ndarray
        Motor current I [A].
    no_load_current : float or ndarray
        No-load current I0 [A].
    stall_current : float or ndarray
        Stall current Is = V/R at the supply voltage of interest [A].

    Returns
    -------
    float or ndarray
        η = (1 − I0/I)·(1 − I/Is), set to 0 outside I0 ≤ I ≤ Is [1].

    Notes
    -----
    Relation: η = T·ω/(V·I) with T = Kt·(I − I0), ω = (V − R·I)/Ke and
    Kt = Ke; this reduces exactly to (1 − I0/I)·(1 − I/Is).
    Validity: linear model, constant friction, steady state, Kt = Ke.

    References
    ----------
    Textbook chapter on DC machines (losses and efficiency).
    """
    eta = (1.0 - no_load_current / current) * (1.0 - current / stall_current)
    inside = (current >= no_load_current) & (current <= stall_current)
    return np.where(inside, eta, np.where(np.isnan(eta), np.nan, 0.0))


@vectorised
def max_efficiency(no_load_current, stall_current):
    """Maximum efficiency.

    Parameters
    ----------
    no_load_current : float or ndarray
        No-load current I0 [A].
    stall_current : float or ndarray
        Stall current Is [A].

    Returns
    -------
    float or ndarray
        ηmax = (1 − √(I0/Is))² [1].

    Notes
    -----
    Relation: dη/dI = 0 for η = (1 − I0/I)(1 − I/Is) gives I = √(I0·Is) and
    ηmax = (1 − √(I0/Is))² exactly.
    Validity: linear model, constant friction, Kt = Ke.

    References
    ----------
    Textbook chapter on DC machines (losses and efficiency).
    """
    return (1.0 - np.sqrt(no_load_current / stall_current)) ** 2


@vectorised
def max_efficiency_current(no_load_current, stall_current):
    """Current at which the efficiency is maximal.

    Parameters
    ----------
    no_load_current : float or ndarray
        No-load current I0 [A].
    stall_current : float or ndarray
        Stall current Is [A].

    Returns
    -------
    float or ndarray
        I = √(I0·Is) [A].

    Notes
    -----
    Relation: I(ηmax) = √(I0·Is), the geometric mean of I0 and Is.
    Validity: linear model, constant friction, Kt = Ke.

    References
    ----------
    Textbook chapter on DC machines (losses and efficiency).
    """
    return np.sqrt(no_load_current * stall_current)


@vectorised
def max_output_power(supply_voltage, terminal_resistance, no_load_current):
    """Maximum mechanical output power at a supply voltage.

    Parameters
    ----------
    supply_voltage : float or ndarray
        Supply voltage V [V].
    terminal_resistance : float or ndarray
        Terminal resistance R [Ω].
    no_load_current : float or ndarray
        No-load current I0 [A].

    Returns
    -------
    float or ndarray
        Pmax = (V − R·I0)²/(4·R) [W].

    Notes
    -----
    Relation: with friction counted at stall too (Ts = Kt·(Is − I0)), the
    speed-torque line runs straight from (0, ω0) to (Ts, 0), so P = T·ω is
    maximal at T = Ts/2, ω = ω0/2 and Pmax = ω0·Ts/4 exactly.  Substituting
    ω0 = (V − R·I0)/Ke and Ts = Kt·(V − R·I0)/R gives
    Pmax = (Kt/Ke)·(V − R·I0)²/(4R), i.e. the value returned when Kt = Ke
    (exact in SI).  If Kt and Ke come from inconsistent datasheet values use
    :func:`max_output_power_from_no_load_speed_and_stall_torque` instead.
    Validity: linear model, constant friction, steady state.

    References
    ----------
    Textbook chapter on DC machines (output power characteristic).
    """
    head = supply_voltage - terminal_resistance * no_load_current
    return head * head / (4.0 * terminal_resistance)


@vectorised
def max_output_power_from_no_load_speed_and_stall_torque(no_load_speed, stall_torque):
    """Maximum mechanical output power from the ends of the speed-torque line.

    Parameters
    ----------
    no_load_speed : float or ndarray
        No-load speed ω0 [rad/s].
    stall_torque : float or ndarray
        Stall torque Ts [N·m].

    Returns
    -------
    float or ndarray
        Pmax = ω0·Ts/4 [W].

    Notes
    -----
    Relation: P = T·ω on the straight line ω = ω0·(1 − T/Ts) is maximal at
    T = Ts/2.  Validity: linear model, constant friction.

    References
    ----------
    Textbook chapter on DC machines (output power characteristic).
    """
    return no_load_speed * stall_torque / 4.0


@vectorised
def no_load_rotational_loss(supply_voltage, terminal_resistance, no_load_current):
    """Rotational (friction and iron) loss at no load.

    Parameters
    ----------
    supply_voltage : float or ndarray
        Supply voltage V [V].
    terminal_resistance : float or ndarray
        Terminal resistance R [Ω].
    no_load_current : float or ndarray
        No-load current I0 [A].

    Returns
    -------
    float or ndarray
        Loss P = (V − R·I0)·I0 = Tf·ω0 [W].

    Notes
    -----
    Relation: at no load all internal power E·I0 = Ke·ω0·I0 goes into
    rotational loss; with Kt = Ke it equals Tf·ω0.  Validity: linear model.

    References
    ----------
    Textbook chapter on DC machines (no-load test, rotational losses).
    """
    return (supply_voltage - terminal_resistance * no_load_current) * no_load_current


@vectorised
def back_emf_constant_from_operating_point(supply_voltage, current, speed,
                                          terminal_resistance):
    """Back-EMF constant from one measured steady operating point.

    Parameters
    ----------
    supply_voltage : float or ndarray
        Terminal voltage V at the operating point [V].
    current : float or ndarray
        Current I at the operating point [A].
    speed : float or ndarray
        Speed ω at the operating point [rad/s].
    terminal_resistance : float or ndarray
        Terminal resistance R [Ω].

    Returns
    -------
    float or ndarray
        Ke = (V − R·I)/ω [V·s/rad].

    Notes
    -----
    Relation: armature equation solved for Ke (e.g. rated or no-load point).
    Validity: linear model, steady state, ω ≠ 0.

    References
    ----------
    Textbook chapter on DC machines (armature circuit equation).
    """
    return (supply_voltage - terminal_resistance * current) / speed


@vectorised
def resistance_from_operating_point(supply_voltage, current, speed, back_emf_constant):
    """Terminal resistance from one measured steady operating point.

    Parameters
    ----------
    supply_voltage : float or ndarray
        Terminal voltage V at the operating point [V].
    current : float or ndarray
        Current I at the operating point [A].
    speed : float or ndarray
        Speed ω at the operating point [rad/s].
    back_emf_constant : float or ndarray
        Back-EMF constant Ke [V·s/rad].

    Returns
    -------
    float or ndarray
        R = (V − Ke·ω)/I [Ω].

    Notes
    -----
    Relation: armature equation solved for R.  Ill-conditioned when R·I ≪ V.
    Validity: linear model, steady state, I ≠ 0.

    References
    ----------
    Textbook chapter on DC machines (armature circuit equation).
    """
    return (supply_voltage - back_emf_constant * speed) / current
