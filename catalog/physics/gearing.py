"""Gearheads: speed, torque and inertia seen by the motor.

Conventions: ratio n = ω_motor/ω_load (n > 1 reduces speed), efficiency η
the forward (motor drives load) efficiency, load torque T_load the torque the
gear output must deliver to the load, taken positive in the direction of
positive load speed; load power T_load·ω_load > 0 means the motor drives,
< 0 means the load drives the motor (back-driving, e.g. braking a load
or lowering a weight).  Gear inertia is referred to the gear input (motor)
shaft, as datasheets state it.

Validity: rigid, backlash-free gear, efficiency constant (load and speed
independent), power loss always reducing the power that passes.
Source: textbook on machine elements / drive engineering (gear trains, power
balance with efficiency, inertia referred through a ratio).
"""

from __future__ import annotations

import numpy as np

from .broadcast import vectorised

__all__ = [
    "motor_side_speed",
    "load_side_speed",
    "driving_motor_torque",
    "back_driven_motor_torque",
    "motor_side_torque",
    "load_side_torque",
    "reflected_inertia",
    "acceleration_torque",
    "required_motor_torque",
    "optimal_ratio_inertial",
    "inertia_ratio",
]


@vectorised
def motor_side_speed(load_speed, ratio):
    """Motor speed for a load speed.

    Parameters
    ----------
    load_speed : float or ndarray
        Gear output (load) speed ω_load [rad/s].
    ratio : float or ndarray
        Gear ratio n = ω_motor/ω_load [1].

    Returns
    -------
    float or ndarray
        ω_motor = n·ω_load [rad/s].

    Notes
    -----
    Relation: kinematics of a rigid gear train.  Validity: no slip/backlash.

    References
    ----------
    Textbook on machine elements (gear train kinematics).
    """
    return ratio * load_speed


@vectorised
def load_side_speed(motor_speed, ratio):
    """Load speed for a motor speed.

    Parameters
    ----------
    motor_speed : float or ndarray
        Gear input (motor) speed ω_motor [rad/s].
    ratio : float or ndarray
        Gear ratio n = ω_motor/ω_load [1].

    Returns
    -------
    float or ndarray
        ω_load = ω_motor/n [rad/s].

    Notes
    -----
    Relation: kinematics of a rigid gear train.  Validity: no slip/backlash.

    References
    ----------
    Textbook on machine elements (gear train kinematics).
    """
    return motor_speed / ratio


@vectorised
def driving_motor_torque(load_torque, ratio, efficiency):
    """Motor torque when the motor drives the load through the gear.

    Parameters
    ----------
    load_torque : float or ndarray
        Torque delivered to the load T_load [N·m].
    ratio : float or ndarray
        Gear ratio n [1].
    efficiency : float or ndarray
        Forward gear efficiency η [1].

    Returns
    -------
    float or ndarray
        T_motor = T_load/(n·η) [N·m].

    Notes
    -----
    Relation: power balance T_motor·ω_motor·η = T_load·ω_load.
    Validity: motor drives (load power ≥ 0), constant efficiency.

    References
    ----------
    Textbook on machine elements (power balance of a gear train).
    """
    return load_torque / (ratio * efficiency)


@vectorised
def back_driven_motor_torque(load_torque, ratio, efficiency):
    """Motor torque when the load drives the motor through the gear.

    Parameters
    ----------
    load_torque : float or ndarray
        Torque delivered to the load T_load (opposing the load speed) [N·m].
    ratio : float or ndarray
        Gear ratio n [1].
    efficiency : float or ndarray
        Back-driving gear efficiency η [1].

    Returns
    -------
    float or ndarray
        T_motor = T_load·η/n [N·m].

    Notes
    -----
    Relation: power balance T_motor·ω_motor = η·T_load·ω_load with power
    flowing from the load.  Validity: load drives (load power < 0).

    References
    ----------
    Textbook on machine elements (power balance of a gear train).
    """
    return load_torque * efficiency / ratio


@vectorised
def motor_side_torque(load_torque, load_speed, ratio, efficiency,
                      back_driving_efficiency=None):
    """Motor torque for a load point, choosing the power-flow direction.

    Parameters
    ----------
    load_torque : float or ndarray
        Torque delivered to the load T_load [N·m].
    load_speed : float or ndarray
        Load speed ω_load [rad/s].
    ratio : float or ndarray
        Gear ratio n [1].
    efficiency : float or ndarray
        Forward gear efficiency η [1].
    back_driving_efficiency : float or ndarray
        Efficiency when the load drives; default the forward efficiency [1].

    Returns
    -------
    float or ndarray
        T_load/(n·η) where T_load·ω_load ≥ 0 (motor drives, holding
        included, the conservative choice), T_load·η_b/n where the load
        drives [N·m].

    Notes
    -----
    Relation: power balance in the direction the power flows.
    Validity: constant efficiencies; self-locking gears not modelled.

    References
    ----------
    Textbook on machine elements (power balance of a gear train).
    """
    back = efficiency if back_driving_efficiency is None else back_driving_efficiency
    driving = np.sign(load_torque) * np.sign(load_speed) >= 0.0   # no underflow
    return np.where(driving, load_torque / (ratio * efficiency),
                    load_torque * back / ratio)


@vectorised
def load_side_torque(motor_torque, motor_speed, ratio, efficiency,
                     back_driving_efficiency=None):
    """Torque delivered to the load for a motor point (inverse of motor_side_torque).

    Parameters
    ----------
    motor_torque : float or ndarray
        Motor shaft torque T_motor [N·m].
    motor_speed : float or ndarray
        Motor speed ω_motor [rad/s].
    ratio : float or ndarray
        Gear ratio n [1].
    efficiency : float or ndarray
        Forward gear efficiency η [1].
    back_driving_efficiency : float or ndarray
        Efficiency when the load drives; default the forward efficiency [1].

    Returns
    -------
    float or ndarray
        T_motor·n·η where T_motor·ω_motor ≥ 0, T_motor·n/η_b otherwise [N·m].

    Notes
    -----
    Relation: power balance in the direction the power flows.
    Validity: constant efficiencies.

    References
    ----------
    Textbook on machine elements (power balance of a gear train).
    """
    back = efficiency if back_driving_efficiency is None else back_driving_efficiency
    driving = np.sign(motor_torque) * np.sign(motor_speed) >= 0.0
    return np.where(driving, motor_torque * ratio * efficiency,
                    motor_torque * ratio / back)


@vectorised
def reflected_inertia(rotor_inertia, gear_inertia, load_inertia, ratio):
    """Total inertia seen at the motor shaft.

    Parameters
    ----------
    rotor_inertia : float or ndarray
        Rotor inertia J_motor [kg·m²].
    gear_inertia : float or ndarray
        Gear inertia referred to its input shaft J_gear [kg·m²].
    load_inertia : float or ndarray
        Load inertia at the gear output J_load [kg·m²].
    ratio : float or ndarray
        Gear ratio n [1].

    Returns
    -------
    float or ndarray
        J = J_motor + J_gear + J_load/n² [kg·m²].

    Notes
    -----
    Relation: equal kinetic energy at ω_motor = n·ω_load.
    Validity: rigid gear; gear losses not included (see
    :func:`acceleration_torque`).

    References
    ----------
    Textbook on drive engineering (inertia referred through a gear).
    """
    return rotor_inertia + gear_inertia + load_inertia / (ratio * ratio)


@vectorised
def acceleration_torque(load_acceleration, ratio, efficiency, rotor_inertia,
                        gear_inertia, load_inertia, load_speed=None):
    """Motor torque needed to accelerate the inertias only.

    Parameters
    ----------
    load_acceleration : float or ndarray
        Load angular acceleration α_load [rad/s²].
    ratio : float or ndarray
        Gear ratio n [1].
    efficiency : float or ndarray
        Gear efficiency η [1].
    rotor_inertia : float or ndarray
        Rotor inertia J_motor [kg·m²].
    gear_inertia : float or ndarray
        Gear inertia referred to its input J_gear [kg·m²].
    load_inertia : float or ndarray
        Load inertia J_load [kg·m²].
    load_speed : float or ndarray
        Load speed ω_load; if given, the load's inertial torque passes the
        gear in the direction of its power (decelerating a load back-drives);
        default None: always driving, the conservative choice [rad/s].

    Returns
    -------
    float or ndarray
        T = (J_motor + J_gear)·n·α_load + J_load·α_load/(n·η) (driving) [N·m].

    Notes
    -----
    Relation: α_motor = n·α_load; the load's inertial torque J_load·α_load
    passes the gear, the motor-side inertias do not.  For a full duty point
    with external load torque use :func:`required_motor_torque`.
    Validity: rigid gear, constant efficiency.

    References
    ----------
    Textbook on drive engineering (acceleration through a gear).
    """
    motor_part = (rotor_inertia + gear_inertia) * ratio * load_acceleration
    inertial = load_inertia * load_acceleration
    if load_speed is None:
        return motor_part + inertial / (ratio * efficiency)
    return motor_part + motor_side_torque(inertial, load_speed, ratio, efficiency)


@vectorised
def required_motor_torque(load_torque, load_speed, load_acceleration, ratio,
                          efficiency, rotor_inertia, gear_inertia, load_inertia,
                          back_driving_efficiency=None):
    """Motor torque for a duty point: external load plus acceleration.

    Parameters
    ----------
    load_torque : float or ndarray
        External torque delivered to the load (friction, process, gravity)
        [N·m].
    load_speed : float or ndarray
        Load speed ω_load [rad/s].
    load_acceleration : float or ndarray
        Load angular acceleration α_load [rad/s²].
    ratio : float or ndarray
        Gear ratio n [1].
    efficiency : float or ndarray
        Forward gear efficiency η [1].
    rotor_inertia : float or ndarray
        Rotor inertia J_motor [kg·m²].
    gear_inertia : float or ndarray
        Gear inertia referred to its input J_gear [kg·m²].
    load_inertia : float or ndarray
        Load inertia J_load [kg·m²].
    back_driving_efficiency : float or ndarray
        Efficiency when the load drives; default the forward efficiency [1].

    Returns
    -------
    float or ndarray
        T_motor = (J_motor + J_gear)·n·α_load
        + motor_side_torque(T_load + J_load·α_load, ω_load) [N·m].

    Notes
    -----
    Relation: the total torque at the gear output decides the power-flow
    direction through the gear; motor-side inertias bypass the gear losses.
    Validity: rigid gear, constant efficiencies.

    References
    ----------
    Textbook on drive engineering (load torque and acceleration via a gear).
    """
    output = load_torque + load_inertia * load_acceleration
    return ((rotor_inertia + gear_inertia) * ratio * load_acceleration
            + motor_side_torque(output, load_speed, ratio, efficiency,
                                back_driving_efficiency))


@vectorised
def optimal_ratio_inertial(rotor_inertia, load_inertia, gear_inertia=0.0,
                           efficiency=1.0):
    """Gear ratio that minimises motor torque for a purely inertial load.

    Parameters
    ----------
    rotor_inertia : float or ndarray
        Rotor inertia J_motor [kg·m²].
    load_inertia : float or ndarray
        Load inertia J_load [kg·m²].
    gear_inertia : float or ndarray
        Gear inertia referred to its input, taken independent of n [kg·m²].
    efficiency : float or ndarray
        Gear efficiency η while accelerating [1].

    Returns
    -------
    float or ndarray
        n = √(J_load/(η·(J_motor + J_gear))) [1].

    Notes
    -----
    Relation: T(n) = (J_motor + J_gear)·n·α + J_load·α/(n·η) is smallest
    where dT/dn = 0 (inertia matching: reflected load equals motor-side
    inertia for η = 1).  Validity: pure inertia, gear inertia independent of
    ratio, constant efficiency.

    References
    ----------
    Textbook on drive engineering / servo drives (inertia matching).
    """
    return np.sqrt(load_inertia / (efficiency * (rotor_inertia + gear_inertia)))


@vectorised
def inertia_ratio(load_inertia, ratio, rotor_inertia, gear_inertia=0.0):
    """Load-to-motor inertia ratio: the load inertia seen at the motor over the motor side's own.

    Parameters
    ----------
    load_inertia : float or ndarray
        Load inertia at the gear output J_load [kg·m²].
    ratio : float or ndarray
        Gear ratio n [1].
    rotor_inertia : float or ndarray
        Rotor inertia J_rotor [kg·m²].
    gear_inertia : float or ndarray
        Gear inertia referred to its input shaft J_gear [kg·m²].

    Returns
    -------
    float or ndarray
        (J_load/n²)/(J_rotor + J_gear) [1]; NaN where the motor side's inertia is unknown or zero.

    Notes
    -----
    Relation: the reflected load inertia of :func:`reflected_inertia` over
    the motor-side inertia; 1 is the inertia match of
    :func:`optimal_ratio_inertial` (lossless gear).  A large ratio makes a
    position loop sensitive to compliance; the acceptable value depends on the
    drive (common practice: about 10 or less for a stiff servo axis).

    References
    ----------
    Textbook on drive engineering (inertia referred through a gear, inertia matching).
    """
    motor_side = rotor_inertia + gear_inertia
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(motor_side > 0, load_inertia / (ratio * ratio) / motor_side, np.nan)
