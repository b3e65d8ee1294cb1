"""Airframes and their collectors: the parts that catch water, as equivalent cylinders.

An airframe is a set of *collectors* (wing and tail leading edges, rotor and
propeller blade sections, struts, arms, probes), each a circular cylinder across
the flow (:mod:`icing.calc.collection`): a ``cylinder`` of its own diameter, an
``airfoil`` as the cylinder of its leading-edge radius, a ``rotor`` section the
same, meeting the air at ``sqrt((omega r)^2 + V^2)``. :mod:`icing.airframes`
reads presets and user files into these objects; :func:`icing.calc.airframe_icing`
runs the collector chain on them.
"""

from __future__ import annotations

import math
from dataclasses import asdict, dataclass

import numpy as np

from icing.calc.airspeed import SpeedSchedule
from icing.constants import FT, KT

__all__ = [
    "SHAPES",
    "PROTECTIONS",
    "LEADING_EDGE_RADIUS_FACTOR",
    "Collector",
    "Airframe",
]

#: Collector shapes and the keys each requires.
SHAPES = {
    "cylinder": ("diameter_m",),
    "airfoil": ("chord_m", "thickness_ratio"),
    "rotor": ("chord_m", "thickness_ratio", "section_radius_m", "rpm"),
}
#: Ice-protection kinds (their effect on severity: :mod:`icing.accretion`).
PROTECTIONS = ("none", "de-ice", "anti-ice")
#: NACA 4-digit leading-edge radius ``r_LE = 1.1019 t^2 c`` (Abbott & von Doenhoff
#: 1959, Theory of Wing Sections, sec. 6.4).
LEADING_EDGE_RADIUS_FACTOR = 1.1019


@dataclass(frozen=True)
class Collector:
    """One part of an airframe that catches water, as an equivalent cylinder.

    Attributes
    ----------
    name : str
    shape : {"cylinder", "airfoil", "rotor"}
    diameter_m : float or None
        Cylinder diameter (``cylinder``). [m]
    chord_m, thickness_ratio : float or None
        Section chord [m] and thickness-to-chord ratio [1] (``airfoil``, ``rotor``).
    section_radius_m, rpm : float or None
        Radius of the blade section [m] and rotation rate [1/min] (``rotor``).
    protection : str or None
        ``"none"``, ``"de-ice"``, ``"anti-ice"``; None: the airframe's.
    critical : bool
        Whether its ice sets the airframe's severity.
    ice_tolerance_mm : float or None
        Its own ice tolerance (None: the airframe's). [mm]
    catch_factor : float
        Multiplies the total catch (1: the equivalent cylinder's). [1]
    description : str
    """

    name: str
    shape: str
    diameter_m: float | None = None
    chord_m: float | None = None
    thickness_ratio: float | None = None
    section_radius_m: float | None = None
    rpm: float | None = None
    protection: str | None = None
    critical: bool = True
    ice_tolerance_mm: float | None = None
    catch_factor: float = 1.0
    description: str = ""

    @property
    def diameter(self) -> float:
        """Equivalent cylinder diameter, ``diameter_m`` or ``2 * 1.1019 t^2 c`` [m]."""
        if self.shape == "cylinder":
            return float(self.diameter_m)
        return 2.0 * LEADING_EDGE_RADIUS_FACTOR * self.thickness_ratio**2 * self.chord_m

    @property
    def rotation_speed(self) -> float:
        """Speed of the section from rotation, ``omega r`` (0 unless a rotor) [m/s]."""
        if self.shape != "rotor":
            return 0.0
        return 2.0 * math.pi * self.rpm / 60.0 * self.section_radius_m

    def speed(self, airspeed):
        """Return the air speed relative to the collector, ``sqrt((omega r)^2 + V^2)`` [m/s]."""
        v = np.asarray(airspeed, dtype=float)
        w = self.rotation_speed
        return np.sqrt(w * w + v * v) if w else v

    def describe(self) -> dict:
        """JSON-able dict of the collector and its equivalent cylinder."""
        d = {k: v for k, v in asdict(self).items() if v is not None and v != ""}
        d["equivalent_diameter_m"] = round(self.diameter, 6)
        if self.shape == "rotor":
            d["rotation_speed_m_s"] = round(self.rotation_speed, 2)
        return d


@dataclass(frozen=True)
class Airframe:
    """An airframe: cruise speed, limits, ice protection, tolerance, collectors.

    Attributes
    ----------
    name, description : str
    true_airspeed_kt : float
        Cruise true airspeed. [kt]
    ceiling_ft : float or None
        Service ceiling. [ft]
    ice_protection : {"none", "de-ice", "anti-ice"}
        Default protection of its collectors.
    ice_tolerance_mm : float
        Ice thickness the airframe tolerates on an unprotected critical
        collector before flight is impaired (a planning figure). [mm]
    collectors : tuple of Collector
    reference : str
        Name of the collector reported where nothing ices and named in summaries
        as the airframe's main surface.
    min_altitude_ft, max_altitude_agl_ft : float or None
        Operating limits (drones: maximum height above ground). [ft]
    source : str
        ``"preset"`` or the file it was read from.
    speeds : SpeedSchedule or None
        Airspeeds by phase of flight and the low-altitude limit that applies
        (None: the cruise true airspeed in every phase, no limit); see
        :attr:`schedule`.
    """

    name: str
    description: str
    true_airspeed_kt: float
    ceiling_ft: float | None
    ice_protection: str
    ice_tolerance_mm: float
    collectors: tuple
    reference: str
    min_altitude_ft: float | None = None
    max_altitude_agl_ft: float | None = None
    source: str = "preset"
    speeds: SpeedSchedule | None = None

    @property
    def schedule(self) -> SpeedSchedule:
        """The speed schedule (cruise true airspeed in every phase when none is given)."""
        if self.speeds is not None:
            return self.speeds
        return SpeedSchedule(cruise_tas_kt=self.true_airspeed_kt)

    @property
    def cruise_tas(self) -> float:
        """Cruise true airspeed [m/s]."""
        return self.true_airspeed_kt * KT

    @property
    def ceiling_m(self) -> float:
        """Service ceiling (NaN if unknown) [m]."""
        return math.nan if self.ceiling_ft is None else self.ceiling_ft * FT

    def collector(self, name: str) -> Collector:
        """Return the collector called ``name``."""
        for c in self.collectors:
            if c.name == name:
                return c
        raise KeyError(name)

    def describe(self) -> dict:
        """JSON-able dict of the airframe and its collectors."""
        d = {
            "name": self.name,
            "description": self.description,
            "true_airspeed_kt": self.true_airspeed_kt,
            "cruise_tas_m_s": round(self.cruise_tas, 2),
            "ceiling_ft": self.ceiling_ft,
            "ice_protection": self.ice_protection,
            "ice_tolerance_mm": self.ice_tolerance_mm,
            "reference": self.reference,
            "collectors": [c.describe() for c in self.collectors],
            "source": self.source,
            "speed_schedule": self.schedule.describe(),
        }
        if self.min_altitude_ft is not None:
            d["min_altitude_ft"] = self.min_altitude_ft
        if self.max_altitude_agl_ft is not None:
            d["max_altitude_agl_ft"] = self.max_altitude_agl_ft
        return d
