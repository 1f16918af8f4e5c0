"""Inverse relations of the characteristic points of a datasheet.

Each function solves one relation of :mod:`catalog.physics.operating_point`
(the point of maximum efficiency, the maximum output power, an operating point
such as the nominal one)
for another catalogue quantity, so the derivation table of
:mod:`catalog.derive` can fill that quantity from the others.  Parameter
names are the catalogue's field names.

Validity shared by all: linear model, constant friction Tf = Kt·I0, steady
state.  Source: textbook chapter on DC machines, solved algebraically.
"""

from __future__ import annotations

from .broadcast import vectorised

__all__ = [
    "no_load_current_from_max_efficiency_current",
    "stall_current_from_max_efficiency_current",
    "no_load_speed_from_max_output_power",
    "stall_torque_from_max_output_power",
    "no_load_current_from_current_and_torque",
    "no_load_current_from_speed_and_torque",
]


@vectorised
def no_load_current_from_max_efficiency_current(max_efficiency_current, stall_current):
    """No-load current from the current of maximum efficiency.

    Parameters
    ----------
    max_efficiency_current : float or ndarray
        Current at maximum efficiency Iη [A].
    stall_current : float or ndarray
        Stall current Is [A].

    Returns
    -------
    float or ndarray
        I0 = Iη²/Is [A].

    Notes
    -----
    Inverse of Iη = √(I0·Is).  Validity: linear model, constant friction,
    Kt = Ke.

    References
    ----------
    Textbook chapter on DC machines (losses and efficiency).
    """
    return max_efficiency_current * max_efficiency_current / stall_current


@vectorised
def stall_current_from_max_efficiency_current(max_efficiency_current, no_load_current):
    """Stall current from the current of maximum efficiency.

    Parameters
    ----------
    max_efficiency_current : float or ndarray
        Current at maximum efficiency Iη [A].
    no_load_current : float or ndarray
        No-load current I0 [A].

    Returns
    -------
    float or ndarray
        Is = Iη²/I0 [A].

    Notes
    -----
    Inverse of Iη = √(I0·Is).  Validity: linear model, constant friction,
    Kt = Ke.

    References
    ----------
    Textbook chapter on DC machines (losses and efficiency).
    """
    return max_efficiency_current * max_efficiency_current / no_load_current


@vectorised
def no_load_speed_from_max_output_power(max_output_power, stall_torque):
    """No-load speed from the maximum output power and the stall torque.

    Parameters
    ----------
    max_output_power : float or ndarray
        Maximum output power Pmax [W].
    stall_torque : float or ndarray
        Stall torque Ts [N·m].

    Returns
    -------
    float or ndarray
        ω0 = 4·Pmax/Ts [rad/s].

    Notes
    -----
    Inverse of Pmax = ω0·Ts/4 (the power on the straight speed-torque line
    peaks at half the stall torque).  Validity: linear model, constant
    friction.

    References
    ----------
    Textbook chapter on DC machines (output power characteristic).
    """
    return 4.0 * max_output_power / stall_torque


@vectorised
def stall_torque_from_max_output_power(max_output_power, no_load_speed):
    """Stall torque from the maximum output power and the no-load speed.

    Parameters
    ----------
    max_output_power : float or ndarray
        Maximum output power Pmax [W].
    no_load_speed : float or ndarray
        No-load speed ω0 [rad/s].

    Returns
    -------
    float or ndarray
        Ts = 4·Pmax/ω0 [N·m].

    Notes
    -----
    Inverse of Pmax = ω0·Ts/4.  Validity: linear model, constant friction.

    References
    ----------
    Textbook chapter on DC machines (output power characteristic).
    """
    return 4.0 * max_output_power / no_load_speed


@vectorised
def no_load_current_from_current_and_torque(torque, current, torque_constant):
    """No-load current from the current and shaft torque of one operating point.

    Parameters
    ----------
    torque : float or ndarray
        Shaft torque T of the point (the nominal torque for a datasheet) [N·m].
    current : float or ndarray
        Current I at that torque [A].
    torque_constant : float or ndarray
        Torque constant Kt [N·m/A].

    Returns
    -------
    float or ndarray
        I0 = I − T/Kt [A].

    Notes
    -----
    Inverse of I = (T + Kt·I0)/Kt: the current beyond what the shaft torque needs
    overcomes the constant friction Tf = Kt·I0.  Ill-conditioned when I0 ≪ I (a small
    difference of two rounded numbers; the error grows by I/I0).  Validity: linear
    model, constant friction, steady state.

    References
    ----------
    Textbook chapter on DC machines (torque equation).
    """
    return current - torque / torque_constant


@vectorised
def no_load_current_from_speed_and_torque(torque, speed, supply_voltage, terminal_resistance,
                                          torque_constant, back_emf_constant):
    """No-load current from one point (speed at a torque) of the speed-torque line.

    Parameters
    ----------
    torque : float or ndarray
        Shaft torque T of the point (the nominal torque for a datasheet) [N·m].
    speed : float or ndarray
        Speed ω at that torque [rad/s].
    supply_voltage : float or ndarray
        Supply voltage V of the line [V].
    terminal_resistance : float or ndarray
        Terminal resistance R [Ω].
    torque_constant : float or ndarray
        Torque constant Kt [N·m/A].
    back_emf_constant : float or ndarray
        Back-EMF constant Ke [V·s/rad].

    Returns
    -------
    float or ndarray
        I0 = (V − Ke·ω)/R − T/Kt [A].

    Notes
    -----
    Inverse of ω = (V − R·(T + Kt·I0)/Kt)/Ke: the armature equation gives the current
    I = (V − Ke·ω)/R, of which T/Kt drives the shaft and the rest the friction.
    Ill-conditioned: V − Ke·ω is small beside V, and I0 small beside I.  Validity:
    linear model, constant friction, steady state.

    References
    ----------
    Textbook chapter on DC machines (armature circuit and torque equations).
    """
    current = (supply_voltage - back_emf_constant * speed) / terminal_resistance
    return current - torque / torque_constant
