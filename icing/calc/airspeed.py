"""Airspeeds: calibrated (indicated) to true airspeed, and an airframe's speed schedule.

The kinetic heating at a collector's stagnation line goes with the square of the
true airspeed, and the catch with the true airspeed itself, so the airspeed used
at every altitude matters as much as the liquid water: an airliner that cruises at
440 kt true flies its climb, descent and holding at indicated speeds that are
100-200 kt slower in true terms low down. Aircraft fly indicated (calibrated)
speeds below their cruise altitude; :func:`true_airspeed_from_calibrated` turns
them into true airspeed with the air's own pressure and temperature (the
forecast's, not the standard atmosphere's).

:class:`SpeedSchedule` holds an airframe's speeds by phase of flight (level,
climb, descent, hold) and the regulatory indicated-speed limit at low altitude
that applies to its class (:data:`SPEED_LIMITS`):

* ``"14 CFR 91.117(a)"``: "no person may operate an aircraft below 10,000 feet
  MSL at an indicated airspeed of more than 250 knots" (unless otherwise
  authorized). It applies to every aircraft in United States airspace; ICAO
  Annex 11 (Appendix 4, airspace classes C to G) and the European SERA.6001
  carry the same 250 kt below 10,000 ft AMSL for most classes of airspace. The
  manned presets carry it (it binds only where a schedule is faster).
* ``"none"``: no indicated-speed limit applied (small unmanned aircraft, whose
  14 CFR 107.51(a) limit of 87 kt is a ground speed far above their schedules).

Indicated airspeed is taken equal to calibrated airspeed (no instrument or
position error): a screening estimate, stated in the assumptions.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from icing.constants import FT, KT, P0_STD

__all__ = [
    "GAMMA_AIR",
    "A0_STD",
    "PHASES",
    "PHASE_LEVEL",
    "PHASE_CLIMB",
    "PHASE_DESCENT",
    "PHASE_HOLD",
    "SPEED_LIMITS",
    "SpeedSchedule",
    "true_airspeed_from_calibrated",
    "calibrated_airspeed_from_true",
]

#: Ratio of specific heats of dry air (ideal diatomic gas). [1]
GAMMA_AIR = 1.4
#: Speed of sound at sea level in the ICAO standard atmosphere (ICAO Doc 7488;
#: ``sqrt(1.4 x 287.05287 x 288.15)``), the reference of calibrated airspeed. [m s-1]
A0_STD = 340.294
#: The ICAO standard atmosphere's gas constant of dry air (ICAO Doc 7488), used with
#: ``A0_STD`` so that calibrated and true airspeed agree at sea level. [J kg-1 K-1]
_R_ICAO = 287.05287

#: Phases of flight, index = code.
PHASES = ("level", "climb", "descent", "hold")
PHASE_LEVEL, PHASE_CLIMB, PHASE_DESCENT, PHASE_HOLD = range(4)

#: Regulatory indicated-speed limits at low altitude: name -> (limit [kt], below
#: this altitude MSL [ft]) or None. Text and scope in the module docstring.
SPEED_LIMITS = {"14 CFR 91.117(a)": (250.0, 10000.0), "none": None}


def _impact_pressure(mach, pressure):
    """Subsonic pitot impact pressure ``p [(1 + (g - 1)/2 M^2)^(g/(g - 1)) - 1]`` [Pa].

    ``(1 + x)^a - 1`` is taken as ``expm1(a log1p(x))``: exact down to walking speeds.
    """
    g = GAMMA_AIR
    return pressure * np.expm1(g / (g - 1.0) * np.log1p(0.5 * (g - 1.0) * mach**2))


def _mach_of_impact_pressure(impact_pressure, pressure):
    """Mach number of an impact pressure at a static pressure (inverse of the above)."""
    g = GAMMA_AIR
    return np.sqrt(
        2.0 / (g - 1.0) * np.expm1((g - 1.0) / g * np.log1p(impact_pressure / pressure))
    )


def _speed_of_sound(temperature):
    """``sqrt(gamma R T)`` with the ICAO gas constant [m/s]."""
    return np.sqrt(GAMMA_AIR * _R_ICAO * temperature)


def _pitot(speed, sound_in, pressure_in, sound_out, pressure_out, *, local):
    """Return the speed giving the same pitot impact pressure in other air (NaN from M 1).

    ``local`` names the side ("in" or "out") in the air itself, whose Mach number
    must stay below 1 for the subsonic relation to hold.
    """
    v = np.asarray(speed, dtype=float)
    p_in = np.asarray(pressure_in, dtype=float)
    p_out = np.asarray(pressure_out, dtype=float)
    with np.errstate(invalid="ignore", divide="ignore"):
        mach_in = v / sound_in
        mach_out = _mach_of_impact_pressure(_impact_pressure(mach_in, p_in), p_out)
        mach = mach_in if local == "in" else mach_out
        ok = (v >= 0.0) & (mach < 1.0) & (p_in > 0.0) & (p_out > 0.0) & (sound_in > 0.0)
        return np.where(ok & (sound_out > 0.0), mach_out * sound_out, np.nan)


def true_airspeed_from_calibrated(calibrated_airspeed, pressure, temperature):
    """Convert a calibrated airspeed into true airspeed in air of a given pressure and temperature.

    Subsonic isentropic pitot relations (St. Venant): the impact pressure of the
    calibrated airspeed at sea level in the standard atmosphere,

    ``q_c = p0 [(1 + (gamma - 1)/2 (V_c / a0)^2)^(gamma/(gamma - 1)) - 1]``,

    read at the local static pressure gives the Mach number

    ``M = sqrt(2/(gamma - 1) [(q_c / p + 1)^((gamma - 1)/gamma) - 1])``

    and ``V_t = M sqrt(gamma R T)``.

    Parameters
    ----------
    calibrated_airspeed : array_like
        Calibrated (indicated) airspeed. [m s-1]
    pressure, temperature : array_like
        Static pressure [Pa] and temperature [K] of the air.

    Returns
    -------
    numpy.ndarray
        True airspeed [m s-1]; NaN at and above Mach 1 (the subsonic pitot
        relation no longer holds) and for negative or missing input.

    References
    ----------
    ICAO Doc 7488, Manual of the ICAO Standard Atmosphere (p0, a0); the isentropic
    pitot relations of any gas-dynamics text (e.g. Anderson, J. D., Introduction to
    Flight, ch. 3).

    Examples
    --------
    >>> kt = 1852.0 / 3600.0
    >>> round(float(true_airspeed_from_calibrated(250 * kt, 69681.7, 268.34)) / kt, 1)
    288.7
    """
    t = np.asarray(temperature, dtype=float)
    return _pitot(calibrated_airspeed, A0_STD, P0_STD, _speed_of_sound(t), pressure, local="out")


def calibrated_airspeed_from_true(true_airspeed, pressure, temperature):
    """Convert a true airspeed into calibrated airspeed (inverse of the function above).

    Returns NaN at and above Mach 1.

    Examples
    --------
    >>> kt = 1852.0 / 3600.0
    >>> round(float(calibrated_airspeed_from_true(288.68 * kt, 69681.7, 268.34)) / kt, 1)
    250.0
    """
    t = np.asarray(temperature, dtype=float)
    return _pitot(true_airspeed, _speed_of_sound(t), pressure, A0_STD, P0_STD, local="in")


@dataclass(frozen=True)
class SpeedSchedule:
    """An airframe's airspeeds by phase of flight, and the limit that applies to it.

    Speeds in knots; ``None`` where the airframe flies its cruise true airspeed in
    that phase. Every phase's true airspeed is capped at the cruise true airspeed
    (above the crossover altitude jets fly a Mach number that keeps their true
    airspeed near cruise; the cap stands for it) and, below the limit's altitude,
    at the true airspeed of the regulatory indicated-speed limit.
    """

    cruise_tas_kt: float
    """Cruise true airspeed. [kt]"""
    level_ias_kt: float | None = None
    """Highest indicated airspeed flown level below the cruise altitude (None: cruise TAS). [kt]"""
    climb_ias_kt: float | None = None
    """Indicated airspeed in the climb. [kt]"""
    descent_ias_kt: float | None = None
    """Indicated airspeed in the descent. [kt]"""
    holding_ias_kt: float | None = None
    """Indicated airspeed in a hold (0 for a hovering rotorcraft). [kt]"""
    speed_limit: str = "none"
    """Name of the regulatory indicated-speed limit applied, a key of ``SPEED_LIMITS``."""

    def __post_init__(self):
        if self.speed_limit not in SPEED_LIMITS:
            raise ValueError(
                f"unknown speed limit {self.speed_limit!r}; expected one of "
                f"{', '.join(SPEED_LIMITS)}"
            )

    def true_airspeed(self, phase, pressure, temperature, altitude_msl):
        """Return the true airspeed [m/s] flown in ``phase`` (``PHASE_*`` codes) in the given air.

        Parameters
        ----------
        phase : array_like of int
            ``PHASE_LEVEL``, ``PHASE_CLIMB``, ``PHASE_DESCENT`` or ``PHASE_HOLD``.
        pressure, temperature : array_like
            Static pressure [Pa] and temperature [K] (the forecast's).
        altitude_msl : array_like
            Altitude above mean sea level, for the low-altitude limit. [m]

        Returns
        -------
        numpy.ndarray
            True airspeed [m s-1]; NaN where the air is unknown and an indicated
            speed had to be converted.

        Examples
        --------
        >>> s = SpeedSchedule(440.0, level_ias_kt=290.0, speed_limit="14 CFR 91.117(a)")
        >>> kt = 1852.0 / 3600.0
        >>> v = s.true_airspeed(PHASE_LEVEL, [79500.0, 23800.0], [263.15, 218.0],
        ...                     [2000.0, 10700.0])
        >>> [round(float(x) / kt) for x in v]
        [268, 440]
        """
        ph = np.asarray(phase)
        p = np.asarray(pressure, dtype=float)
        t = np.asarray(temperature, dtype=float)
        z = np.asarray(altitude_msl, dtype=float)
        ph, p, t, z = np.broadcast_arrays(ph, p, t, z)
        cruise = self.cruise_tas_kt * KT
        tas = np.full(p.shape, cruise)
        for code, ias in (
            (PHASE_LEVEL, self.level_ias_kt),
            (PHASE_CLIMB, self.climb_ias_kt),
            (PHASE_DESCENT, self.descent_ias_kt),
            (PHASE_HOLD, self.holding_ias_kt),
        ):
            if ias is None:
                continue
            at = ph == code
            if at.any():
                v = true_airspeed_from_calibrated(ias * KT, p[at], t[at])
                tas[at] = np.minimum(v, cruise)
        limit = SPEED_LIMITS[self.speed_limit]
        if limit is not None:
            with np.errstate(invalid="ignore"):
                low = z < limit[1] * FT
            if low.any():
                cap = true_airspeed_from_calibrated(limit[0] * KT, p[low], t[low])
                tas[low] = np.minimum(tas[low], cap)
        return tas

    def describe(self) -> dict:
        """JSON-able dict of the schedule."""
        limit = SPEED_LIMITS[self.speed_limit]
        return {
            "cruise_tas_kt": self.cruise_tas_kt,
            "level_ias_kt": self.level_ias_kt,
            "climb_ias_kt": self.climb_ias_kt,
            "descent_ias_kt": self.descent_ias_kt,
            "holding_ias_kt": self.holding_ias_kt,
            "speed_limit": self.speed_limit,
            "speed_limit_text": None
            if limit is None
            else f"{limit[0]:g} kt indicated below {limit[1]:g} ft MSL",
            "indicated_equals_calibrated": True,
        }
