"""Airframes and their collectors: presets and user files (TOML).

An airframe is a set of *collectors*: the parts that catch supercooled water
and whose ice matters (wing and tail leading edges, rotor and propeller blade
sections, struts, arms, probes). Each is modelled as a circular cylinder
across the flow (:mod:`icing.collection`):

* ``cylinder``: ``diameter_m`` (struts, antennas, probes, wires, small-UAS arms).
* ``airfoil``: ``chord_m``, ``thickness_ratio``; the equivalent cylinder has the
  airfoil's leading-edge radius, ``D = 2 r_LE`` with ``r_LE = 1.1019 t^2 c``
  (NACA 4-digit sections; Abbott & von Doenhoff 1959, sec. 6.4). This
  equivalence suits the stagnation-line quantities (``beta0``, heat transfer,
  local thickness); a slender cylinder catches relatively more than the
  airfoil does around its leading edge, so the total catch ``E LWC V D`` is an
  over-estimate (conservative). An optional ``catch_factor`` (default 1)
  scales the total catch where a better figure is known for the section.
* ``rotor``: a propeller or rotor blade section, ``chord_m``,
  ``thickness_ratio``, ``section_radius_m``, ``rpm``; the same equivalent
  cylinder, meeting the air at ``sqrt((omega r)^2 + V^2)`` (rotation plus
  airspeed; a hovering multirotor has ~0 airspeed but fast blades).

A collector may carry its own ``protection`` (else the airframe's
``ice_protection``), its own ``ice_tolerance_mm``, and ``critical = false`` when
its ice does not threaten the flight (it is reported but does not set severity).

A user file (TOML)::

    name = "survey-drone"
    true_airspeed_kt = 30
    ice_tolerance_mm = 1.0
    ceiling_ft = 12000          # optional
    ice_protection = "none"     # optional: none | de-ice | anti-ice
    reference = "prop"          # optional: the collector that sets severity
    [speeds]                    # optional: indicated airspeeds by phase of flight
    climb_ias_kt = 25           # (level_ias_kt, descent_ias_kt, holding_ias_kt too)
    holding_ias_kt = 0          # a hover
    speed_limit = "none"        # or "14 CFR 91.117(a)": 250 kt indicated below 10,000 ft
    [[collectors]]
    name = "prop"
    shape = "rotor"
    chord_m = 0.03
    thickness_ratio = 0.1
    section_radius_m = 0.12
    rpm = 5000
"""

from __future__ import annotations

import math
import tomllib
from importlib import resources
from pathlib import Path

from icing.calc.airspeed import SPEED_LIMITS, SpeedSchedule
from icing.calc.collector import (
    LEADING_EDGE_RADIUS_FACTOR,
    PROTECTIONS,
    SHAPES,
    Airframe,
    Collector,
)
from icing.errors import AirframeError

__all__ = [
    "SHAPES",
    "PROTECTIONS",
    "LEADING_EDGE_RADIUS_FACTOR",
    "Collector",
    "Airframe",
    "load_airframe",
    "list_airframes",
    "airframe_from_dict",
    "format_airframes",
    "airframes_to_json",
    "PLAUSIBLE",
]

_OPTIONAL_COLLECTOR = ("protection", "critical", "ice_tolerance_mm", "catch_factor", "description")
_AIRFRAME_KEYS = (
    "name",
    "description",
    "true_airspeed_kt",
    "ceiling_ft",
    "ice_protection",
    "ice_tolerance_mm",
    "collectors",
    "reference",
    "min_altitude_ft",
    "max_altitude_agl_ft",
    "speeds",
)
_SPEED_KEYS = ("level_ias_kt", "climb_ias_kt", "descent_ias_kt", "holding_ias_kt", "speed_limit")


#: Plausible ranges of an airframe's numbers, key -> (low, high, reason); a value
#: outside is refused naming the likely slip (:func:`_check_plausible`).
PLAUSIBLE = {
    # AIRSPEED_RANGE_KT of the routes: below 1 kt nothing moves between waypoints;
    # above 700 kt an aircraft is supersonic wherever icing occurs (ICAO standard atmosphere)
    "true_airspeed_kt": (1.0, 700.0, "cruise true airspeed in knots"),
    # wires and thin probes (~1 mm) to engine-inlet lips and fuselage noses (~5 m)
    "diameter_m": (0.0005, 5.0, "a collector's diameter in metres"),
    # small-drone propellers (~1 cm) to the root chord of the largest wings (~18 m)
    "chord_m": (0.01, 20.0, "a section's chord in metres"),
    # the thinnest blade sections (~2 %) to the thickest airfoils in service (~40 %)
    "thickness_ratio": (0.02, 0.40, "thickness over chord as a fraction"),
    # a small drone's propeller (~2 cm) to the largest helicopter rotors (~17 m)
    "section_radius_m": (0.02, 20.0, "the section's radius in metres"),
    # large helicopter rotors (~100 rpm) to small-drone propellers (~30,000 rpm)
    "rpm": (50.0, 60000.0, "revolutions per minute"),
    # a planning figure: a tenth of a millimetre (drone blades) to 100 mm (ice shapes)
    "ice_tolerance_mm": (0.1, 100.0, "ice thickness in millimetres"),
    "ceiling_ft": (100.0, 65600.0, "feet (65,600 ft = 20 km, above any icing)"),
    "min_altitude_ft": (-1000.0, 65600.0, "feet"),
    "max_altitude_agl_ft": (10.0, 20000.0, "feet above the ground"),
    # the section speed of a rotor, sqrt((omega r)^2): faster than sound (~340 m/s)
    # is no propeller or rotor in service (tips stay below about Mach 0.9)
    "section_speed_m_s": (0.0, 340.0, "omega r of the rotor section, from rpm and radius"),
}
_SLIPS = {  # key -> (factor, slip): the value times factor in range names the slip
    "diameter_m": (1e-3, "millimetres given as metres?"),
    "chord_m": (1e-3, "millimetres given as metres?"),
    "section_radius_m": (1e-3, "millimetres given as metres?"),
    "thickness_ratio": (1e-2, "a percentage given as a fraction? (12 % is 0.12)"),
    "ice_tolerance_mm": (1e-3, "micrometres given as millimetres?"),
    "ceiling_ft": (100.0, "a flight level given as feet? (FL100 = 10,000 ft)"),
    "true_airspeed_kt": (1 / 1.852, "km/h given as knots?"),
}


def _check_plausible(key, value, path, where):
    """Refuse a number outside :data:`PLAUSIBLE` in one line naming the likely slip."""
    if key not in PLAUSIBLE:
        return value
    low, high, what = PLAUSIBLE[key]
    if low <= value <= high:
        return value
    factor, slip = _SLIPS.get(key, (None, "check the value and its unit"))
    if factor is None or not low <= value * factor <= high:
        slip = "check the value and its unit" if value else "zero is not a usable value"
    raise AirframeError(
        f"{key!r} {value:g} is outside {low:g}..{high:g} ({what}); {slip}",
        path=path,
        where=where,
        fix=f"give {key} as {what}, within {low:g}..{high:g}",
    )


def _number(table, key, path, where, *, positive=True, required=True, default=None):
    if key not in table:
        if required:
            raise AirframeError(
                f"missing key {key!r}", path=path, where=where, fix=f"add {key} = <number>"
            )
        return default
    v = table[key]
    if isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(v):
        raise AirframeError(
            f"{key!r} must be a number, got {v!r}",
            path=path,
            where=where,
            fix=f"write {key} = <number>",
        )
    if positive and v <= 0:
        raise AirframeError(
            f"{key!r} must be positive, got {v!r}",
            path=path,
            where=where,
            fix=f"give a positive {key}",
        )
    return _check_plausible(key, float(v), path, where)


def _refuse_unknown_keys(table, allowed, path, where):
    unknown = sorted(set(table) - set(allowed))
    if unknown:
        raise AirframeError(
            f"unknown key {unknown[0]!r}",
            path=path,
            where=where,
            fix=f"use only {', '.join(allowed)}",
        )


def _protection(value, path, where, key):
    if value not in PROTECTIONS:
        raise AirframeError(
            f"{key!r} must be one of {', '.join(PROTECTIONS)}, got {value!r}",
            path=path,
            where=where,
            fix=f'write {key} = "none"',
        )
    return value


def _collector_from_dict(t, path, where):
    if not isinstance(t, dict):
        raise AirframeError(
            "a collector must be a table",
            path=path,
            where=where,
            fix="write each collector as a [[collectors]] table",
        )
    if "name" not in t or not isinstance(t["name"], str) or not t["name"]:
        raise AirframeError(
            "missing key 'name'", path=path, where=where, fix='add name = "<collector name>"'
        )
    where = f"{where} ({t['name']})"
    shape = t.get("shape")
    if shape is None:
        raise AirframeError(
            "missing key 'shape'",
            path=path,
            where=where,
            fix=f"add shape = one of {', '.join(SHAPES)}",
        )
    if shape not in SHAPES:
        raise AirframeError(
            f"unknown shape {shape!r}",
            path=path,
            where=where,
            fix=f"use shape = one of {', '.join(SHAPES)}",
        )
    allowed = set(SHAPES[shape]) | set(_OPTIONAL_COLLECTOR) | {"name", "shape"}
    unknown = sorted(set(t) - allowed)
    if unknown:
        raise AirframeError(
            f"unknown key {unknown[0]!r} for shape {shape!r}",
            path=path,
            where=where,
            fix=f"use only {', '.join(sorted(allowed))}",
        )
    kw = {k: _number(t, k, path, where) for k in SHAPES[shape]}
    if shape == "rotor":
        omega_r = 2.0 * math.pi * kw["rpm"] / 60.0 * kw["section_radius_m"]
        _check_plausible("section_speed_m_s", omega_r, path, where)
    if shape != "cylinder" and not kw["thickness_ratio"] < 1.0:
        raise AirframeError(
            f"'thickness_ratio' must be below 1, got {kw['thickness_ratio']}",
            path=path,
            where=where,
            fix="give t/c as a fraction, e.g. 0.12",
        )
    if "protection" in t:
        kw["protection"] = _protection(t["protection"], path, where, "protection")
    if "critical" in t:
        if not isinstance(t["critical"], bool):
            raise AirframeError(
                "'critical' must be true or false",
                path=path,
                where=where,
                fix="write critical = true",
            )
        kw["critical"] = t["critical"]
    if "ice_tolerance_mm" in t:
        kw["ice_tolerance_mm"] = _number(t, "ice_tolerance_mm", path, where)
    if "catch_factor" in t:
        kw["catch_factor"] = _number(t, "catch_factor", path, where)
        if kw["catch_factor"] > 1.0:
            raise AirframeError(
                "'catch_factor' must be at most 1",
                path=path,
                where=where,
                fix="give a factor in (0, 1]",
            )
    if "description" in t:
        kw["description"] = str(t["description"])
    return Collector(name=t["name"], shape=shape, **kw)


def airframe_from_dict(table: dict, *, path=None, source=None) -> Airframe:
    """Build an :class:`Airframe` from a parsed TOML table, checking every key.

    Raises
    ------
    icing.errors.AirframeError
        A missing, unknown or invalid key; the message names it and the fix.
    """
    where0 = "airframe"
    if not isinstance(table, dict):
        raise AirframeError(
            "an airframe must be a table",
            path=path,
            where=where0,
            fix="write the airframe keys at the top of the file",
        )
    name = table.get("name")
    if not isinstance(name, str) or not name:
        raise AirframeError(
            "missing key 'name'", path=path, where=where0, fix='add name = "<airframe name>"'
        )
    where = f"airframe {name!r}"
    _refuse_unknown_keys(table, _AIRFRAME_KEYS, path, where)
    tas = _number(table, "true_airspeed_kt", path, where, positive=False)
    if tas < 0:
        raise AirframeError(
            f"'true_airspeed_kt' must be >= 0, got {tas}",
            path=path,
            where=where,
            fix="give the cruise true airspeed in knots",
        )
    tol = _number(table, "ice_tolerance_mm", path, where)
    ceiling = _number(table, "ceiling_ft", path, where, required=False)
    prot = _protection(table.get("ice_protection", "none"), path, where, "ice_protection")
    collectors, ref = _collectors_and_reference(table, path, where)
    return Airframe(
        name=name,
        description=str(table.get("description", "")),
        true_airspeed_kt=tas,
        ceiling_ft=ceiling,
        ice_protection=prot,
        ice_tolerance_mm=tol,
        collectors=collectors,
        reference=ref,
        min_altitude_ft=_number(
            table, "min_altitude_ft", path, where, positive=False, required=False
        ),
        max_altitude_agl_ft=_number(table, "max_altitude_agl_ft", path, where, required=False),
        source=source or "preset",
        speeds=_speeds_from_dict(table.get("speeds"), tas, path, where),
    )


def _speeds_from_dict(t, cruise_tas_kt, path, where):
    """Check the optional ``[speeds]`` table; return a SpeedSchedule or None."""
    if t is None:
        return None
    where = f"{where} speeds"
    if not isinstance(t, dict):
        raise AirframeError(
            "'speeds' must be a table",
            path=path,
            where=where,
            fix="write the speeds as a [speeds] table (climb_ias_kt = 90, ...)",
        )
    _refuse_unknown_keys(t, _SPEED_KEYS, path, where)
    limit = t.get("speed_limit", "none")
    if limit not in SPEED_LIMITS:
        raise AirframeError(
            f"'speed_limit' must be one of {', '.join(map(repr, SPEED_LIMITS))}, got {limit!r}",
            path=path,
            where=where,
            fix='write speed_limit = "14 CFR 91.117(a)" or "none"',
        )
    kw = {
        k: _number(t, k, path, where, positive=False, required=False)
        for k in _SPEED_KEYS
        if k != "speed_limit"
    }
    for k, v in kw.items():
        if v is not None and v < 0:
            raise AirframeError(
                f"{k!r} must be >= 0, got {v}",
                path=path,
                where=where,
                fix=f"give {k} as an indicated airspeed in knots",
            )
    return SpeedSchedule(cruise_tas_kt=cruise_tas_kt, speed_limit=limit, **kw)


def _collectors_and_reference(table, path, where):
    """Check the airframe's collectors one by one; return them and the reference's name."""
    cols = table.get("collectors")
    if not cols:
        raise AirframeError(
            "missing key 'collectors'",
            path=path,
            where=where,
            fix="add at least one [[collectors]] table with name and shape",
        )
    if not isinstance(cols, list):
        raise AirframeError(
            "'collectors' must be an array of tables",
            path=path,
            where=where,
            fix="write each collector as a [[collectors]] table",
        )
    collectors = tuple(
        _collector_from_dict(c, path, f"collectors[{i}]") for i, c in enumerate(cols)
    )
    names = [c.name for c in collectors]
    dup = sorted({n for n in names if names.count(n) > 1})
    if dup:
        raise AirframeError(
            f"duplicate collector name {dup[0]!r}",
            path=path,
            where=where,
            fix="give every collector its own name",
        )
    if not any(c.critical for c in collectors):
        raise AirframeError(
            "no collector is critical",
            path=path,
            where=where,
            fix="set critical = true on the collector that sets severity",
        )
    ref = table.get("reference", names[0])
    if ref not in names:
        raise AirframeError(
            f"'reference' names no collector: {ref!r}",
            path=path,
            where=where,
            fix=f"use one of {', '.join(names)}",
        )
    if not collectors[names.index(ref)].critical:
        raise AirframeError(
            f"the reference collector {ref!r} is not critical",
            path=path,
            where=where,
            fix="name a critical collector as reference",
        )
    return collectors, ref


def _read_toml(path):
    try:
        with open(path, "rb") as fh:
            return tomllib.load(fh)
    except tomllib.TOMLDecodeError as exc:
        raise AirframeError(
            f"not valid TOML ({exc})",
            path=path,
            where=None,
            fix="check the quoting and brackets near the named line",
        ) from None
    except UnicodeDecodeError as exc:
        raise AirframeError(
            f"not a UTF-8 text file (byte {exc.start})",
            path=path,
            where=None,
            fix="save the airframe file as UTF-8 (TOML files are UTF-8)",
        ) from None
    except OSError as exc:
        raise AirframeError(
            f"cannot read the file ({exc.strerror})",
            path=path,
            where=None,
            fix="give an existing airframe file or a preset name",
        ) from None


_PRESETS: dict | None = None


def _presets() -> dict:
    global _PRESETS
    if _PRESETS is None:
        ref = resources.files("icing").joinpath("data/airframes.toml")
        with ref.open("rb") as fh:
            data = tomllib.load(fh)
        _PRESETS = {}
        for t in data.get("airframes", []):
            a = airframe_from_dict(t, path="icing/data/airframes.toml", source="preset")
            _PRESETS[a.name] = a
    return _PRESETS


def list_airframes() -> list[Airframe]:
    """Return the preset airframes, in the order of ``icing/data/airframes.toml``.

    Examples
    --------
    >>> "light-piston" in [a.name for a in list_airframes()]
    True
    """
    return list(_presets().values())


def load_airframe(name_or_path) -> Airframe:
    """Load a preset by name, or an airframe from a TOML file.

    Parameters
    ----------
    name_or_path : str or os.PathLike or Airframe
        A preset name (:func:`list_airframes`) or the path of a ``.toml`` file.
        An :class:`Airframe` is returned unchanged.

    Raises
    ------
    icing.errors.AirframeError
        Unknown preset, unreadable or malformed file (the message names the key
        and the fix).

    Examples
    --------
    >>> load_airframe("twin-turboprop").ice_protection
    'de-ice'
    """
    if isinstance(name_or_path, Airframe):
        return name_or_path
    presets = _presets()
    s = str(name_or_path)
    if s in presets:
        return presets[s]
    p = Path(s)
    if p.suffix.lower() == ".toml" or p.exists():
        table = _read_toml(p)
        if "airframes" in table and "name" not in table:  # the preset file's layout
            frames = table["airframes"]
            if not isinstance(frames, list) or len(frames) != 1:
                names = (
                    [f.get("name", "?") for f in frames if isinstance(f, dict)]
                    if isinstance(frames, list)
                    else []
                )
                raise AirframeError(
                    f"the file holds {len(names)} [[airframes]] tables ({', '.join(names)})",
                    path=str(p),
                    where="airframes",
                    fix="keep one airframe per file (or its keys at the top level)",
                )
            table = frames[0]
        return airframe_from_dict(table, path=str(p), source=str(p))
    raise AirframeError(
        f"unknown airframe {s!r}",
        path=None,
        where="airframe",
        fix=f"use a preset ({', '.join(presets)}) or a .toml airframe file",
    )


def airframes_to_json(airframes) -> list[dict]:
    """Return the airframes as JSON-able dicts (:meth:`Airframe.describe`)."""
    return [a.describe() for a in airframes]


def format_airframes(airframes) -> str:
    """Return a plain-text table of airframes and their collectors.

    Examples
    --------
    >>> print(format_airframes(list_airframes()[:1]).splitlines()[0].split()[0])
    airframe
    """
    head = (
        f"{'airframe':<18} {'TAS kt':>6} {'ceiling ft':>10} {'protection':<10} "
        f"{'tol mm':>6}  collectors (equivalent diameter mm, speed m/s at cruise)"
    )
    lines = [head, "-" * len(head)]
    for a in airframes:
        parts = []
        for c in a.collectors:
            mark = "*" if c.name == a.reference else ""
            prot = c.protection or a.ice_protection
            parts.append(
                f"{mark}{c.name} [{c.shape}, D {c.diameter * 1e3:.1f}, "
                f"{float(c.speed(a.cruise_tas)):.0f}, {prot}"
                f"{'' if c.critical else ', non-critical'}]"
            )
        ceiling = "-" if a.ceiling_ft is None else f"{a.ceiling_ft:.0f}"
        lines.append(
            f"{a.name:<18} {a.true_airspeed_kt:>6.0f} {ceiling:>10} "
            f"{a.ice_protection:<10} {a.ice_tolerance_mm:>6.1f}  {parts[0]}"
        )
        lines.extend(" " * 57 + p for p in parts[1:])
    lines.append("* reference collector")
    return "\n".join(lines)
