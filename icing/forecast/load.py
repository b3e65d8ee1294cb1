"""Read forecast files of any supported format into one :class:`Forecast`.

Files are told apart by their content (magic bytes, then the start of the
text), never by name alone: the file name is a last resort for text files
that say nothing about themselves. Each format is a :class:`Reader` in
:data:`READERS`, tried in order; gridded readers yield a
:class:`~icing.forecast.dataset.GridSource`, profile readers a
:class:`~icing.forecast.table.ProfileTable`.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from importlib import resources
from pathlib import Path

from icing.errors import ForecastError
from icing.forecast.columns import Forecast
from icing.forecast.dataset import split_members
from icing.forecast.ensemble import EnsembleForecast, EnsembleMember, member_label_of_files
from icing.forecast.grib import read_grib_forecast
from icing.forecast.grid import GridForecast
from icing.forecast.membergrid import MemberGridForecast
from icing.forecast.netcdf import read_netcdf_forecast
from icing.forecast.points import ProfileForecast
from icing.forecast.profiles import read_profiles_csv, read_profiles_json
from icing.forecast.soundings import check_site_used, read_sounding, sounding_format
from icing.forecast.table import ProfileTable

__all__ = [
    "Reader",
    "READERS",
    "load_forecast",
    "load_ensemble",
    "demo_forecast_path",
    "recognise",
    "MAX_MEMBERS",
]

#: The most members of one ensemble: above the 51 of the largest operational global
#: ensembles with room for multi-model sets; each member is diagnosed along the route.
MAX_MEMBERS = 200

_HEAD = 4096  # bytes a reader may look at to recognise its format


@dataclass(frozen=True)
class Reader:
    """One forecast format: how to recognise it by content and how to read it."""

    name: str
    """Short name of the format (in messages and the provenance)."""
    kind: str
    """"grid" (yields a GridSource) or "profiles" (yields a ProfileTable)."""
    recognise: Callable
    """``recognise(head: bytes, path: Path) -> bool`` from the first bytes of the file."""
    read: Callable
    """``read(path, **options)`` -> GridSource or ProfileTable."""
    suffixes: tuple = ()
    """File name endings tried as a last resort, when no reader knows the content."""


def _is_netcdf(head, path):
    return head[:4] in (b"CDF\x01", b"CDF\x02", b"CDF\x05") or head[:8] == b"\x89HDF\r\n\x1a\n"


def _is_grib(head, path):
    """GRIB1 or GRIB2: "GRIB" at the start (or after a short header), an edition byte 1 or 2."""
    at = head.find(b"GRIB", 0, 1024)
    return at >= 0 and len(head) > at + 7 and head[at + 7] in (1, 2)


def _is_json(head, path):
    return head.lstrip(b"\xef\xbb\xbf \t\r\n")[:1] in (b"{", b"[")


def _is_profile_csv(head, path):
    return b"," in head[:1024]


def _read_grib(path, *, var_map=None, member=None, rh_convention=None):
    return read_grib_forecast(path, var_map=var_map, member=member, rh_convention=rh_convention)


def _read_netcdf(path, *, var_map=None, member=None, rh_convention=None):
    return read_netcdf_forecast(path, var_map=var_map, member=member, rh_convention=rh_convention)


def _is_sounding(head, path):
    """Radiosonde files by content (Wyoming text and CSV, IGRA2, CF profile NetCDF)."""
    return sounding_format(path) is not None


def _read_sounding(path, *, site=None, **_options):
    return read_sounding(path, site=site)


def _read_json(path, *, var_map=None, **_options):
    return read_profiles_json(path)


def _read_csv(path, *, var_map=None, **_options):
    return read_profiles_csv(path)


#: The readers, tried in order on the first bytes of each file.
READERS = [
    # Soundings first: CF profile NetCDF shares NetCDF's magic bytes, and the Wyoming
    # CSV would otherwise pass for a profile CSV.
    Reader("radiosonde sounding", "profiles", _is_sounding, _read_sounding),
    Reader("NetCDF", "grid", _is_netcdf, _read_netcdf, (".nc", ".nc4", ".cdf")),
    Reader("GRIB", "grid", _is_grib, _read_grib, (".grib", ".grb", ".grib2", ".grb2")),
    Reader("profile JSON", "profiles", _is_json, _read_json, (".json",)),
    Reader("profile CSV", "profiles", _is_profile_csv, _read_csv, (".csv",)),
]


def recognise(path: Path) -> Reader | None:
    """Return the reader of a file by its content (None when no reader knows it)."""
    with open(path, "rb") as fh:
        head = fh.read(_HEAD)
    for reader in READERS:
        if reader.recognise(head, path):
            return reader
    suffix = path.suffix.lower()
    return next((r for r in READERS if suffix in r.suffixes), None)


def demo_forecast_path() -> Path:
    """Path of the bundled demo forecast (Skerrow Basin, CF-NetCDF lat-lon)."""
    return Path(str(resources.files("icing") / "data" / "demo" / "skerrow-demo.nc"))


def _check_options(radius_km, time_tolerance_h):
    if not (radius_km > 0):
        raise ForecastError(
            f"radius {radius_km} km is not positive",
            where="radius_km",
            fix="give a positive radius",
        )
    if not (time_tolerance_h >= 0):
        raise ForecastError(
            f"time tolerance {time_tolerance_h} h is negative",
            where="time_tolerance_h",
            fix="give 0 or more hours",
        )


def _readers_of(paths):
    readers = []
    for p in paths:
        if not p.exists():
            raise ForecastError("file not found", path=p, fix="check the path")
        if p.is_dir():
            raise ForecastError("is a directory", path=p, fix="give the forecast file(s) in it")
        reader = recognise(p)
        if reader is None:
            raise ForecastError(
                "unknown forecast format",
                path=p,
                fix="give GRIB1/GRIB2, CF or data-service NetCDF, WRF output, a profile "
                "JSON or CSV file, or a radiosonde sounding (University of Wyoming text or "
                "CSV, IGRA2)",
            )
        readers.append(reader)
    kinds = [r.kind for r in readers]
    if "grid" in kinds and "profiles" in kinds:
        raise ForecastError(
            "gridded and profile files mixed in one forecast",
            path=paths[kinds.index("grid")],
            fix="screen against either gridded files or profile files",
        )
    return readers


def load_forecast(
    paths,
    *,
    radius_km=50.0,
    time_tolerance_h=3.0,
    var_map=None,
    member=None,
    rh_convention=None,
    sounding_site=None,
    ensemble=False,
) -> Forecast:
    """Read one or several forecast files into one :class:`Forecast`.

    Parameters
    ----------
    paths : path-like or list of path-like
        GRIB1/GRIB2, CF or data-service NetCDF, WRF output, profile JSON
        (``"format": "icing-profiles"``), profile CSV, or radiosonde soundings
        (University of Wyoming text or CSV, IGRA2, CF profile NetCDF), told apart by
        content.
        Several files (lead times) form one forecast: grids must share one
        grid and levels, valid times must not repeat.
    radius_km : float
        Profile files: profiles within this geodesic distance of a sample are
        its candidates; beyond it the sample is a coverage gap. [km]
    time_tolerance_h : float
        How far before the first / after the last valid time a sample may lie
        and still use that time (a single-time analysis is used within it). [h]
    var_map : dict, optional
        Gridded files: ``{key: variable name}`` (keys: ``VAR_KEYS``). A
        mapped name is used first; unmapped keys are found by CF
        ``standard_name``, then by GRIB parameter, then by names and long names.
    member : int, optional
        The ensemble member to read from a file with several (GRIB ``number``,
        NetCDF ``member``/``realization``/``number``). Without it such a file is an
        ensemble: an :class:`~icing.forecast.ensemble.EnsembleForecast` of its members.
    rh_convention : str, optional
        What the files' relative humidity is relative to, when they do not say
        (:data:`icing.forecast.conventions.CONVENTIONS`: water, ifs-mixed, ncep-gfs,
        ice).
    sounding_site : icing.forecast.soundings.SoundingSite, optional
        Radiosonde files: station position, elevation and launch time for files
        that do not give them (``--station``, ``--time``).
    ensemble : bool
        Each item of ``paths`` is one member (a path, or a list of the paths of
        one member's lead times): see :func:`load_ensemble`.

    Returns
    -------
    Forecast
        :class:`GridForecast`, :class:`ProfileForecast`, or an
        :class:`~icing.forecast.ensemble.EnsembleForecast` (``ensemble``, or files
        with a member dimension).

    Raises
    ------
    ForecastError
        A missing, unreadable or inconsistent file, one line naming the file,
        the place and the fix.
    """
    if isinstance(paths, (str, Path)):
        paths = [paths]
    if ensemble:
        return load_ensemble(
            paths,
            radius_km=radius_km,
            time_tolerance_h=time_tolerance_h,
            var_map=var_map,
            member=member,
            rh_convention=rh_convention,
            sounding_site=sounding_site,
        )
    paths = [Path(p) for p in paths]
    if not paths:
        raise ForecastError("no forecast file given", fix="give at least one forecast file")
    _check_options(radius_km, time_tolerance_h)
    readers = _readers_of(paths)
    kinds = ["sounding" if r.read is _read_sounding else r.kind for r in readers]
    check_site_used(sounding_site, kinds, paths)  # --station needs a sounding
    if readers[0].kind == "grid":
        opts = {"var_map": var_map, "member": member, "rh_convention": rh_convention}
        sources = [r.read(p, **opts) for r, p in zip(readers, paths, strict=True)]
        if any(s.member_dim is not None for s in sources):
            return _member_dimension_ensemble(sources, radius_km, time_tolerance_h)
        return GridForecast(sources, radius_km=radius_km, time_tolerance_h=time_tolerance_h)
    for option, value in (
        ("--var", var_map),
        ("--member", member),
        ("--rh-convention", rh_convention),
    ):
        if value:
            raise ForecastError(
                f"{option} applies to gridded files only",
                path=paths[0],
                where=option,
                fix=f"drop {option} for profile files",
            )
    tables = [r.read(p, site=sounding_site) for r, p in zip(readers, paths, strict=True)]
    return ProfileForecast(
        ProfileTable.concatenate(tables), radius_km=radius_km, time_tolerance_h=time_tolerance_h
    )


def _member_dimension_ensemble(sources, radius_km, time_tolerance_h):
    """Return the members of files with a member dimension: one GridForecast per member.

    Every file (lead time) must hold the same members; member i of each file forms
    member i. The members read through one shared tile cache (bounded as one forecast).
    """
    from icing.forecast.tiles import TileCache

    ref = sources[0]
    for s in sources[1:]:
        if s.member_dim is None or tuple(s.members) != tuple(ref.members):
            have = f"members {list(s.members)}" if s.member_dim else "one member"
            raise ForecastError(
                f"{have}, but {ref.path.name} holds members {list(ref.members)}",
                path=s.path,
                fix="give the lead times of one ensemble (the same members in every file), "
                "or pick one member with --member N",
            )
    _check_member_count(len(ref.members), ref.path)
    split = [split_members(s) for s in sources]
    cache = TileCache()
    members = []
    for i, label in enumerate(ref.member_labels):
        grid = GridForecast(
            [parts[i] for parts in split],
            radius_km=radius_km,
            time_tolerance_h=time_tolerance_h,
            cache=cache,
            cache_tag=i,
        )
        members.append(EnsembleMember(str(label), grid))
    joint = MemberGridForecast(sources, radius_km=radius_km, time_tolerance_h=time_tolerance_h)
    return EnsembleForecast(members, origin="member dimension", whole_source=ref, joint=joint)


def _check_member_count(count, path):
    if count > MAX_MEMBERS:
        raise ForecastError(
            f"{count} members, above the limit of {MAX_MEMBERS}",
            path=path,
            fix="screen a subset of the members (one file per member with --ensemble)",
        )


def load_ensemble(members, **options) -> EnsembleForecast:
    """Read several forecasts as the members of one ensemble (``--ensemble``).

    Parameters
    ----------
    members : sequence
        One item per member: a path, or a list of the paths of one member's lead
        times. Members may be different models (grids, levels) or time-lagged runs
        of one model valid at the same times; a file with a member dimension gives
        all its members.
    **options
        As :func:`load_forecast` (radius, tolerance, variable names, ...).

    Returns
    -------
    EnsembleForecast
        Members named after their files; gridded members share one tile cache.

    Raises
    ------
    ForecastError
        Fewer than two members, a file given twice, or a member's own error.
    """
    from icing.forecast.tiles import TileCache

    groups = [[p] if isinstance(p, (str, Path)) else list(p) for p in members]
    seen = {}
    for group in groups:
        for p in group:
            key = Path(p).resolve()
            if key in seen:
                raise ForecastError(
                    "given twice as an ensemble member (one forecast would count twice)",
                    path=p,
                    fix="give each file once",
                )
            seen[key] = True
    out, cache = [], TileCache()
    for group in groups:
        fc = load_forecast(group, **options)
        name = member_label_of_files(group)
        parts = (
            [(f"{name}: {m.label}", m.forecast) for m in fc.members]
            if isinstance(fc, EnsembleForecast)
            else [(name, fc)]
        )
        for label, forecast in parts:
            if isinstance(forecast, GridForecast):
                forecast = forecast.with_cache(cache, len(out))
            out.append(EnsembleMember(label, forecast))
    if len(out) < 2:
        raise ForecastError(
            f"--ensemble with {len(out)} member",
            path=groups[0][0] if groups and groups[0] else None,
            fix="give two or more forecast files as members, or drop --ensemble",
        )
    _check_member_count(len(out), groups[0][0])
    return EnsembleForecast(out, origin="files given as members")
