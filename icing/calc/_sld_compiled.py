"""The SLD diagnosis in compiled loops (optional: numba), for large grids.

:func:`icing.calc.sld.diagnose_sld` works in whole-block numpy passes: some thirty
passes over a block's levels (Bourgouin areas, scans up and down the column, the
drizzle growth), the largest part of a grid's column physics. Where numba is
installed (the ``grid`` extra) and the caller asks for it, the same diagnosis runs as
one loop per column instead (:mod:`icing.calc._sld_loops`). The numpy function stays
the reference: the loops do the same comparisons and the same IEEE operations in the
same order (no fast-math); they differ from it only where numpy's vectorised
``exp``/``log``/``pow`` (SIMD, within a few units in the last place) and the C
library's differ, which the tests bound (relative 1e-12) and compare class by class.

Only the grid asks (``diagnose_columns(..., compiled=True)``): ``icing screen`` and
``icing profile`` diagnose a few hundred columns, where importing numba (about 0.3 s)
would cost more than it saves. ``ICING_COMPILED=0`` turns the loops off; the compiled
code is kept in the package's cache folder (:func:`icing.cachedir.prepare_compiled`).
What the loops do not port, the caller computes in numpy: :func:`diagnose_sld_compiled`
returns None for it.
"""

from __future__ import annotations

import functools

import numpy as np

from icing import codes
from icing.cachedir import load_compiled
from icing.calc import bourgouin, droplets, sld, thermo, warm_rain
from icing.constants import CP_AIR, RD, RHO_WATER, T0, G

__all__ = ["sld_kernel", "constants", "diagnose_sld_compiled"]


@functools.lru_cache(maxsize=1)
def sld_kernel():
    """Return the compiled loops (a namespace), or None without numba or when turned off."""
    return load_compiled(_import_loops)


def _import_loops():
    # optional heavy dependency (numba): only a grid run imports it, and only here
    from icing.calc import _sld_loops

    return _sld_loops


@functools.lru_cache(maxsize=1)
def constants():
    """Return the named constants of the numpy modules in the loops' order (floats, codes).

    Handed to the loops at every call rather than read by them: numba would freeze a
    module constant into its cached compilation and keep it after a change.
    """
    loops = sld_kernel()
    mc = thermo.METPY_CONSTANTS
    (t_lo, q_lo), (t_hi, q_hi) = sld._FZDZ_LWC_ENVELOPE
    floats = [
        T0,
        RD,
        bourgouin._KAPPA,
        CP_AIR,
        sld.PRECIP_RATE_MIN,
        sld.HYDROMETEOR_MIN,
        sld.NOMINAL_RAIN_RATE,
        sld.DRIZZLE_TOP_T_MIN,
        sld.ICE_ALOFT_T,
        sld.DRIZZLE_MIN_DEPTH,
        sld.DRIZZLE_LWC_MIN,
        sld.POSSIBLE_DRIZZLE_MAX_NUMBER,
        sld.POSSIBLE_DRIZZLE_FRACTION * sld.DRIZZLE_LWC_MIN,
        sld.FZDZ_DMAX,
        sld.FZRA_DMAX,
        sld._FZDZ_MVD,
        sld._DMAX_OVER_D0,
        t_lo,
        q_lo,
        t_hi,
        q_hi,
        bourgouin.PA_SNOW,
        bourgouin.PA_SURFACE_SNOW,
        bourgouin.NA_PELLETS_OFFSET,
        bourgouin.NA_SLOPE,
        np.pi * RHO_WATER * droplets.MP_INTERCEPT,  # as droplets.marshall_palmer
        droplets._X50_EXP,
        RHO_WATER,
        G,
        warm_rain.DRIZZLE_EMBRYO_DIAMETER,
        mc["sat_pressure_0c"],
        mc["T0"],
        mc["Rv"],
        mc["Lv"],
        mc["Ls"],
        mc["Cp_l"],
        mc["Cp_v"],
        mc["Cp_i"],
        *droplets._BEARD_B2,
    ]
    pt = codes.PRECIP_TYPES.index
    ints = [
        codes.GAP,
        codes.SLD_NONE,
        codes.SLD_DRIZZLE,
        codes.SLD_RAIN,
        pt("none"),
        pt("snow"),
        pt("freezing-drizzle"),
        pt("ice-pellets"),
        pt("freezing-rain"),
        pt("drizzle"),
        pt("rain"),
    ]
    assert len(floats) == loops.N_FLOAT and len(ints) == loops.N_CODE
    return np.array(floats, float), np.array(ints, np.int64)


def _ported():
    """Tell whether the drizzle embryo falls in Beard's regime 2 (the only one ported)."""
    return droplets._BEARD_D1 <= warm_rain.DRIZZLE_EMBRYO_DIAMETER < droplets._BEARD_D2


#: diagnose_sld's per-level inputs: (name, default where None, dtype)
_LEVEL = (
    ("pressure", None, float),
    ("temperature", None, float),
    ("height", None, float),
    ("lwc", np.nan, float),
    ("droplet_number", np.nan, float),
    ("cloud_top_temperature", np.nan, float),
    ("cloud_top_height", np.nan, float),
    ("cloud_base_height", np.nan, float),
    ("relative_humidity", np.nan, float),
)
_OPTIONAL = ("rain", "snow", "cloud_ice", "ice_saturation")


def diagnose_sld_compiled(pressure, temperature, height, *, active=None, **kwargs):
    """:func:`icing.calc.sld.diagnose_sld` in the compiled loops, or None.

    Takes the arguments of ``diagnose_sld`` (keywords as there) and ``active``: per
    column (shape ``(...)``), False for a column without cloud, hydrometeors or
    precipitation, which then gets the quiet answer of
    ``icing.calc._column_sld._sld_quiet`` (its ``melting_area`` and
    ``refreezing_area`` NaN: not computed). Returns None where the loops are not
    available (no numba, ``ICING_COMPILED=0``) or do not port the case (no level axis;
    a drizzle embryo outside Beard's regime 2): the caller then calls the reference.
    """
    loops = sld_kernel()
    if loops is None or not _ported():
        return None
    a = dict(kwargs, pressure=pressure, temperature=temperature, height=height)
    p_in = np.asarray(pressure, dtype=float)
    t_in = np.asarray(temperature, dtype=float)
    z_in = np.asarray(height, dtype=float)
    shape = np.broadcast_shapes(p_in.shape, t_in.shape, z_in.shape, np.shape(a["cloud"]))
    if len(shape) == 0 or shape[-1] == 0:
        return None
    m, n = int(np.prod(shape[:-1], dtype=int)), shape[-1]

    def level(name, default, dtype):
        x = a.get(name)
        x = np.full(shape, default, dtype) if x is None else np.asarray(x, dtype)
        return np.ascontiguousarray(np.broadcast_to(x, shape).reshape(m, n))

    def column(x, dtype):
        return np.ascontiguousarray(np.broadcast_to(np.asarray(x, dtype), shape[:-1]).reshape(m))

    inputs = tuple(level(name, default, dtype) for name, default, dtype in _LEVEL)
    flags = np.array([a.get(k) is not None for k in _OPTIONAL], bool)
    placeholder = np.zeros((1, 1))
    optional = tuple(
        level(k, np.nan, float) if given else placeholder
        for k, given in zip(_OPTIONAL, flags, strict=True)
    )
    rate = a.get("precipitation_rate_mm_h")
    given = a.get("hydrometeors_given")
    columns = (
        column(np.nan if rate is None else rate, float),
        column(flags[0] or flags[1] if given is None else given, bool),
        column(True if active is None else active, bool),
    )
    out = (
        np.empty((m, n), np.int8),
        *(np.empty((m, n)) for _ in range(4)),
        np.empty((m, n), bool),
        np.empty(m, np.int8),
        np.empty(m),
        np.empty(m),
        np.empty(m, bool),
    )
    c, ci = constants()
    loops.diagnose_block(
        inputs,
        optional,
        level("cloud", False, bool),
        level("valid", True, bool),
        level("below_ground", False, bool),
        columns,
        flags,
        float(a.get("drizzle_time_scale_s", 3600.0)),
        c,
        ci,
        out,
    )
    cls, s_lwc, s_mvd, s_dmax, drz, poss, ptype, melting, refreezing, complete = out
    lv, cv = shape, shape[:-1]
    return sld.SLDDiagnosis(
        sld_class=cls.reshape(lv),
        sld_lwc=s_lwc.reshape(lv),
        sld_mvd=s_mvd.reshape(lv),
        sld_dmax=s_dmax.reshape(lv),
        precip_type=ptype.reshape(cv),
        melting_area=melting.reshape(cv),
        refreezing_area=refreezing.reshape(cv),
        drizzle_content=drz.reshape(lv),
        complete=complete.reshape(cv),
        possible_drizzle=poss.reshape(lv),
    )
