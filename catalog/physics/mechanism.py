"""Mechanisms between the gear output and the load: screws, belts, racks, drums, wheels.

A mechanism turns the rotation of its input shaft (the gear output) into the
motion of a load.  Linear mechanisms move a mass along a straight line:
travel x [m] per input angle φ [rad] is the effective radius r, so
v = ω·r.  A screw of lead l (travel per revolution) has r = l/(2π); a belt
pulley, a pinion on a rack, a cable drum and a wheel have their pitch (or
rolling) radius.  A rotary load sits on the input shaft itself.

Sign conventions: positive travel is the direction of positive input speed;
a slope angle θ is the angle of travel above the horizontal (θ = 90°: lifting
on positive travel); an external force or torque is taken positive when it
opposes positive travel (a spring, a process force, an unbalance).  Forces
are those the mechanism must apply to the load, so a positive force with a
positive speed means the mechanism drives the load.

Efficiency: when the mechanism drives the load (F·v > 0), the input torque is
F·r/η; when the load drives the mechanism (F·v < 0: lowering, braking) it is
F·r·η_back.  A self-locking screw has η_back ≤ 0: the input torque then has
the sign of the motion, the motor drives the load down as well.  At
standstill the load is held with the driving efficiency, F·r/η, which is the
larger (conservative) holding torque.  The mechanism's own inertia (screw,
coupling, pulley, drum, wheel) is at the input and passes no loss.

Validity: rigid mechanism (no belt stretch, no wheel slip, no cable
elasticity), constant efficiencies and friction coefficients, Coulomb
friction (none at standstill), acceleration constant within a segment.
"""

from __future__ import annotations

import numpy as np

from .broadcast import vectorised

__all__ = [
    "STANDARD_GRAVITY",
    "screw_effective_radius",
    "linear_load_force",
    "wheel_load_force",
    "mechanism_input_torque",
    "reflected_mechanism_inertia",
    "rotary_load_torque",
    "move_peak_speed",
    "move_acceleration",
]

#: Standard acceleration of gravity g_n [m/s²], exact by definition (3rd CGPM, 1901; NIST SP 811).
STANDARD_GRAVITY = 9.80665


@vectorised
def screw_effective_radius(lead):
    """Effective radius of a screw: travel per radian of the screw.

    Parameters
    ----------
    lead : float or ndarray
        Lead l, travel of the nut per revolution of the screw (pitch times
        number of starts) [m].

    Returns
    -------
    float or ndarray
        r = l/(2π) [m], so that v = ω·r and T = F·r/η.

    Notes
    -----
    Relation: one revolution (2π rad) moves the nut by one lead.
    Validity: rigid screw and nut, no backlash.

    References
    ----------
    Budynas & Nisbett, Shigley's Mechanical Engineering Design, ch. 8 "The
    mechanics of power screws" (lead; efficiency e = F·l/(2π·T)).
    """
    return lead / (2.0 * np.pi)


@vectorised
def linear_load_force(mass, acceleration, speed, slope_angle, friction_coefficient, external_force):
    """Force the mechanism applies to a guided mass on a slope.

    Parameters
    ----------
    mass : float or ndarray
        Moving mass m [kg].
    acceleration : float or ndarray
        Acceleration a along positive travel [m/s²].
    speed : float or ndarray
        Speed of travel v; only its sign is used (friction opposes motion,
        none at standstill) [m/s].
    slope_angle : float or ndarray
        Angle θ of positive travel above the horizontal [rad].
    friction_coefficient : float or ndarray
        Coefficient of friction μ of the guide [1].
    external_force : float or ndarray
        External force opposing positive travel F_ext [N].

    Returns
    -------
    float or ndarray
        F = m·g·sin θ + μ·m·g·cos θ·sign(v) + m·a + F_ext [N].

    Notes
    -----
    Relation: Newton's second law along the guide with gravity, the normal
    force m·g·cos θ and Coulomb friction μ·N opposing the motion.  Gravity
    does not change sign with the direction; friction does.
    Validity: rigid guide, Coulomb friction, normal force from gravity alone.

    References
    ----------
    Meriam & Kraige, Engineering Mechanics: Dynamics, ch. 3 (rectilinear
    motion of a particle with friction on an inclined plane).
    """
    weight = mass * STANDARD_GRAVITY
    return (weight * np.sin(slope_angle)
            + friction_coefficient * weight * np.cos(slope_angle) * np.sign(speed)
            + mass * acceleration + external_force)


@vectorised
def wheel_load_force(mass, acceleration, speed, slope_angle, rolling_resistance, external_force, wheels):
    """Tractive force each driven wheel applies to the vehicle.

    Parameters
    ----------
    mass : float or ndarray
        Mass of the whole vehicle m [kg].
    acceleration : float or ndarray
        Acceleration a of the vehicle [m/s²].
    speed : float or ndarray
        Speed of the vehicle v; only its sign is used [m/s].
    slope_angle : float or ndarray
        Slope θ, uphill positive in the direction of positive travel [rad].
    rolling_resistance : float or ndarray
        Rolling-resistance coefficient c_rr [1].
    external_force : float or ndarray
        External force on the vehicle opposing positive travel (drag, a
        towed load) F_ext [N].
    wheels : float or ndarray
        Driven wheels sharing the load equally n_w [1].

    Returns
    -------
    float or ndarray
        F = (m·g·sin θ + c_rr·m·g·cos θ·sign(v) + m·a + F_ext)/n_w [N].

    Notes
    -----
    Relation: road-load equation (grade, rolling resistance, inertia) shared
    among the driven wheels; the rolling resistance c_rr·m·g·cos θ opposes
    the motion.  Validity: no wheel slip, equal load sharing, aerodynamic
    drag only if given as F_ext, wheel inertia added separately.

    References
    ----------
    Gillespie, Fundamentals of Vehicle Dynamics (SAE, 1992), ch. 4 "Road
    loads" (rolling resistance, grade) and ch. 2 (tractive force for
    acceleration).
    """
    return linear_load_force.__wrapped__(mass, acceleration, speed, slope_angle,
                                         rolling_resistance, external_force) / wheels


@vectorised
def mechanism_input_torque(force, radius, efficiency, back_driving_efficiency, speed,
                           mechanism_inertia, angular_acceleration):
    """Torque at the mechanism's input shaft (the gear output).

    Parameters
    ----------
    force : float or ndarray
        Force the mechanism applies to the load, including the load's
        inertial force m·a [N].
    radius : float or ndarray
        Effective radius r: lead/(2π) for a screw, the pitch radius of a
        pulley, pinion or drum, the rolling radius of a wheel [m].
    efficiency : float or ndarray
        Efficiency η when the mechanism drives the load [1].
    back_driving_efficiency : float or ndarray
        Efficiency η_back when the load drives the mechanism; ≤ 0 for a
        self-locking mechanism [1].
    speed : float or ndarray
        Speed of travel (or input speed); only its sign is used [m/s].
    mechanism_inertia : float or ndarray
        The mechanism's own inertia at its input (screw and coupling,
        pulleys, drum, wheel) J_mech [kg·m²].
    angular_acceleration : float or ndarray
        Angular acceleration of the input α = a/r [rad/s²].

    Returns
    -------
    float or ndarray
        T = J_mech·α + F·r/η where F·v ≥ 0 (driving, or holding at
        standstill), J_mech·α + F·r·η_back where F·v < 0 [N·m].

    Notes
    -----
    Relation: power balance T·ω·η = F·v when the mechanism drives,
    T·ω = η_back·F·v when the load drives it, with v = ω·r; the own
    inertia is on the input side of the losses.  A standing load is held
    with the driving efficiency (the larger torque: conservative).
    Validity: constant efficiencies, rigid mechanism.

    References
    ----------
    Budynas & Nisbett, Shigley's Mechanical Engineering Design, ch. 8 (torque
    and efficiency of a power screw, raising and lowering a load); the same
    power balance as a gear train (catalog.physics.gearing).
    """
    driving = force * np.sign(speed) >= 0.0
    through = np.where(driving, force * radius / efficiency, force * radius * back_driving_efficiency)
    return mechanism_inertia * angular_acceleration + through


@vectorised
def reflected_mechanism_inertia(mass, radius, mechanism_inertia):
    """Load inertia seen at the mechanism's input shaft.

    Parameters
    ----------
    mass : float or ndarray
        Translating mass per input shaft m (for a vehicle: its mass over the
        driven wheels) [kg].
    radius : float or ndarray
        Effective radius r of the mechanism [m].
    mechanism_inertia : float or ndarray
        The mechanism's own inertia at its input J_mech [kg·m²].

    Returns
    -------
    float or ndarray
        J = m·r² + J_mech [kg·m²].

    Notes
    -----
    Relation: equal kinetic energy, ½·m·v² = ½·(m·r²)·ω² with v = ω·r.
    Losses not included (the torques of :func:`mechanism_input_torque` carry
    them).  Validity: rigid mechanism.

    References
    ----------
    Meriam & Kraige, Engineering Mechanics: Dynamics, ch. 6 (kinetic energy
    of connected bodies, work-energy).
    """
    return mass * radius * radius + mechanism_inertia


@vectorised
def rotary_load_torque(inertia, angular_acceleration, speed, friction_torque, external_torque):
    """Torque to drive a rotating load sitting on the shaft.

    Parameters
    ----------
    inertia : float or ndarray
        Inertia of the load about its axis J [kg·m²].
    angular_acceleration : float or ndarray
        Angular acceleration α [rad/s²].
    speed : float or ndarray
        Angular speed ω; only its sign is used [rad/s].
    friction_torque : float or ndarray
        Coulomb friction torque of the bearings and seals T_f [N·m].
    external_torque : float or ndarray
        External torque opposing positive rotation (an unbalance, a spring,
        a process) T_ext [N·m].

    Returns
    -------
    float or ndarray
        T = J·α + T_f·sign(ω) + T_ext [N·m].

    Notes
    -----
    Relation: Euler's law of rotation about a fixed axis.  Validity: rigid
    body, constant friction and external torque (give the worst case of a
    position-dependent unbalance).

    References
    ----------
    Meriam & Kraige, Engineering Mechanics: Dynamics, ch. 6 (rotation of a
    rigid body about a fixed axis).
    """
    return inertia * angular_acceleration + friction_torque * np.sign(speed) + external_torque


@vectorised
def move_peak_speed(distance, move_time, accel_fraction):
    """Top speed of a point-to-point move with a trapezoidal speed profile.

    Parameters
    ----------
    distance : float or ndarray
        Signed distance of the move D (a length, or an angle for a rotary
        load) [m].
    move_time : float or ndarray
        Time of the whole move T [s].
    accel_fraction : float or ndarray
        Part f of the move time spent accelerating, the same decelerating;
        0 < f ≤ 1/2 (1/2: a triangle) [1].

    Returns
    -------
    float or ndarray
        v = D/(T·(1 − f)) [m/s].

    Notes
    -----
    Relation: the area under the trapezoid, D = v·(T − f·T), from rest to
    rest.  Validity: constant acceleration and deceleration of equal length.

    References
    ----------
    Meriam & Kraige, Engineering Mechanics: Dynamics, ch. 2 (rectilinear
    motion with constant acceleration).
    """
    return distance / (move_time * (1.0 - accel_fraction))


@vectorised
def move_acceleration(distance, move_time, accel_fraction):
    """Acceleration of a point-to-point move with a trapezoidal speed profile.

    Parameters
    ----------
    distance : float or ndarray
        Signed distance of the move D [m].
    move_time : float or ndarray
        Time of the whole move T [s].
    accel_fraction : float or ndarray
        Part f of the move time spent accelerating, the same decelerating
        [1].

    Returns
    -------
    float or ndarray
        a = D/(f·(1 − f)·T²) [m/s²].

    Notes
    -----
    Relation: a = v/(f·T) with the top speed v = D/(T·(1 − f)).  For a
    given D and T the acceleration is smallest at f = 1/2 (4·D/T²).
    Validity: as :func:`move_peak_speed`.

    References
    ----------
    Meriam & Kraige, Engineering Mechanics: Dynamics, ch. 2 (rectilinear
    motion with constant acceleration).
    """
    return distance / (accel_fraction * (1.0 - accel_fraction) * move_time * move_time)
