"""Inverse relations on the speed-torque line of the linear PM DC motor model.

Each function solves one forward relation of :mod:`catalog.physics.motor`
(stall current and torque, friction torque, no-load speed, speed-torque
gradient) for another quantity, so a derivation engine can walk a relation
table (see :data:`catalog.derive.EQUATIONS`).  Parameter names are the
canonical quantity names.

Validity shared by all: linear model, constant friction Tf = Kt·I0, steady
state.  Source: textbook chapter on DC machines (armature circuit and torque
equations), solved algebraically.
"""

from __future__ import annotations

from .broadcast import vectorised

__all__ = [
    "resistance_from_stall_current",
    "supply_voltage_from_stall_current",
    "torque_constant_from_stall",
    "stall_current_from_stall_torque",
    "no_load_current_from_stall",
    "no_load_current_from_friction_torque",
    "torque_constant_from_friction_torque",
    "back_emf_constant_from_no_load_speed",
    "no_load_current_from_no_load_speed",
    "resistance_from_no_load_speed",
    "supply_voltage_from_no_load_speed",
    "speed_torque_gradient_from_no_load_speed_and_stall_torque",
    "stall_torque_from_no_load_speed_and_gradient",
    "no_load_speed_from_stall_torque_and_gradient",
]


@vectorised
def resistance_from_stall_current(supply_voltage, stall_current):
    """Terminal resistance from the stall current.

    Parameters
    ----------
    supply_voltage : float or ndarray
        Supply voltage V [V].
    stall_current : float or ndarray
        Stall current Is [A].

    Returns
    -------
    float or ndarray
        R = V/Is [Ω].

    Notes
    -----
    Inverse of Is = V/R.  Validity: linear model, brush drop neglected.

    References
    ----------
    Textbook chapter on DC machines (armature circuit equation at ω = 0).
    """
    return supply_voltage / stall_current


@vectorised
def supply_voltage_from_stall_current(stall_current, terminal_resistance):
    """Supply voltage from the stall current.

    Parameters
    ----------
    stall_current : float or ndarray
        Stall current Is [A].
    terminal_resistance : float or ndarray
        Terminal resistance R [Ω].

    Returns
    -------
    float or ndarray
        V = Is·R [V].

    Notes
    -----
    Inverse of Is = V/R.  Validity: linear model.

    References
    ----------
    Textbook chapter on DC machines (armature circuit equation at ω = 0).
    """
    return stall_current * terminal_resistance


@vectorised
def torque_constant_from_stall(stall_torque, stall_current, no_load_current):
    """Torque constant from stall torque and stall current.

    Parameters
    ----------
    stall_torque : float or ndarray
        Stall torque Ts [N·m].
    stall_current : float or ndarray
        Stall current Is [A].
    no_load_current : float or ndarray
        No-load current I0 [A].

    Returns
    -------
    float or ndarray
        Kt = Ts/(Is − I0) [N·m/A].

    Notes
    -----
    Inverse of Ts = Kt·(Is − I0).  Validity: linear model, constant friction.

    References
    ----------
    Textbook chapter on DC machines (torque equation).
    """
    return stall_torque / (stall_current - no_load_current)


@vectorised
def stall_current_from_stall_torque(stall_torque, torque_constant, no_load_current):
    """Stall current from the stall torque.

    Parameters
    ----------
    stall_torque : float or ndarray
        Stall torque Ts [N·m].
    torque_constant : float or ndarray
        Torque constant Kt [N·m/A].
    no_load_current : float or ndarray
        No-load current I0 [A].

    Returns
    -------
    float or ndarray
        Is = Ts/Kt + I0 [A].

    Notes
    -----
    Inverse of Ts = Kt·(Is − I0).  Validity: linear model, constant friction.

    References
    ----------
    Textbook chapter on DC machines (torque equation).
    """
    return stall_torque / torque_constant + no_load_current


@vectorised
def no_load_current_from_stall(stall_torque, torque_constant, stall_current):
    """No-load current from stall torque and stall current.

    Parameters
    ----------
    stall_torque : float or ndarray
        Stall torque Ts [N·m].
    torque_constant : float or ndarray
        Torque constant Kt [N·m/A].
    stall_current : float or ndarray
        Stall current Is [A].

    Returns
    -------
    float or ndarray
        I0 = Is − Ts/Kt [A].

    Notes
    -----
    Inverse of Ts = Kt·(Is − I0).  Ill-conditioned when I0 ≪ Is.
    Validity: linear model, constant friction.

    References
    ----------
    Textbook chapter on DC machines (torque equation).
    """
    return stall_current - stall_torque / torque_constant


@vectorised
def no_load_current_from_friction_torque(friction_torque, torque_constant):
    """No-load current from the friction torque.

    Parameters
    ----------
    friction_torque : float or ndarray
        Friction torque Tf [N·m].
    torque_constant : float or ndarray
        Torque constant Kt [N·m/A].

    Returns
    -------
    float or ndarray
        I0 = Tf/Kt [A].

    Notes
    -----
    Inverse of Tf = Kt·I0.  Validity: constant friction.

    References
    ----------
    Textbook chapter on DC machines (no-load test).
    """
    return friction_torque / torque_constant


@vectorised
def torque_constant_from_friction_torque(friction_torque, no_load_current):
    """Torque constant from friction torque and no-load current.

    Parameters
    ----------
    friction_torque : float or ndarray
        Friction torque Tf [N·m].
    no_load_current : float or ndarray
        No-load current I0 [A].

    Returns
    -------
    float or ndarray
        Kt = Tf/I0 [N·m/A].

    Notes
    -----
    Inverse of Tf = Kt·I0.  Validity: constant friction.

    References
    ----------
    Textbook chapter on DC machines (no-load test).
    """
    return friction_torque / no_load_current


@vectorised
def back_emf_constant_from_no_load_speed(no_load_speed, supply_voltage,
                                         terminal_resistance, no_load_current):
    """Back-EMF constant from the no-load point.

    Parameters
    ----------
    no_load_speed : float or ndarray
        No-load speed ω0 [rad/s].
    supply_voltage : float or ndarray
        Supply voltage V [V].
    terminal_resistance : float or ndarray
        Terminal resistance R [Ω].
    no_load_current : float or ndarray
        No-load current I0 [A].

    Returns
    -------
    float or ndarray
        Ke = (V − R·I0)/ω0 [V·s/rad].

    Notes
    -----
    Inverse of ω0 = (V − R·I0)/Ke.  Validity: linear model, constant friction.

    References
    ----------
    Textbook chapter on DC machines (no-load test).
    """
    return (supply_voltage - terminal_resistance * no_load_current) / no_load_speed


@vectorised
def no_load_current_from_no_load_speed(no_load_speed, supply_voltage,
                                       terminal_resistance, back_emf_constant):
    """No-load current from the no-load point.

    Parameters
    ----------
    no_load_speed : float or ndarray
        No-load speed ω0 [rad/s].
    supply_voltage : float or ndarray
        Supply voltage V [V].
    terminal_resistance : float or ndarray
        Terminal resistance R [Ω].
    back_emf_constant : float or ndarray
        Back-EMF constant Ke [V·s/rad].

    Returns
    -------
    float or ndarray
        I0 = (V − Ke·ω0)/R [A].

    Notes
    -----
    Inverse of ω0 = (V − R·I0)/Ke.  Ill-conditioned when R·I0 ≪ V.
    Validity: linear model, constant friction.

    References
    ----------
    Textbook chapter on DC machines (no-load test).
    """
    return (supply_voltage - back_emf_constant * no_load_speed) / terminal_resistance


@vectorised
def resistance_from_no_load_speed(no_load_speed, supply_voltage, no_load_current,
                                  back_emf_constant):
    """Terminal resistance from the no-load point.

    Parameters
    ----------
    no_load_speed : float or ndarray
        No-load speed ω0 [rad/s].
    supply_voltage : float or ndarray
        Supply voltage V [V].
    no_load_current : float or ndarray
        No-load current I0 [A].
    back_emf_constant : float or ndarray
        Back-EMF constant Ke [V·s/rad].

    Returns
    -------
    float or ndarray
        R = (V − Ke·ω0)/I0 [Ω].

    Notes
    -----
    Inverse of ω0 = (V − R·I0)/Ke.  Ill-conditioned when R·I0 ≪ V; prefer
    any other route to R when one exists.  Validity: linear model.

    References
    ----------
    Textbook chapter on DC machines (no-load test).
    """
    return (supply_voltage - back_emf_constant * no_load_speed) / no_load_current


@vectorised
def supply_voltage_from_no_load_speed(no_load_speed, terminal_resistance,
                                      no_load_current, back_emf_constant):
    """Supply voltage from the no-load point.

    Parameters
    ----------
    no_load_speed : float or ndarray
        No-load speed ω0 [rad/s].
    terminal_resistance : float or ndarray
        Terminal resistance R [Ω].
    no_load_current : float or ndarray
        No-load current I0 [A].
    back_emf_constant : float or ndarray
        Back-EMF constant Ke [V·s/rad].

    Returns
    -------
    float or ndarray
        V = Ke·ω0 + R·I0 [V].

    Notes
    -----
    Inverse of ω0 = (V − R·I0)/Ke.  Validity: linear model.

    References
    ----------
    Textbook chapter on DC machines (no-load test).
    """
    return back_emf_constant * no_load_speed + terminal_resistance * no_load_current


@vectorised
def speed_torque_gradient_from_no_load_speed_and_stall_torque(no_load_speed,
                                                              stall_torque):
    """Speed-torque gradient from the ends of the speed-torque line.

    Parameters
    ----------
    no_load_speed : float or ndarray
        No-load speed ω0 [rad/s].
    stall_torque : float or ndarray
        Stall torque Ts [N·m].

    Returns
    -------
    float or ndarray
        Δω/ΔT = ω0/Ts [(rad/s)/(N·m)].

    Notes
    -----
    Relation: ω0/Ts = ((V − R·I0)/Ke)/(Kt·(V − R·I0)/R) = R/(Kt·Ke) exactly.
    Validity: linear model, constant friction counted at stall.

    References
    ----------
    Textbook chapter on DC machines (speed-torque characteristic).
    """
    return no_load_speed / stall_torque


@vectorised
def stall_torque_from_no_load_speed_and_gradient(no_load_speed, speed_torque_gradient):
    """Stall torque from no-load speed and speed-torque gradient.

    Parameters
    ----------
    no_load_speed : float or ndarray
        No-load speed ω0 [rad/s].
    speed_torque_gradient : float or ndarray
        Speed-torque gradient Δω/ΔT [(rad/s)/(N·m)].

    Returns
    -------
    float or ndarray
        Ts = ω0/(Δω/ΔT) [N·m].

    Notes
    -----
    Inverse of Δω/ΔT = ω0/Ts.  Validity: linear model, constant friction.

    References
    ----------
    Textbook chapter on DC machines (speed-torque characteristic).
    """
    return no_load_speed / speed_torque_gradient


@vectorised
def no_load_speed_from_stall_torque_and_gradient(stall_torque, speed_torque_gradient):
    """No-load speed from stall torque and speed-torque gradient.

    Parameters
    ----------
    stall_torque : float or ndarray
        Stall torque Ts [N·m].
    speed_torque_gradient : float or ndarray
        Speed-torque gradient Δω/ΔT [(rad/s)/(N·m)].

    Returns
    -------
    float or ndarray
        ω0 = Ts·Δω/ΔT [rad/s].

    Notes
    -----
    Inverse of Δω/ΔT = ω0/Ts.  Validity: linear model, constant friction.

    References
    ----------
    Textbook chapter on DC machines (speed-torque characteristic).
    """
    return stall_torque * speed_torque_gradient
