"""Column diagnosis: from forecast profiles to cloud, supercooled liquid, droplets and SLD.

:func:`diagnose_columns` takes any number of columns at once, arrays shaped
``(..., level)`` in SI units, and returns a :class:`ColumnDiagnosis` with the
same shape, levels in the caller's order. Internally levels are sorted from
the ground up, columns are flattened and processed in chunks (bounded memory),
and every step is a numpy expression over all columns and levels together.

The steps, with the physics in :mod:`icing.clouds`, :mod:`icing.droplets` and
:mod:`icing.sld`:

1. humidity -> relative humidity over water and specific humidity; heights by
   the hypsometric equation when not given; invalid (NaN) and below-ground
   levels flagged;
2. cloud mask and layers; model liquid ``q_c rho``; diagnosed liquid
   ``f(h) LWC_ad(h)`` from each layer's base; the larger of the two, with its
   ``basis``; no liquid at or below -38 degC;
3. droplet number by Twomey activation at the layer's base with an effective
   updraft (mean ``|w|`` plus a sub-grid part, floored by cloud type), held up
   the layer; MVD of the air mass's gamma spectrum;
4. glaciation likelihood beside the liquid; SLD (not gated by the cloud mask);
   freezing level; Appendix C warnings.
"""

from __future__ import annotations

import mmap
from dataclasses import dataclass, field

import numpy as np

from icing import codes
from icing.calc import clouds, droplets, sld, thermo
from icing.constants import T0, T_HOMOGENEOUS
from icing.errors import InputError

__all__ = ["ColumnOptions", "ColumnDiagnosis", "diagnose_columns"]


@dataclass(frozen=True)
class ColumnOptions:
    """Choices of the column physics; every one is written into the outputs.

    Attributes
    ----------
    air_mass : str or mapping
        CCN spectrum and droplet-spectrum width, a name in
        ``icing.droplets.AIR_MASSES`` or a mapping (``c_per_cm3``, ``k``,
        ``shape``). Default ``"maritime"``: the conservative choice for
        screening -- fewer droplets for the same liquid give a larger MVD,
        higher collection efficiency and more warm-rain drizzle.
    sub_adiabatic_factor_at_base : float
        LWC/LWC_ad at cloud base, 0.77 (Braun et al. 2018, marine stratocumulus).
    sub_adiabatic_scale_height_m : float
        e-folding height of that ratio above base, 1500 m (our choice to follow
        Warner's 1955 fall with height; deep layers stay bounded). [m]
    rh_threshold_model : str
        ``"ice-water-blend"`` (default; see ``icing.clouds.liquid_cloud_rh_threshold``)
        or ``"water-saturation"``.
    rh_threshold_warm : float
        Humidity threshold above 0 degC and cap below, 0.95 (common practice). [1]
    rh_threshold_ice_fraction : float
        Where below 0 degC the threshold sits between ice (0) and water (1)
        saturation, 0.5 (our choice: stays above ice saturation). [1]
    bridge_single_level_gaps : bool
        Close one-level gaps of at least ice-saturated air inside a deck, True
        (conservative: the deck's liquid does not restart above the gap; see
        ``icing.clouds.bridge_single_level_gaps``).
    cloud_fraction_floor : float
        Smallest cloud fraction used to turn grid-mean model cloud water into
        in-cloud water (at most x10), 0.1 (our choice). [1]
    updraft_floor_stratiform_m_s, updraft_floor_convective_m_s : float
        Smallest effective cloud-base updraft for activation, 0.1 and 1.0 m/s
        (typical stratiform and cumulus base updrafts, Rogers & Yau 1989, from
        memory). Low floors are conservative: fewer droplets. [m s-1]
    convective_updraft_m_s : float
        A layer whose largest ``|w|`` reaches this is treated as convective,
        1.0 m/s (common practice, no source). [m s-1]
    subgrid_updraft_m_s : float
        Sub-grid updraft added to the grid-mean ``|w|``, 0.2 m/s (order of the
        turbulent velocity in stratiform cloud, common practice, no source).
    drizzle_time_scale_s : float
        Time the warm-rain process has to make drizzle (passed to
        ``icing.sld.diagnose_sld``), 1800 s (our choice). [s]
    ice_nuclei_model : str
        ``"meyers92"`` (default), ``"fletcher62"`` or ``"demott10"``.
    aerosol_per_cm3 : float
        Aerosol larger than 0.5 um for ``"demott10"``, 1 /cm3 (order of DeMott et
        al. 2010's continental samples, from memory). [cm-3]
    ice_crystal_radius_m, crystal_density_kg_m3 : float
        Size and bulk density of a typical crystal for the glaciation budget,
        50 um and 500 kg/m3 (our choices, from memory of typical sizes). [m], [kg m-3]
    glaciation_residence_time_s : float
        Time the liquid is exposed to the ice in the glaciation budget, 3600 s
        (our choice). [s]
    moist_adiabat_step : float
        Largest integration sub-step of the moist adiabat in ln p, 0.2.
    chunk_columns : int
        Columns diagnosed together, 4,000: bounds the memory, and keeps the
        temporaries (~1 MB each) small enough for the allocator to reuse instead
        of mapping fresh pages (measured 3x fewer page faults than 20,000).
    """

    air_mass: object = "maritime"
    sub_adiabatic_factor_at_base: float = 0.77
    sub_adiabatic_scale_height_m: float = 1500.0
    rh_threshold_model: str = "ice-water-blend"
    rh_threshold_warm: float = 0.95
    rh_threshold_ice_fraction: float = 0.5
    bridge_single_level_gaps: bool = True
    cloud_fraction_floor: float = 0.1
    updraft_floor_stratiform_m_s: float = 0.1
    updraft_floor_convective_m_s: float = 1.0
    convective_updraft_m_s: float = 1.0
    subgrid_updraft_m_s: float = 0.2
    drizzle_time_scale_s: float = 1800.0
    ice_nuclei_model: str = "meyers92"
    aerosol_per_cm3: float = 1.0
    ice_crystal_radius_m: float = 50e-6
    crystal_density_kg_m3: float = 500.0
    glaciation_residence_time_s: float = 3600.0
    moist_adiabat_step: float = 0.2
    chunk_columns: int = 4000

    def __post_init__(self):
        try:
            droplets.air_mass(self.air_mass)
        except ValueError as err:
            raise InputError(
                str(err),
                where="ColumnOptions.air_mass",
                fix="use 'maritime', 'continental' or a mapping with c_per_cm3, k and shape",
            ) from None
        if self.rh_threshold_model not in clouds.RH_THRESHOLD_MODELS:
            raise InputError(
                f"unknown humidity-threshold model {self.rh_threshold_model!r}",
                where="ColumnOptions.rh_threshold_model",
                fix=f"use one of {', '.join(clouds.RH_THRESHOLD_MODELS)}",
            )
        if self.ice_nuclei_model not in ("meyers92", "fletcher62", "demott10"):
            raise InputError(
                f"unknown ice-nucleus model {self.ice_nuclei_model!r}",
                where="ColumnOptions.ice_nuclei_model",
                fix="use meyers92, fletcher62 or demott10",
            )
        if not 0.0 < self.cloud_fraction_floor <= 1.0:
            raise InputError(
                f"cloud_fraction_floor must be in (0, 1], got {self.cloud_fraction_floor!r}",
                where="ColumnOptions.cloud_fraction_floor",
                fix="use e.g. 0.1",
            )
        positive = (
            "updraft_floor_stratiform_m_s",
            "updraft_floor_convective_m_s",
            "sub_adiabatic_scale_height_m",
            "drizzle_time_scale_s",
            "aerosol_per_cm3",
            "ice_crystal_radius_m",
            "crystal_density_kg_m3",
            "glaciation_residence_time_s",
            "moist_adiabat_step",
            "chunk_columns",
        )
        if not self.subgrid_updraft_m_s >= 0:
            raise InputError(
                f"subgrid_updraft_m_s must be at least 0, got {self.subgrid_updraft_m_s!r}",
                where="ColumnOptions.subgrid_updraft_m_s",
                fix="use e.g. 0.2",
            )
        for name in positive:
            if not getattr(self, name) > 0:
                raise InputError(
                    f"{name} must be positive, got {getattr(self, name)!r}",
                    where=f"ColumnOptions.{name}",
                    fix="give a positive value",
                )

    def describe(self) -> dict:
        """Return the assumptions of the column physics as a JSON-serialisable dict."""
        am = droplets.air_mass(self.air_mass)
        return {
            "air_mass": am.describe(),
            "air_mass_default_reason": (
                "maritime is the default because it is conservative for icing screening: "
                "fewer droplets for the same liquid give a larger MVD, a higher collection "
                "efficiency and more drizzle by the warm-rain process"
            ),
            "liquid_cloud": (
                "model cloud liquid >= 0.01 g/m3 (Korolev et al. 2003) or relative humidity "
                "over water above the threshold model"
            ),
            "rh_threshold_model": self.rh_threshold_model,
            "rh_threshold_formula": (
                "min(warm, f_i + ice_fraction (1 - f_i)), f_i = e_si/e_sw (stays above ice "
                "saturation below about -5 C)"
                if self.rh_threshold_model == "ice-water-blend"
                else "0.999 (saturated air only)"
            ),
            "rh_threshold_warm": self.rh_threshold_warm,
            "bridge_single_level_gaps": self.bridge_single_level_gaps,
            "rh_threshold_ice_fraction": self.rh_threshold_ice_fraction,
            "liquid_combination": (
                "the larger of model cloud water (q_c rho, divided by the cloud fraction where "
                "given, floored at cloud_fraction_floor) and diagnosed sub-adiabatic liquid, "
                "never their sum; basis says which"
            ),
            "cloud_fraction_floor": self.cloud_fraction_floor,
            "sub_adiabatic_factor": (
                f"{self.sub_adiabatic_factor_at_base} exp(-h / "
                f"{self.sub_adiabatic_scale_height_m} m), h above the layer base "
                "(0.77 Braun et al. 2018; fall with height after Warner 1955)"
            ),
            "homogeneous_freezing_c": round(T_HOMOGENEOUS - T0, 2),
            "droplet_number": (
                "Twomey (1959) activation at the layer base, held up the layer; effective "
                "updraft |w| + sub-grid, floored by cloud type"
            ),
            "subgrid_updraft_m_s": self.subgrid_updraft_m_s,
            "updraft_floor_stratiform_m_s": self.updraft_floor_stratiform_m_s,
            "updraft_floor_convective_m_s": self.updraft_floor_convective_m_s,
            "convective_updraft_m_s": self.convective_updraft_m_s,
            "glaciation": (
                "likelihood beside the LWC (never thinning it): ice nuclei at cloud-top "
                f"temperature ({self.ice_nuclei_model}) plus ice and snow falling from above, "
                "diffusional growth against the grid-mean updraft's condensate supply (Korolev "
                "& Mazin 2003 balance), over a residence time"
            ),
            "aerosol_per_cm3": self.aerosol_per_cm3,
            "ice_crystal_radius_m": self.ice_crystal_radius_m,
            "crystal_density_kg_m3": self.crystal_density_kg_m3,
            "glaciation_residence_time_s": self.glaciation_residence_time_s,
            "drizzle_time_scale_s": self.drizzle_time_scale_s,
            "appendix_c_envelopes": "14 CFR 25 Appendix C maxima, values from memory",
        }


@dataclass
class ColumnDiagnosis:
    """The diagnosed columns; fields shaped (..., level) unless noted (see DEVELOPERS.md)."""

    pressure: np.ndarray
    height: np.ndarray
    temperature: np.ndarray
    relative_humidity: np.ndarray
    valid: np.ndarray
    below_ground: np.ndarray
    cloud: np.ndarray
    cloud_base_height: np.ndarray
    cloud_top_height: np.ndarray
    cloud_top_temperature: np.ndarray
    lwc: np.ndarray
    lwc_model: np.ndarray
    lwc_diagnosed: np.ndarray
    basis: np.ndarray
    glaciation: np.ndarray
    droplet_number: np.ndarray
    mvd: np.ndarray
    spectrum_shape: np.ndarray
    sld_class: np.ndarray
    sld_lwc: np.ndarray
    sld_mvd: np.ndarray
    sld_dmax: np.ndarray
    precip_type: np.ndarray
    freezing_level: np.ndarray
    warnings: list = field(default_factory=list)
    assumptions: dict = field(default_factory=dict)


_LEVEL_INPUTS = (
    "dewpoint",
    "relative_humidity",
    "specific_humidity",
    "height",
    "cloud_liquid",
    "cloud_ice",
    "rain",
    "snow",
    "cloud_fraction",
    "vertical_velocity",
)
_COLUMN_INPUTS = ("precipitation_rate_mm_h", "surface_pressure", "surface_height")
_PER_LEVEL_OUT = (
    "pressure",
    "height",
    "temperature",
    "relative_humidity",
    "valid",
    "below_ground",
    "cloud",
    "cloud_base_height",
    "cloud_top_height",
    "cloud_top_temperature",
    "lwc",
    "lwc_model",
    "lwc_diagnosed",
    "basis",
    "glaciation",
    "droplet_number",
    "mvd",
    "spectrum_shape",
    "sld_class",
    "sld_lwc",
    "sld_mvd",
    "sld_dmax",
)
_PER_COLUMN_OUT = ("precip_type", "freezing_level")


def _as_float(name, value):
    try:
        return np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        raise InputError(
            f"{name} is not numeric",
            where=name,
            fix=f"pass {name} as an array of numbers (SI units)",
        ) from None


def _prepare(pressure, temperature, level_inputs, column_inputs):
    """Broadcast inputs to (n, level) / (n,), returning the leading shape too."""
    p = _as_float("pressure", pressure)
    t = _as_float("temperature", temperature)
    arrays = {"pressure": p, "temperature": t}
    arrays.update({k: _as_float(k, v) for k, v in level_inputs.items() if v is not None})
    try:
        shape = np.broadcast_shapes(*(a.shape for a in arrays.values()))
    except ValueError:
        given = ", ".join(f"{k} {a.shape}" for k, a in arrays.items())
        raise InputError(
            f"per-level inputs do not broadcast to one (..., level) shape: {given}",
            where="diagnose_columns",
            fix="give every per-level array the shape (..., level)",
        ) from None
    if len(shape) == 0 or shape[-1] == 0:
        raise InputError(
            "pressure and temperature need a level axis with levels",
            where="pressure",
            fix="pass arrays shaped (..., level), level >= 1",
        )
    lead, n_lev = shape[:-1], shape[-1]
    n = int(np.prod(lead, dtype=int))
    flat = {k: np.broadcast_to(a, shape).reshape(n, n_lev) for k, a in arrays.items()}
    cols = {}
    for k, v in column_inputs.items():
        if v is None:
            continue
        a = _as_float(k, v)
        try:
            cols[k] = np.broadcast_to(a, lead).reshape(n)
        except ValueError:
            raise InputError(
                f"{k} has shape {a.shape}, expected the column shape {lead}",
                where=k,
                fix=f"give {k} one value per column",
            ) from None
    return lead, n_lev, flat, cols


def diagnose_columns(
    pressure,
    temperature,
    *,
    dewpoint=None,
    relative_humidity=None,
    specific_humidity=None,
    height=None,
    cloud_liquid=None,
    cloud_ice=None,
    rain=None,
    snow=None,
    cloud_fraction=None,
    vertical_velocity=None,
    precipitation_rate_mm_h=None,
    surface_pressure=None,
    surface_height=None,
    options=None,
) -> ColumnDiagnosis:
    """Diagnose cloud, supercooled liquid, droplets, glaciation and SLD in columns.

    Parameters
    ----------
    pressure : array_like, shape (..., level) or (level,)
        Level pressure, levels in either order. [Pa]
    temperature : array_like, shape (..., level)
        Air temperature. [K]
    dewpoint, relative_humidity, specific_humidity : array_like, optional
        One humidity (the first given of relative humidity over water [1],
        dewpoint [K], specific humidity [kg/kg] is used).
    height : array_like, optional
        Level height above mean sea level [m]; hypsometric when absent
        (anchored at ``surface_height`` / ``surface_pressure`` if both given,
        else at the standard-atmosphere height of the lowest level).
    cloud_liquid, cloud_ice, rain, snow : array_like, optional
        Model mixing ratios. [kg/kg]
    cloud_fraction : array_like, optional
        Model cloud fraction [1]; model cloud water (a grid mean) is divided by it
        (floored at ``options.cloud_fraction_floor``) to give in-cloud values.
    vertical_velocity : array_like, optional
        Upward air velocity. [m s-1]
    precipitation_rate_mm_h : array_like, optional, shape (...)
        Surface precipitation rate. [mm h-1]
    surface_pressure, surface_height : array_like, optional, shape (...)
        For the below-ground mask: level heights against ``surface_height`` when
        ``height`` is given, else pressure against ``surface_pressure``, else
        computed heights against ``surface_height``. [Pa], [m]
    options : ColumnOptions, optional
        Physics choices; ``ColumnOptions()`` by default.

    Returns
    -------
    ColumnDiagnosis
        Fields shaped like the inputs (see DEVELOPERS.md), ``warnings`` (list of
        str) and ``assumptions`` (``options.describe()``).

    Raises
    ------
    icing.errors.InputError
        No humidity, shapes that do not broadcast, non-numeric input.

    Examples
    --------
    >>> d = diagnose_columns([90000.0, 85000.0, 80000.0], [268.0, 265.0, 262.0],
    ...                      relative_humidity=[1.0, 1.0, 0.5])
    >>> d.cloud.tolist(), bool(d.lwc[1] > 0)
    ([True, True, False], True)
    """
    options = options or ColumnOptions()
    if relative_humidity is None and dewpoint is None and specific_humidity is None:
        raise InputError(
            "no humidity given",
            where="diagnose_columns",
            fix="pass relative_humidity, dewpoint or specific_humidity",
        )
    level_inputs = {
        k: v
        for k, v in {
            "dewpoint": dewpoint,
            "relative_humidity": relative_humidity,
            "specific_humidity": specific_humidity,
            "height": height,
            "cloud_liquid": cloud_liquid,
            "cloud_ice": cloud_ice,
            "rain": rain,
            "snow": snow,
            "cloud_fraction": cloud_fraction,
            "vertical_velocity": vertical_velocity,
        }.items()
    }
    column_inputs = {
        "precipitation_rate_mm_h": precipitation_rate_mm_h,
        "surface_pressure": surface_pressure,
        "surface_height": surface_height,
    }
    lead, n_lev, flat, cols = _prepare(pressure, temperature, level_inputs, column_inputs)
    notes = _check_units(flat)
    n = int(np.prod(lead, dtype=int))
    chunk = max(1, int(options.chunk_columns))
    result, exceed_lists = {}, []
    for start in range(0, max(n, 1), chunk):  # chunks of columns bound the memory
        sl = slice(start, min(start + chunk, n))
        out, exceed = _diagnose_sorted(
            {k: v[sl] for k, v in flat.items()}, {k: v[sl] for k, v in cols.items()}, options
        )
        if n <= chunk:  # one chunk: its arrays are the result (views are copied, so the
            # diagnosis never aliases the caller's input arrays)
            result = {
                name: out[name] if out[name].base is None else np.array(out[name])
                for name in _PER_LEVEL_OUT + _PER_COLUMN_OUT
            }
        else:
            if not result:  # allocate the outputs once, then fill chunk by chunk
                result = {
                    name: _empty_output((n,) + out[name].shape[1:], out[name].dtype)
                    for name in _PER_LEVEL_OUT + _PER_COLUMN_OUT
                }
            for name in _PER_LEVEL_OUT + _PER_COLUMN_OUT:
                result[name][sl] = out[name]
        del out
        exceed_lists.append(exceed)
    for name in _PER_LEVEL_OUT:
        result[name] = result[name].reshape(lead + (n_lev,))
    for name in _PER_COLUMN_OUT:
        result[name] = result[name].reshape(lead)
    warnings = notes + _merge_warnings(exceed_lists)
    return ColumnDiagnosis(**result, warnings=warnings, assumptions=options.describe())


#: Unit mistakes caught at the edge: name -> (largest plausible value, what it looks
#: like, fix). Values above the limit anywhere in the input raise InputError.
_UNIT_LIMITS = {
    "relative_humidity": (5.0, "percent", "give relative humidity as a fraction (0-1)"),
    "specific_humidity": (0.1, "g/kg", "give specific humidity in kg/kg"),
    "cloud_liquid": (0.05, "g/kg", "give mixing ratios in kg/kg"),
    "cloud_ice": (0.05, "g/kg", "give mixing ratios in kg/kg"),
    "rain": (0.05, "g/kg", "give mixing ratios in kg/kg"),
    "snow": (0.05, "g/kg", "give mixing ratios in kg/kg"),
    "cloud_fraction": (1.5, "percent", "give cloud fraction as a fraction (0-1)"),
}


#: Outputs at least this large are mapped in small pages (see _empty_output). [bytes]
_SMALL_PAGE_OUTPUT_BYTES = 4 * 2**20


def _empty_output(shape, dtype):
    """Return an uninitialised output array; large ones backed by an anonymous mapping.

    numpy asks the kernel for transparent huge pages for arrays of 4 MiB and more;
    where the kernel compacts memory on demand to find them, the first write to
    hundreds of MiB of fresh output stalls unpredictably (measured 0.1-1.8 s for
    540 MiB on the benchmark machine, against a steady 0.3 s in 4 KiB pages). Large
    outputs are therefore mapped without that advice; elsewhere (no anonymous
    ``mmap`` on the platform) this is ``np.empty``. The array owns its mapping and
    behaves as any writeable ndarray; the memory returns when it is freed.
    """
    dtype = np.dtype(dtype)
    count = int(np.prod(shape, dtype=np.int64))
    nbytes = count * dtype.itemsize
    flags = getattr(mmap, "MAP_PRIVATE", None), getattr(mmap, "MAP_ANONYMOUS", None)
    if nbytes < _SMALL_PAGE_OUTPUT_BYTES or None in flags:
        return np.empty(shape, dtype)
    buf = mmap.mmap(-1, nbytes, flags=flags[0] | flags[1])
    return np.frombuffer(buf, dtype=dtype, count=count).reshape(shape)


def _finite_max(a):
    top = a.max() if a.size else np.nan
    if np.isfinite(top):  # no NaN and no +inf anywhere: the largest value is finite
        return float(top)
    finite = a[np.isfinite(a)]
    return float(finite.max()) if finite.size else np.nan


def _check_units(flat):
    """Raise on clear unit mistakes; return plausibility notes (strings)."""
    p_max = _finite_max(flat["pressure"])
    if p_max < 2000.0:
        raise InputError(
            f"pressure peaks at {p_max:g}, which looks like hPa",
            where="pressure",
            fix="give pressure in Pa (hPa x 100)",
        )
    t_max = _finite_max(flat["temperature"])
    if t_max < 150.0:
        raise InputError(
            f"temperature peaks at {t_max:g}, which looks like degrees Celsius",
            where="temperature",
            fix="give temperature in K (degC + 273.15)",
        )
    if "dewpoint" in flat and _finite_max(flat["dewpoint"]) < 150.0:
        raise InputError(
            "dewpoint looks like degrees Celsius",
            where="dewpoint",
            fix="give dewpoint in K (degC + 273.15)",
        )
    for name, (limit, looks, fix) in _UNIT_LIMITS.items():
        if name in flat and _finite_max(flat[name]) > limit:
            raise InputError(
                f"{name} peaks at {_finite_max(flat[name]):g}, which looks like {looks}",
                where=name,
                fix=fix,
            )
    notes = []
    if "relative_humidity" in flat and _finite_max(flat["relative_humidity"]) > 1.2:
        notes.append(
            "relative humidity above 120 % in the input: check its units and source "
            "(values a little above 100 % are normal model output)"
        )
    return notes


def _merge_warnings(exceed_lists):
    """Merge the chunks' Appendix C counts into warning lines."""
    counts = {}
    for exceed in exceed_lists:
        for key, value in exceed.items():
            c0, w0 = counts.get(key, (0, 0.0))
            counts[key] = (c0 + value[0], max(w0, value[1]))
    return clouds.appendix_c_warnings(counts)


def _diagnose_sorted(flat, cols, options):
    """Diagnose a chunk shaped (n, level); sorts levels ground-up and back."""
    p_in = flat["pressure"]
    with np.errstate(invalid="ignore"):
        step = np.diff(p_in, axis=-1)
        if np.all(step < 0):  # already ground-up everywhere (the usual case): no copy
            return _diagnose_core(dict(flat), cols, options)
        if np.all(step > 0):  # top-down everywhere: reversed views
            out, exceed = _diagnose_core({k: v[..., ::-1] for k, v in flat.items()}, cols, options)
            return {
                k: (v[..., ::-1] if k in _PER_LEVEL_OUT else v) for k, v in out.items()
            }, exceed
    # mixed orders or missing pressures: decreasing pressure, NaN pressures on top
    order = np.argsort(np.where(np.isnan(p_in), -np.inf, -p_in), axis=-1, kind="stable")
    inverse = np.argsort(order, axis=-1, kind="stable")
    out, exceed = _diagnose_core(
        {k: np.take_along_axis(v, order, -1) for k, v in flat.items()}, cols, options
    )
    for name in _PER_LEVEL_OUT:
        out[name] = np.take_along_axis(out[name], inverse, -1)
    return out, exceed


def _fill_invalid(values, valid):
    """Replace invalid levels by the nearest valid level below (or above at the bottom)."""
    n = values.shape[-1]
    idx = np.broadcast_to(np.arange(n), values.shape)
    below = np.maximum.accumulate(np.where(valid, idx, -1), axis=-1)
    above = np.flip(np.minimum.accumulate(np.flip(np.where(valid, idx, n), -1), axis=-1), -1)
    pick = np.where(below >= 0, below, np.minimum(above, n - 1))
    return np.take_along_axis(values, pick, -1)


def _segment_running_max(values, start):
    """Return the running maximum of ``values`` along levels, restarting where ``start``.

    Values must be finite and in [0, 1e6); each segment is lifted by a larger offset
    so one ``maximum.accumulate`` serves all segments at once.
    """
    offset = np.cumsum(start, axis=-1) * 1e7
    return np.maximum.accumulate(values + offset, axis=-1) - offset


def _diagnose_core(s, cols, o):
    """Run the physics on ground-up sorted arrays shaped (n, level)."""
    p, t = s["pressure"], s["temperature"]
    n, n_lev = p.shape
    exceed = {}
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        # --- humidity -------------------------------------------------------------
        if "relative_humidity" in s:
            rh = s["relative_humidity"]
            q = thermo.specific_humidity_from_relative_humidity(p, t, rh)
            hum = rh
        elif "dewpoint" in s:
            rh = thermo.relative_humidity_from_dewpoint(t, s["dewpoint"])
            q = thermo.specific_humidity_from_relative_humidity(p, t, rh)
            hum = s["dewpoint"]
        else:
            q = s["specific_humidity"]
            rh = thermo.relative_humidity_from_specific_humidity(p, t, q)
            hum = q
        # --- validity: NaN anywhere in a level --------------------------------------
        valid = np.isfinite(p) & (p > 0) & np.isfinite(t) & (t > 0) & np.isfinite(hum)
        for k in _LEVEL_INPUTS:
            if k in s:
                valid &= np.isfinite(s[k])
        # --- heights ----------------------------------------------------------------
        if "height" in s:
            z = s["height"]
        else:
            any_valid = valid.any(axis=-1, keepdims=True)
            if valid.all():
                pf, tf, qf = p, t, q
            else:
                pf = _fill_invalid(np.where(valid, p, np.nan), valid)
                tf = _fill_invalid(np.where(valid, t, np.nan), valid)
                qf = np.nan_to_num(_fill_invalid(np.where(valid, q, np.nan), valid))
                # keep the levels' own pressures where known, so heights stay ordered
                pf = np.where(np.isfinite(p) & (p > 0), p, pf)
            base = {}
            if "surface_pressure" in cols and "surface_height" in cols:
                base = {
                    "base_pressure": cols["surface_pressure"],
                    "base_height": cols["surface_height"],
                }
            z = thermo.height_from_pressure_hypsometric(pf, tf, specific_humidity=qf, **base)
            z = np.where(any_valid & np.isfinite(p) & (p > 0), z, np.nan)
        # a level without a height (e.g. a NaN surface anchor) cannot be placed: not valid
        valid &= np.isfinite(z)
        # --- below ground -----------------------------------------------------------
        # the exact test first: heights against surface height when the caller gave
        # heights, else pressure against surface pressure; surface height against
        # computed heights is the fallback (as good as the hypsometric anchor)
        below = np.zeros(p.shape, bool)
        if "surface_height" in cols and ("height" in s or "surface_pressure" not in cols):
            sh = cols["surface_height"][:, None]
            below = np.isfinite(sh) & (z < sh)
        elif "surface_pressure" in cols:
            sp = cols["surface_pressure"][:, None]
            below = np.isfinite(sp) & (p > sp)
        air = valid & ~below
        rho = thermo.air_density(p, t, np.nan_to_num(q))
        # --- cloud and layers ---------------------------------------------------------
        lwc_model = np.zeros(p.shape)
        if "cloud_liquid" in s:
            lwc_model = np.maximum(s["cloud_liquid"], 0.0) * rho  # kg/kg -> kg/m3
            if "cloud_fraction" in s:
                # grid mean -> in-cloud: the cloudy part of the cell holds all the water
                cf = np.clip(s["cloud_fraction"], o.cloud_fraction_floor, 1.0)
                lwc_model = lwc_model / cf
        # water RH of ice-saturated air: once for the threshold and the gap bridging
        f_ice = (
            thermo.ice_saturation_relative_humidity(t)
            if o.bridge_single_level_gaps or o.rh_threshold_model == "ice-water-blend"
            else None
        )
        cloud = clouds.cloud_mask(
            rh,
            t,
            lwc_model=lwc_model if "cloud_liquid" in s else None,
            valid=air,
            model=o.rh_threshold_model,
            warm=o.rh_threshold_warm,
            ice_fraction=o.rh_threshold_ice_fraction,
            ice_saturation=f_ice,
        )
        if o.bridge_single_level_gaps:
            cloud = clouds.bridge_single_level_gaps(cloud, rh, t, valid=air, ice_saturation=f_ice)
        del f_ice
        # layer boundaries never reach into the ground or into missing levels
        all_air = bool(air.all())  # the usual case: nothing to mask

        def in_air(x, fill):
            """``x`` in air, ``fill`` elsewhere (``x`` itself when every level is air)."""
            return x if all_air else np.where(air, x, fill)

        lay = clouds.cloud_layers(cloud, in_air(z, np.nan), in_air(p, np.nan), in_air(t, np.nan))
        # A layer resting on a missing level (not the ground) has an unknown base, so its
        # adiabatic liquid is unknown too: its levels read as a coverage gap, never as the
        # near-zero liquid a base placed too high would give.
        if not all_air:
            lost = ~valid & ~below
            bi = lay.base_index
            under_base = np.take_along_axis(lost, np.clip(bi - 1, 0, None), -1) & (bi >= 1)
            valid &= ~(cloud & under_base)
            air = valid & ~below
        liquid_ok = cloud & (t > T_HOMOGENEOUS)
        lwc_model = in_air(np.where(t > T_HOMOGENEOUS, lwc_model, 0.0), np.nan)
        # --- diagnosed liquid (only cloudy liquid levels are integrated) ----------------
        lwc_diag = np.zeros(p.shape) if all_air else np.where(air, 0.0, np.nan)
        sel = np.nonzero(liquid_ok)
        if sel[0].size:
            ad = clouds.adiabatic_lwc(
                p[sel],
                t[sel],
                lay.base_pressure[sel],
                lay.base_temperature[sel],
                specific_humidity=np.nan_to_num(q[sel]),
                max_step=o.moist_adiabat_step,
            )
            f = clouds.sub_adiabatic_factor(
                z[sel] - lay.base_height[sel],
                factor_at_base=o.sub_adiabatic_factor_at_base,
                scale_height=o.sub_adiabatic_scale_height_m,
            )
            ad_f = np.nan_to_num(ad * f)
            lwc_diag[sel] = np.where(ad_f > 1e-12, ad_f, 0.0)  # drop round-off at the base
        # --- combine: the larger, never the sum -----------------------------------------
        lwc = np.where(liquid_ok, np.maximum(lwc_model, lwc_diag), 0.0)
        lwc = in_air(lwc, np.nan)
        model_wins = lwc_model >= lwc_diag
        basis = np.where(
            liquid_ok & (lwc > 0),
            np.where(model_wins, codes.BASIS_MODEL, codes.BASIS_DIAGNOSED),
            codes.BASIS_NONE,
        ).astype(np.int8)
        # --- cloud type and effective updraft --------------------------------------------
        start = lay.base_index == np.arange(n_lev)
        w = (
            np.nan_to_num(s["vertical_velocity"])
            if "vertical_velocity" in s
            else np.zeros(p.shape)
        )
        absw = np.where(cloud, np.minimum(np.abs(w), 1e5), 0.0)
        top_i = np.maximum(lay.top_index, 0)
        base_i = np.maximum(lay.base_index, 0)
        layer_max_w = np.take_along_axis(_segment_running_max(absw, start), top_i, -1)
        convective = cloud & (layer_max_w >= o.convective_updraft_m_s)
        w_base = np.take_along_axis(absw, base_i, -1) + o.subgrid_updraft_m_s
        floor = np.where(
            convective, o.updraft_floor_convective_m_s, o.updraft_floor_stratiform_m_s
        )
        w_eff = np.maximum(w_base, floor)
        # --- droplets ---------------------------------------------------------------------
        am = droplets.air_mass(o.air_mass)
        number = np.full(p.shape, np.nan)
        number[sel] = droplets.twomey_activation(w_eff[sel], c_per_cm3=am.c_per_cm3, k=am.k)[0]
        has_liquid = liquid_ok & (lwc >= clouds.IN_CLOUD_LWC)
        mvd = np.full(p.shape, np.nan)
        at = np.nonzero(has_liquid)  # sized only where there is liquid
        mvd[at] = droplets.median_volume_diameter(lwc[at], number[at], shape=am.shape)
        shape = np.where(liquid_ok, am.shape, np.nan)
        # --- glaciation --------------------------------------------------------------------
        ice = np.zeros(p.shape)
        for k in ("cloud_ice", "snow"):
            if k in s:
                ice = ice + np.maximum(np.nan_to_num(s[k]), 0.0)
        ice_above = (
            np.flip(np.maximum.accumulate(np.flip(ice, -1), axis=-1), -1)
            if "cloud_ice" in s or "snow" in s
            else ice
        )
        glac = np.full(p.shape, np.nan)
        gsel = np.nonzero(cloud)
        if gsel[0].size:
            glac[gsel] = clouds.glaciation_likelihood(
                t[gsel],
                p[gsel],
                lwc[gsel],
                lay.top_temperature[gsel],
                ice_above=ice_above[gsel],
                # grid-mean ascent only: sub-grid ups and downs add no net condensate
                updraft=np.maximum(w[gsel], 0.0),
                air_density=rho[gsel],
                ice_nuclei_model=o.ice_nuclei_model,
                aerosol_per_cm3=o.aerosol_per_cm3,
                ice_radius=o.ice_crystal_radius_m,
                crystal_density=o.crystal_density_kg_m3,
                residence_time=o.glaciation_residence_time_s,
            )
        # --- SLD ---------------------------------------------------------------------------
        sld_out = _sld(p, t, z, rh, cloud, lwc, number, lay, s, cols, valid, below, o)
        # --- freezing level ----------------------------------------------------------------
        freezing = _freezing_level(t, z, air)
        # --- Appendix C ---------------------------------------------------------------------
        exceed.update(clouds.appendix_c_exceedances(in_air(lwc, 0.0), t, convective=convective))
    out = {
        "pressure": p,
        "height": z,
        "temperature": t,
        "relative_humidity": rh,
        "valid": valid,
        "below_ground": below,
        "cloud": cloud,
        "cloud_base_height": lay.base_height,
        "cloud_top_height": lay.top_height,
        "cloud_top_temperature": lay.top_temperature,
        "lwc": lwc,
        "lwc_model": lwc_model,
        "lwc_diagnosed": lwc_diag,
        "basis": basis,
        "glaciation": glac,
        "droplet_number": number,
        "mvd": mvd,
        "spectrum_shape": shape,
        "freezing_level": freezing,
        **sld_out,
    }
    return out, exceed


def _freezing_level(t, z, air):
    """Height of the lowest 0 degC crossing in air, either way; NaN if none.

    Under a sub-freezing surface layer with a warm nose aloft this is the base of
    the warm nose; a column below 0 degC at every level has no crossing (NaN).
    """
    if t.shape[-1] < 2:
        return np.full(t.shape[:-1], np.nan)
    t_lo, t_hi = t[..., :-1], t[..., 1:]
    ok = air[..., :-1] & air[..., 1:]
    cross = ok & ((t_lo > T0) != (t_hi > T0))
    first = np.argmax(cross, axis=-1)[..., None]
    any_cross = cross.any(axis=-1)
    ta = np.take_along_axis(t_lo, first, -1)[..., 0]
    tb = np.take_along_axis(t_hi, first, -1)[..., 0]
    za = np.take_along_axis(z[..., :-1], first, -1)[..., 0]
    zb = np.take_along_axis(z[..., 1:], first, -1)[..., 0]
    frac = (ta - T0) / np.where(ta != tb, ta - tb, 1.0)
    return np.where(any_cross, za + frac * (zb - za), np.nan)


def _sld(p, t, z, rh, cloud, lwc, number, lay, s, cols, valid, below, o):
    """Call :func:`icing.sld.diagnose_sld` on ground-up arrays; outputs keyed by field."""
    res = sld.diagnose_sld(
        p,
        t,
        z,
        relative_humidity=rh,
        cloud=cloud,
        lwc=np.nan_to_num(lwc),
        droplet_number=number,
        cloud_top_temperature=lay.top_temperature,
        cloud_top_height=lay.top_height,
        cloud_base_height=lay.base_height,
        precipitation_rate_mm_h=cols.get("precipitation_rate_mm_h"),
        rain=s.get("rain"),
        snow=s.get("snow"),
        cloud_ice=s.get("cloud_ice"),
        valid=valid,
        below_ground=below,
        drizzle_time_scale_s=o.drizzle_time_scale_s,
    )
    return {
        "sld_class": np.asarray(res.sld_class),
        "sld_lwc": np.asarray(res.sld_lwc, float),
        "sld_mvd": np.asarray(res.sld_mvd, float),
        "sld_dmax": np.asarray(res.sld_dmax, float),
        "precip_type": np.asarray(res.precip_type),
    }
