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
from icing.calc import clouds, droplets, thermo
from icing.calc._column_compiled import compiled_front
from icing.calc._column_input import _LEVEL_INPUTS, _check_units, _prepare
from icing.calc._column_sld import column_sld
from icing.calc.column_options import ColumnOptions
from icing.constants import CP_AIR, T0, T_HOMOGENEOUS, G
from icing.errors import InputError

__all__ = ["ColumnOptions", "ColumnDiagnosis", "diagnose_columns"]


@dataclass(frozen=True)
class ColumnDiagnosis:
    """The diagnosed columns; fields shaped (..., level) unless noted (see DEVELOPERS.md).

    Built once by :func:`diagnose_columns` and never changed afterwards.
    """

    pressure: np.ndarray
    """Level pressure. [Pa]"""
    height: np.ndarray
    """Level height above mean sea level (given, or hypsometric). [m]"""
    temperature: np.ndarray
    """Air temperature. [K]"""
    relative_humidity: np.ndarray
    """Relative humidity over water. [1]"""
    valid: np.ndarray
    """bool: the level has usable data (no NaN in any of its inputs, a known height)."""
    below_ground: np.ndarray
    """bool: the level lies under the surface."""
    cloud: np.ndarray
    """bool: liquid cloud (model cloud water, or humidity above the threshold)."""
    cloud_base_height: np.ndarray
    """Base of the cloud layer holding the level (NaN outside cloud). [m]"""
    cloud_top_height: np.ndarray
    """Top of the cloud layer holding the level (NaN outside cloud). [m]"""
    cloud_top_temperature: np.ndarray
    """Temperature at the top level of that layer (NaN outside cloud). [K]"""
    lwc: np.ndarray
    """Cloud liquid water content: the larger of model and diagnosed, 0 below -38 C. [kg m-3]"""
    lwc_model: np.ndarray
    """In-cloud model liquid ``q_c rho`` (over the cloud fraction where given). [kg m-3]"""
    lwc_diagnosed: np.ndarray
    """Sub-adiabatic liquid diagnosed from the layer's base. [kg m-3]"""
    basis: np.ndarray
    """int8 ``codes.BASIS``: where ``lwc`` came from."""
    glaciation: np.ndarray
    """Likelihood [0..1] that the liquid has been glaciated (NaN outside cloud)."""
    model_glaciated: np.ndarray
    """bool: the model holds ice or snow and no liquid here (both fields given)."""
    droplet_number: np.ndarray
    """Cloud droplet number (Twomey activation at the layer's base). [m-3]"""
    mvd: np.ndarray
    """Median volume diameter of the cloud droplets (NaN without liquid). [m]"""
    spectrum_shape: np.ndarray
    """Gamma shape ``mu`` of the droplet spectrum (NaN without liquid). [1]"""
    sld_class: np.ndarray
    """int8 ``codes.SLD_*``; ``codes.GAP`` at unusable levels."""
    sld_lwc: np.ndarray
    """Liquid water content of the drizzle or rain drops. [kg m-3]"""
    sld_mvd: np.ndarray
    """Median volume diameter of the drizzle or rain drops (NaN where none). [m]"""
    sld_dmax: np.ndarray
    """Largest drizzle or rain drop worth considering (NaN where none). [m]"""
    possible_drizzle: np.ndarray
    """bool: possible freezing drizzle (warm-rain conditions hold, growth marginal)."""
    precip_type: np.ndarray
    """Shape (...): int8 ``codes.PRECIP_TYPES`` index of the surface type (GAP if unknown)."""
    freezing_level: np.ndarray
    """Shape (...): lowest 0 C crossing above the ground (NaN if none). [m]"""
    warnings: list = field(default_factory=list)
    """Plausibility notes and 14 CFR 25 Appendix C warnings (str)."""
    assumptions: dict = field(default_factory=dict)
    """``ColumnOptions.describe()`` of the run."""


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
    "model_glaciated",
    "droplet_number",
    "mvd",
    "spectrum_shape",
    "sld_class",
    "sld_lwc",
    "sld_mvd",
    "sld_dmax",
    "possible_drizzle",
)
_PER_COLUMN_OUT = ("precip_type", "freezing_level")


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
    saturation=None,
    options=None,
    compiled: bool = False,
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
    saturation : array_like, optional
        ``thermo.saturation_vapor_pressure(temperature)`` (over water, shaped like
        ``temperature``) when the caller has it already, as the forecast readers do
        after converting omega: the same values, one pass fewer. Computed here when
        absent. [Pa]
    options : ColumnOptions, optional
        Physics choices; ``ColumnOptions()`` by default.
    compiled : bool, optional
        Run the physics (the column steps and the SLD diagnosis) as compiled loops
        where numba is installed and the options are transcribed (the same results, to
        within a few units in the last place: see DEVELOPERS.md); False by default, as
        importing numba costs more than a few hundred columns save. The grid sets it.
        Not an assumption of the physics, so not in ``assumptions``.

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
            "saturation": saturation,  # not an input of its own: taken out below
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
            {k: v[sl] for k, v in flat.items()},
            {k: v[sl] for k, v in cols.items()},
            options,
            compiled,
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


def _merge_warnings(exceed_lists):
    """Merge the chunks' Appendix C counts into warning lines."""
    counts = {}
    for exceed in exceed_lists:
        for key, value in exceed.items():
            c0, w0 = counts.get(key, (0, 0.0))
            counts[key] = (c0 + value[0], max(w0, value[1]))
    return clouds.appendix_c_warnings(counts)


def _diagnose_sorted(flat, cols, options, compiled=False):
    """Diagnose a chunk shaped (n, level); sorts levels ground-up and back."""
    p_in = flat["pressure"]
    with np.errstate(invalid="ignore"):
        step = np.diff(p_in, axis=-1)
        if np.all(step < 0):  # already ground-up everywhere (the usual case): no copy
            return _diagnose_core(dict(flat), cols, options, compiled)
        if np.all(step > 0):  # top-down everywhere: reversed views
            out, exceed = _diagnose_core(
                {k: v[..., ::-1] for k, v in flat.items()}, cols, options, compiled
            )
            return {
                k: (v[..., ::-1] if k in _PER_LEVEL_OUT else v) for k, v in out.items()
            }, exceed
    # mixed orders or missing pressures: decreasing pressure, NaN pressures on top
    order = np.argsort(np.where(np.isnan(p_in), -np.inf, -p_in), axis=-1, kind="stable")
    inverse = np.argsort(order, axis=-1, kind="stable")
    out, exceed = _diagnose_core(
        {k: np.take_along_axis(v, order, -1) for k, v in flat.items()}, cols, options, compiled
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


def _diagnose_core(s, cols, o, compiled=False):
    """Run the physics on ground-up sorted arrays shaped (n, level), one step each.

    ``compiled``: the steps before SLD as compiled loops where they are transcribed
    (:func:`icing.calc._column_compiled.compiled_front`), else numpy (:func:`_front`).
    """
    p, t = s["pressure"], s["temperature"]
    es_w = s.pop("saturation", None)  # the caller's, sorted and chunked with the levels
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        s, present = _absent_per_column(s)
        f = compiled_front(s, present, cols, o, es_w) if compiled else None
        if f is None:
            f = _front(s, present, cols, o, es_w)
        z, lay, valid, below = f["z"], f["lay"], f["valid"], f["below"]
        sld_out = column_sld(
            p, t, z, f["rh"], f["cloud"], f["lwc"], f["number"], lay, s, cols, valid, below,
            present, f["f_ice"], o, compiled,
        )  # fmt: skip
    out = {
        "pressure": p,
        "height": z,
        "temperature": t,
        "relative_humidity": f["rh"],
        "valid": valid,
        "below_ground": below,
        "cloud": f["cloud"],
        "cloud_base_height": lay.base_height,
        "cloud_top_height": lay.top_height,
        "cloud_top_temperature": lay.top_temperature,
        "lwc": f["lwc"],
        "lwc_model": f["lwc_model"],
        "lwc_diagnosed": f["lwc_diag"],
        "basis": f["basis"],
        "glaciation": f["glac"],
        "model_glaciated": f["model_glaciated"],
        "droplet_number": f["number"],
        "mvd": f["mvd"],
        "spectrum_shape": f["shape"],
        "freezing_level": f["freezing"],
        **sld_out,
    }
    return out, f["exceed"]


def _front(s, present, cols, o, es_w=None):
    """Run the numpy steps before SLD (humidity to Appendix C), keyed for ``_diagnose_core``.

    ``es_w``: the saturation vapour pressure over water at ``t`` when given.
    """
    p, t = s["pressure"], s["temperature"]
    if es_w is None:
        es_w = thermo.saturation_vapor_pressure(t)  # once: humidity, cloud, glaciation
    rh, q, hum = _humidity(s, p, t, es_w)
    valid = _validity(s, p, t, hum)
    z = _heights(s, cols, p, t, q, valid)
    # a level without a height (e.g. a NaN surface anchor) cannot be placed: not valid
    valid &= np.isfinite(z)
    below = _below_ground(s, cols, p, z)
    rho = thermo.air_density(p, t, np.nan_to_num(q))
    lwc_model = _model_liquid(s, rho, o)
    cloud, lay, valid, f_ice, es_i = _cloud_and_layers(
        s, o, p, t, z, rh, lwc_model, valid, below, es_w
    )
    air = valid & ~below
    all_air = bool(air.all())  # the usual case: nothing to mask
    liquid_ok = cloud & (t > T_HOMOGENEOUS)
    glaciated = _model_glaciated(s, present, rho, lwc_model, cloud)
    lwc_model = _in_air(np.where(t > T_HOMOGENEOUS, lwc_model, 0.0), air, all_air, np.nan)
    w, convective, w_eff = _updraft(s, o, cloud, lay)
    sel = np.nonzero(liquid_ok)  # only cloudy liquid levels are integrated
    lwc_diag = _diagnosed_liquid(p, t, z, q, rh, lay, sel, air, all_air, convective, o)
    lwc, basis = _combine_liquid(lwc_model, lwc_diag, liquid_ok, air, all_air)
    number, mvd, shape = _droplets(lwc, liquid_ok, w_eff, sel, o)
    glac = _glaciation(s, o, p, t, rho, lwc, w, cloud, lay, (es_w, es_i))
    lwc_c = _in_air(lwc, air, all_air, 0.0)
    return {
        "z": z,
        "rh": rh,
        "valid": valid,
        "below": below,
        "cloud": cloud,
        "lay": lay,
        "lwc": lwc,
        "lwc_model": lwc_model,
        "lwc_diag": lwc_diag,
        "basis": basis,
        "glac": glac,
        "model_glaciated": glaciated & air,
        "number": number,
        "mvd": mvd,
        "shape": shape,
        "freezing": _freezing_level(t, z, air),
        "exceed": clouds.appendix_c_exceedances(lwc_c, t, convective=convective),
        "f_ice": f_ice,
    }


#: Optional per-level inputs and the value that stands for "not given" in a column
#: that lacks them (the physics then reads them as absent, not as a gap).
_OPTIONAL_FILL = {
    "cloud_liquid": 0.0,
    "cloud_ice": 0.0,
    "rain": 0.0,
    "snow": 0.0,
    "cloud_fraction": 1.0,
    "vertical_velocity": 0.0,
}


def _absent_per_column(s):
    """Columns lacking an optional field at every level: absent there, not a gap.

    A profile set may mix a radiosonde (no cloud water) with model columns (with
    it); NaN at every level of one column means the field is absent for that
    column only. Returns the inputs with those columns filled by the neutral value
    of ``_OPTIONAL_FILL`` and, per optional field given, the columns that carry it.
    """
    present, out = {}, s
    for k, fill in _OPTIONAL_FILL.items():
        if k not in s:
            continue
        has = np.isfinite(s[k]).any(axis=-1)
        present[k] = has
        if not has.all():
            if out is s:
                out = dict(s)
            out[k] = np.where(has[:, None], s[k], fill)
    return out, present


def _model_glaciated(s, present, rho, lwc_model, cloud):
    """Levels where the model holds ice or snow and no liquid (both fields given).

    Ice and snow together at least the 0.01 g/m3 in-cloud threshold (Korolev et al.
    2003, applied to condensate), model liquid below it.
    """
    if "cloud_liquid" not in present or not ("cloud_ice" in present or "snow" in present):
        return np.zeros(cloud.shape, bool)
    ice = np.zeros(cloud.shape)
    given = np.zeros(cloud.shape[:-1], bool)
    for k in ("cloud_ice", "snow"):
        if k in present:
            ice = ice + np.maximum(np.nan_to_num(s[k]), 0.0)
            given |= present[k]
    both = (given & present["cloud_liquid"])[:, None]
    return both & (ice * rho >= clouds.IN_CLOUD_LWC) & (lwc_model < clouds.IN_CLOUD_LWC)


def _in_air(x, air, all_air, fill):
    """``x`` in air, ``fill`` elsewhere (``x`` itself when every level is air)."""
    return x if all_air else np.where(air, x, fill)


def _humidity(s, p, t, es_w):
    """Relative humidity over water, specific humidity, and the humidity input itself.

    ``es_w``: the saturation vapour pressure over water at ``t``. [Pa]
    """
    if "relative_humidity" in s:
        rh = s["relative_humidity"]
        return rh, thermo.specific_humidity_from_relative_humidity(p, t, rh, saturation=es_w), rh
    if "dewpoint" in s:
        rh = thermo.relative_humidity_from_dewpoint(t, s["dewpoint"])
        q = thermo.specific_humidity_from_relative_humidity(p, t, rh, saturation=es_w)
        return rh, q, s["dewpoint"]
    q = s["specific_humidity"]
    return thermo.relative_humidity_from_specific_humidity(p, t, q), q, q


def _validity(s, p, t, hum):
    """Levels with usable data: NaN anywhere in a level makes it invalid."""
    valid = np.isfinite(p) & (p > 0) & np.isfinite(t) & (t > 0) & np.isfinite(hum)
    for k in _LEVEL_INPUTS:
        if k in s:
            valid &= np.isfinite(s[k])
    return valid


def _heights(s, cols, p, t, q, valid):
    """Level heights: given, else hypsometric over the valid levels (gaps bridged)."""
    if "height" in s:
        return s["height"]
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
        base = {"base_pressure": cols["surface_pressure"], "base_height": cols["surface_height"]}
    z = thermo.height_from_pressure_hypsometric(pf, tf, specific_humidity=qf, **base)
    return np.where(any_valid & np.isfinite(p) & (p > 0), z, np.nan)


def _below_ground(s, cols, p, z):
    """Levels under the surface.

    The exact test first: heights against surface height when the caller gave
    heights, else pressure against surface pressure; surface height against
    computed heights is the fallback (as good as the hypsometric anchor).
    """
    if "surface_height" in cols and ("height" in s or "surface_pressure" not in cols):
        sh = cols["surface_height"][:, None]
        return np.isfinite(sh) & (z < sh)
    if "surface_pressure" in cols:
        sp = cols["surface_pressure"][:, None]
        return np.isfinite(sp) & (p > sp)
    return np.zeros(p.shape, bool)


def _model_liquid(s, rho, o):
    """In-cloud model liquid [kg m-3]: ``q_c rho``, over the cloud fraction where given."""
    if "cloud_liquid" not in s:
        return np.zeros(rho.shape)
    lwc_model = np.maximum(s["cloud_liquid"], 0.0) * rho  # kg/kg -> kg/m3
    if "cloud_fraction" in s:
        # grid mean -> in-cloud: the cloudy part of the cell holds all the water
        cf = np.clip(s["cloud_fraction"], o.cloud_fraction_floor, 1.0)
        lwc_model = lwc_model / cf
    return lwc_model


def _cloud_and_layers(s, o, p, t, z, rh, lwc_model, valid, below, es_w):
    """Cloud mask, its layers, validity less the layers resting on missing levels.

    Also returns the water humidity of ice-saturated air (None when neither the
    threshold nor the gap bridging needed it), reused by the SLD diagnosis, and the
    saturation vapour pressure over ice it was computed from (else None). ``es_w``:
    the one over water at ``t``. [Pa]
    """
    air = valid & ~below
    # water RH of ice-saturated air: once for the threshold and the gap bridging
    f_ice = es_i = None
    if o.bridge_single_level_gaps or o.rh_threshold_model == "ice-water-blend":
        es_i = thermo.saturation_vapor_pressure(t, phase="solid")
        f_ice = thermo.ice_saturation_relative_humidity(t, saturation=(es_w, es_i))
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
    # layer boundaries never reach into the ground or into missing levels
    all_air = bool(air.all())
    lay = clouds.cloud_layers(
        cloud,
        _in_air(z, air, all_air, np.nan),
        _in_air(p, air, all_air, np.nan),
        _in_air(t, air, all_air, np.nan),
    )
    # A layer resting on a missing level (not the ground) has an unknown base, so its
    # adiabatic liquid is unknown too: its levels read as a coverage gap, never as the
    # near-zero liquid a base placed too high would give.
    if not all_air:
        lost = ~valid & ~below
        bi = lay.base_index
        under_base = np.take_along_axis(lost, np.clip(bi - 1, 0, None), -1) & (bi >= 1)
        valid = valid & ~(cloud & under_base)
    return cloud, lay, valid, f_ice, es_i


def _diagnosed_liquid(p, t, z, q, rh, lay, sel, air, all_air, convective, o):
    """Sub-adiabatic liquid ``f(h) LWC_ad`` at the selected levels, 0 elsewhere in air.

    The parcel starts saturated at the lifting condensation level of the air at
    the layer's lowest cloudy level (:func:`_condensation_base`): the humidity
    threshold flags the cloud, saturation starts its liquid. Levels below that
    condensation level get none. Convective layers keep at least
    ``o.sub_adiabatic_floor_convective`` of adiabatic.

    The parcel is carried up each layer (:func:`_parcel_links`): a level above the
    condensation level continues from the liquid level below it, so a deep layer costs
    one crossing of its depth, not one per level.
    """
    lwc_diag = np.zeros(p.shape) if all_air else np.where(air, 0.0, np.nan)
    if sel[0].size:
        p_l, t_l, z_l = _condensation_base(p, t, z, rh, lay, sel)
        ad = clouds.adiabatic_lwc(
            p[sel],
            t[sel],
            p_l,
            t_l,
            specific_humidity=np.nan_to_num(q[sel]),
            max_step=o.moist_adiabat_step,
            follows=_parcel_links(p[sel], p_l, lay.base_index[sel], sel),
        )
        f = clouds.sub_adiabatic_factor(
            z[sel] - z_l,
            factor_at_base=o.sub_adiabatic_factor_at_base,
            scale_height=o.sub_adiabatic_scale_height_m,
            floor=np.where(convective[sel], o.sub_adiabatic_floor_convective, 0.0),
        )
        ad_f = np.nan_to_num(ad * f)
        lwc_diag[sel] = np.where(ad_f > 1e-12, ad_f, 0.0)  # drop round-off at the base
    return lwc_diag


def _parcel_links(p_sel, p_l, base, sel):
    """For each selected level, the one the parcel comes from (``moist_adiabat_chain``).

    The selected levels are in column order, ground up (``np.nonzero`` of a (..., level)
    mask): a level above its layer's condensation level follows the previous selected
    level when that one is of the same column and layer and above the condensation
    level too; every other level starts from the condensation level (-1).
    """
    n = p_sel.size
    with np.errstate(invalid="ignore"):
        above = p_sel < p_l
    same = np.zeros(n, bool)
    if n > 1:
        same[1:] = (base[1:] == base[:-1]) & above[:-1]
        for rows in sel[:-1]:
            same[1:] &= rows[1:] == rows[:-1]
    return np.where(above & same, np.arange(n) - 1, -1)


def _condensation_base(p, t, z, rh, lay, sel):
    """Pressure, temperature and height of the saturated base of each selected level.

    The lifting condensation level (Bolton 1980) of the air at the layer's lowest
    cloudy level: ``p_L`` [Pa], ``T_L`` [K] and its height along the dry adiabat,
    ``z_L = z_b + c_p (T_b - T_L) / g`` [m]. A layer whose lowest level is saturated
    starts there; one flagged at a humidity below saturation starts higher, where
    its air saturates, so the liquid changes smoothly as the layer's lowest level
    crosses the cloud threshold.
    """
    rows = sel[:-1]
    at = rows + (lay.base_index[sel],)
    p_b, t_b, z_b, rh_b = p[at], t[at], z[at], rh[at]
    p_l, t_l = thermo.lifting_condensation_level(p_b, t_b, np.where(np.isfinite(rh_b), rh_b, 1.0))
    return p_l, t_l, z_b + CP_AIR / G * (t_b - t_l)


def _combine_liquid(lwc_model, lwc_diag, liquid_ok, air, all_air):
    """Take the larger of model and diagnosed liquid (never the sum) and say which."""
    lwc = np.where(liquid_ok, np.maximum(lwc_model, lwc_diag), 0.0)
    lwc = _in_air(lwc, air, all_air, np.nan)
    model_wins = lwc_model >= lwc_diag
    basis = np.where(
        liquid_ok & (lwc > 0),
        np.where(model_wins, codes.BASIS_MODEL, codes.BASIS_DIAGNOSED),
        codes.BASIS_NONE,
    ).astype(np.int8)
    return lwc, basis


def _updraft(s, o, cloud, lay):
    """Grid-mean ``w``, the convective-layer mask and the effective activation updraft."""
    n_lev = cloud.shape[-1]
    start = lay.base_index == np.arange(n_lev)
    w = (
        np.nan_to_num(s["vertical_velocity"])
        if "vertical_velocity" in s
        else np.zeros(cloud.shape)
    )
    absw = np.where(cloud, np.minimum(np.abs(w), 1e5), 0.0)
    top_i = np.maximum(lay.top_index, 0)
    base_i = np.maximum(lay.base_index, 0)
    layer_max_w = np.take_along_axis(_segment_running_max(absw, start), top_i, -1)
    convective = cloud & (layer_max_w >= o.convective_updraft_m_s)
    w_base = np.take_along_axis(absw, base_i, -1) + o.subgrid_updraft_m_s
    floor = np.where(convective, o.updraft_floor_convective_m_s, o.updraft_floor_stratiform_m_s)
    return w, convective, np.maximum(w_base, floor)


def _droplets(lwc, liquid_ok, w_eff, sel, o):
    """Droplet number (Twomey at the base), MVD where there is liquid, spectrum shape."""
    am = droplets.air_mass(o.air_mass)
    number = np.full(lwc.shape, np.nan)
    number[sel] = droplets.twomey_activation(w_eff[sel], c_per_cm3=am.c_per_cm3, k=am.k)[0]
    has_liquid = liquid_ok & (lwc >= clouds.IN_CLOUD_LWC)
    mvd = np.full(lwc.shape, np.nan)
    at = np.nonzero(has_liquid)  # sized only where there is liquid
    mvd[at] = droplets.median_volume_diameter(lwc[at], number[at], shape=am.shape)
    return number, mvd, np.where(liquid_ok, am.shape, np.nan)


def _glaciation(s, o, p, t, rho, lwc, w, cloud, lay, saturation):
    """Glaciation likelihood at cloudy levels (NaN elsewhere).

    ``saturation``: the saturation vapour pressures over water and over ice at ``t``
    (the one over ice may be None). [Pa]
    """
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
            saturation=tuple(None if e is None else e[gsel] for e in saturation),
        )
    return glac


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
