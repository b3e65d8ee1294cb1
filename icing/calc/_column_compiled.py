"""The column diagnosis up to its SLD step as compiled loops (optional: numba).

``diagnose_columns(..., compiled=True)`` (the grid path) hands its ground-up arrays
here. In numpy each step of the diagnosis is several passes over the whole block, even
where there is no cloud; :func:`icing.calc._column_loops.column_front` runs them as one
loop over columns and levels, and over the cloudy levels only where only they matter.
The numpy path (``column._front``) stays the reference: the loops transcribe it and
``tests/test_compiled_column.py`` holds the two equal (the masks, classes and indices
to the bit, the continuous fields within a stated tolerance). The saturation vapour
pressures and ``ln p`` of the block are numpy's own passes, so humidity, validity and
the cloud mask are numpy's to the bit.

Options and inputs not transcribed (an ice-nucleus model other than ``meyers92``, no
columns) return None: the caller then runs numpy, never something else.
"""

from __future__ import annotations

import numpy as np

from icing.calc import _special as special
from icing.calc import clouds, droplets, thermo
from icing.calc._column_input import _LEVEL_INPUTS
from icing.calc._compiled import compiled_loops

__all__ = ["compiled_front"]

#: The kernel's float outputs, in order (``lay_*``: the CloudLayers fields).
_FLOAT_OUT = (
    "rh",
    "q",
    "z",
    "rho",
    "lwc_model",
    "lwc_diag",
    "lwc",
    "number",
    "mvd",
    "shape",
    "glac",
    "lay_base_height",
    "lay_top_height",
    "lay_base_pressure",
    "lay_base_temperature",
    "lay_top_temperature",
)
_BOOL_OUT = ("valid", "below", "cloud", "convective", "liquid_ok", "model_glaciated", "near")


def ported(options, n_columns):
    """Tell whether the compiled loops transcribe the numpy path for these options."""
    return options.ice_nuclei_model == "meyers92" and n_columns > 0


def compiled_front(s, present, cols, o, es_w=None):
    """Return the diagnosis up to the SLD step as ``column._front`` does, or None.

    ``es_w``: the saturation vapour pressure over water at the temperatures when given.

    None: numba is missing or turned off, or the options are not transcribed
    (:func:`ported`); the caller then runs the numpy path.
    """
    loops = compiled_loops("icing.calc._column_loops")
    if loops is None or not ported(o, s["pressure"].shape[0]):
        return None
    a, f_ice = _block_arrays(s, o, es_w)
    p, t = a[0], a[1]
    kind, hum = _humidity_kind(s)
    aux = thermo.saturation_vapor_pressure(s["dewpoint"]) if kind == 1 else _DUMMY
    given = np.array([k in s for k in _LEVEL_INPUTS])
    inputs = tuple(_c(s[k]) if k in s else _DUMMY for k in _LEVEL_INPUTS) + (_c(aux), _c(hum))
    flags, column_values = _columns(s, present, cols, p, o)
    n, m = p.shape
    fo = tuple(np.empty((n, m)) for _ in _FLOAT_OUT)
    bo = tuple(np.empty((n, m), bool) for _ in _BOOL_OUT)
    io = (np.empty((n, m), np.int64), np.empty((n, m), np.int64))
    basis = np.empty((n, m), np.int8)
    freezing = np.empty(n)
    par = _parameters(o, loops.PAR)
    loops.column_front(a, kind, given, inputs, column_values, flags, par, fo, bo, io, basis,
                       freezing)  # fmt: skip
    f = dict(zip(_FLOAT_OUT, fo, strict=True)) | dict(zip(_BOOL_OUT, bo, strict=True))
    at = np.flatnonzero(f["near"])  # only these can pass an Appendix C envelope
    exceed = clouds.appendix_c_exceedances(
        f["lwc"].ravel()[at], t.ravel()[at], convective=f["convective"].ravel()[at]
    )
    lay = clouds.CloudLayers(
        io[0],
        io[1],
        f["lay_base_height"],
        f["lay_top_height"],
        f["lay_base_pressure"],
        f["lay_base_temperature"],
        f["lay_top_temperature"],
    )
    return {
        **{k: f[k] for k in ("z", "rh", "valid", "below", "cloud", "lwc", "lwc_model")},
        **{k: f[k] for k in ("lwc_diag", "glac", "model_glaciated", "number", "mvd", "shape")},
        "lay": lay,
        "basis": basis,
        "freezing": freezing,
        "exceed": exceed,
        "f_ice": f_ice,
    }


def _c(x):
    """``x`` as a read-only C-contiguous float view: one array type for every input.

    The inputs are mostly read-only views already (broadcast from the caller's
    arrays); numba compiles a loop once per array type, so all are passed read-only.
    """
    x = np.ascontiguousarray(x, dtype=np.float64).view()
    x.flags.writeable = False
    return x


_DUMMY = _c(np.zeros((1, 1)))  # an input not given (never read)


def _block_arrays(s, o, es_w=None):
    """Pressure, temperature, ``ln p`` and the saturation vapour pressures (numpy's).

    Also returns the water humidity of ice saturation as ``column._cloud_and_layers``
    gives it (None when neither the threshold nor the gap bridging needs it). ``es_w``:
    the saturation vapour pressure over water when the caller has it.
    """
    p, t = _c(s["pressure"]), _c(s["temperature"])
    with np.errstate(invalid="ignore", divide="ignore"):
        lnp = np.log(np.where(p > 0, p, np.nan))
    if es_w is None:
        es_w = thermo.saturation_vapor_pressure(t)
    es_i = thermo.saturation_vapor_pressure(t, phase="solid")
    f_ice = None
    if o.bridge_single_level_gaps or o.rh_threshold_model == "ice-water-blend":
        f_ice = thermo.ice_saturation_relative_humidity(t, saturation=(es_w, es_i))
    a = (p, t, lnp, es_w, es_i, es_i if f_ice is None else f_ice)
    return tuple(_c(x) for x in a), f_ice


def _humidity_kind(s):
    """Return the humidity ``column._humidity`` uses: (0 RH, 1 dewpoint, 2 specific), values."""
    if "relative_humidity" in s:
        return 0, s["relative_humidity"]
    if "dewpoint" in s:
        return 1, s["dewpoint"]
    return 2, s["specific_humidity"]


def _columns(s, present, cols, p, o):
    """Return the kernel's ``flags`` and per-column values (see ``column_front``)."""
    n = p.shape[0]
    has_sh, has_sp = "surface_height" in cols, "surface_pressure" in cols
    base = has_sp and has_sh and "height" not in s
    if has_sh and ("height" in s or not has_sp):
        below_mode = 1
    else:
        below_mode = 2 if has_sp else 0
    values = np.zeros((6, n))
    if has_sh:
        values[0] = cols["surface_height"]
    if has_sp:
        values[1] = cols["surface_pressure"]
    with np.errstate(invalid="ignore", divide="ignore"):
        if base:
            values[2] = np.log(cols["surface_pressure"][:, None])[:, 0]
        elif "height" not in s:  # the standard-atmosphere height of the largest pressure
            ok = np.isfinite(p) & (p > 0)
            top = np.max(np.where(ok, p, -np.inf), axis=-1, keepdims=True)
            values[3] = thermo.standard_atmosphere_height(top)[:, 0]
    ice_keys = [k for k in ("cloud_ice", "snow") if k in present]
    if "cloud_liquid" in present:
        values[4] = present["cloud_liquid"]
    for k in ice_keys:
        values[5] = np.maximum(values[5], present[k])
    flags = np.array(
        [
            "height" in s,
            base,
            below_mode,
            o.rh_threshold_model == "ice-water-blend",
            o.bridge_single_level_gaps,
            bool(ice_keys),
            "cloud_liquid" in s,
            "cloud_fraction" in s,
            "vertical_velocity" in s,
            "cloud_ice" in s,
            "snow" in s,
        ],
        np.int64,
    )
    return flags, values


def _parameters(o, names):
    """Return the kernel's parameters (``_column_loops.PAR``), formed as numpy forms them."""
    am = droplets.air_mass(o.air_mass)
    cs, ks, mu = np.float64(am.c_per_cm3), np.float64(am.k), np.asarray(am.shape, float)
    values = {
        "rh_warm": o.rh_threshold_warm,
        "rh_ice_fraction": o.rh_threshold_ice_fraction,
        "cloud_fraction_floor": o.cloud_fraction_floor,
        "factor_at_base": o.sub_adiabatic_factor_at_base,
        "scale_height": o.sub_adiabatic_scale_height_m,
        "floor_convective": o.sub_adiabatic_floor_convective,
        "max_step": o.moist_adiabat_step,
        "convective_updraft": o.convective_updraft_m_s,
        "subgrid_updraft": o.subgrid_updraft_m_s,
        "floor_stratiform_w": o.updraft_floor_stratiform_m_s,
        "floor_convective_w": o.updraft_floor_convective_m_s,
        "twomey_c": cs,
        "twomey_k": ks,
        "twomey_ckb": cs * ks * special.beta(1.5, ks / 2.0),  # droplets.twomey_activation
        "twomey_inv": 1.0 / (ks + 2.0),
        "gamma_m3": (mu + 1.0) * (mu + 2.0) * (mu + 3.0),  # droplets.gamma_slope
        "gamma_x50": special.gammaincinv(mu + 4.0, 0.5),  # droplets.median_volume_diameter
        "gamma_shape": mu,
        # clouds.glaciation_likelihood and ice_crystal_mass_growth_rate
        "crystal_mass": o.crystal_density_kg_m3 * 4.0 / 3.0 * np.pi * o.ice_crystal_radius_m**3,
        "growth_4pi_r": 4.0 * np.pi * np.asarray(o.ice_crystal_radius_m, dtype=float),
        "minus_residence": -o.glaciation_residence_time_s,
        "appendix_c_smallest": clouds._APPENDIX_C_SMALLEST,
    }
    return np.array([float(values[k]) for k in names])
