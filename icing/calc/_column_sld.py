"""The SLD step of the column diagnosis: :func:`icing.calc.sld.diagnose_sld` where it can matter.

``diagnose_columns`` hands its ground-up arrays here. Columns without cloud, model
hydrometeors or precipitation cannot hold SLD (a grid's clear columns, most of a
continental grid); they get the diagnosis's own answer for such a column without the
Bourgouin areas, the drizzle growth and the level scans, and only the others are
diagnosed. ``tests/test_column_speed_regression.py`` holds the result equal to the
diagnosis of every column.
"""

from __future__ import annotations

import numpy as np

from icing import codes
from icing.calc import sld
from icing.calc._sld_compiled import diagnose_sld_compiled

__all__ = ["column_sld"]


def column_sld(
    p, t, z, rh, cloud, lwc, number, lay, s, cols, valid, below, present, f_ice, o, compiled=False
):
    """Call :func:`icing.sld.diagnose_sld` on ground-up arrays; outputs keyed by field.

    Only the columns where SLD can arise are diagnosed (:func:`_sld_possible`); the
    others get the diagnosis's own answer for a column without cloud, hydrometeors or
    precipitation (:func:`_sld_quiet`), with no Bourgouin areas or drizzle to compute.
    ``compiled``: diagnose in the compiled loops where numba is installed
    (:mod:`icing.calc._sld_compiled`; the numpy path where they do not port the case).
    """
    rate = cols.get("precipitation_rate_mm_h")
    active = _sld_possible(s, cloud, rate)
    n_active = int(np.count_nonzero(active))
    given = _hydrometeors_given(present, p.shape[:-1])
    layer = (lay.top_temperature, lay.top_height, lay.base_height)
    if compiled:
        res = diagnose_sld_compiled(
            p, t, z, **_sld_arguments(rh, cloud, lwc, number, layer, s, rate, valid, below,
                                      given, f_ice, o), active=active,
        )  # fmt: skip
        if res is not None:
            return _sld_fields(res)
    if n_active == active.size:
        return _sld_diagnosed(p, t, z, rh, cloud, lwc, number, layer, s, rate, valid, below,
                              given, f_ice, o)  # fmt: skip
    out = _sld_quiet(p, t, z, valid, below)
    if n_active:
        at = np.flatnonzero(active)
        part = _sld_diagnosed(
            p[at], t[at], z[at], rh[at], cloud[at], lwc[at], number[at],
            tuple(a[at] for a in layer),
            {k: s[k][at] for k in ("rain", "snow", "cloud_ice") if k in s},
            None if rate is None else np.broadcast_to(rate, active.shape)[at],
            valid[at], below[at], None if given is None else given[at],
            None if f_ice is None else f_ice[at], o,
        )  # fmt: skip
        for k, v in part.items():
            out[k][at] = v
    return out


#: what diagnose_sld calls precipitation and model hydrometeors (sld.PRECIP_RATE_MIN,
#: sld.HYDROMETEOR_MIN): below both, and without cloud, no SLD can be diagnosed
_SLD_HYDROMETEORS = ("rain", "snow", "cloud_ice")


def _sld_possible(s, cloud, rate):
    """Columns where :func:`icing.sld.diagnose_sld` can find SLD or a precipitation type.

    Freezing rain needs precipitation (a rate above ``sld.PRECIP_RATE_MIN``, model rain
    or snow above ``sld.HYDROMETEOR_MIN``, or cloud) or model rain; drizzle needs cloud;
    a surface type needs a rate, model hydrometeors or drizzle. A column with none of
    them gets no SLD, no possible drizzle and the type "none".
    """
    active = cloud.any(axis=-1)
    for k in _SLD_HYDROMETEORS:
        if k in s:
            active |= (s[k] > sld.HYDROMETEOR_MIN).any(axis=-1)
    if rate is not None:
        with np.errstate(invalid="ignore"):
            active |= np.broadcast_to(np.asarray(rate) > sld.PRECIP_RATE_MIN, active.shape)
    return active


def _sld_quiet(p, t, z, valid, below):
    """Return the SLD outputs of columns without cloud, hydrometeors or precipitation.

    What :func:`icing.sld.diagnose_sld` gives them: class none (``codes.GAP`` at
    unusable levels above the ground), no SLD liquid (NaN at those levels), no sizes,
    no possible drizzle, surface type "none" (``codes.GAP`` without a usable level).
    ``tests/test_column_speed_regression.py`` holds the two equal.
    """
    with np.errstate(invalid="ignore"):
        usable = valid & np.isfinite(p) & np.isfinite(t) & np.isfinite(z) & (p > 0) & ~below
    gap = ~usable & ~below
    none = codes.PRECIP_TYPES.index("none")
    return {
        "sld_class": np.where(gap, codes.GAP, codes.SLD_NONE).astype(np.int8),
        "sld_lwc": np.where(gap, np.nan, 0.0),
        "sld_mvd": np.full(p.shape, np.nan),
        "sld_dmax": np.full(p.shape, np.nan),
        "possible_drizzle": np.zeros(p.shape, bool),
        "precip_type": np.where(usable.any(axis=-1), none, codes.GAP).astype(np.int8),
    }


def _sld_diagnosed(p, t, z, rh, cloud, lwc, number, layer, s, rate, valid, below, given, f_ice, o):
    """Run :func:`icing.sld.diagnose_sld` on ground-up arrays; outputs keyed by field.

    ``layer``: the top temperature, top height and base height of each level's layer.
    """
    res = sld.diagnose_sld(
        p, t, z, **_sld_arguments(rh, cloud, lwc, number, layer, s, rate, valid, below, given,
                                  f_ice, o)
    )  # fmt: skip
    return _sld_fields(res)


def _sld_arguments(rh, cloud, lwc, number, layer, s, rate, valid, below, given, f_ice, o):
    """Return the keyword arguments of :func:`icing.sld.diagnose_sld` after p, T and z."""
    return {
        "relative_humidity": rh,
        "cloud": cloud,
        "lwc": np.nan_to_num(lwc),
        "droplet_number": number,
        "cloud_top_temperature": layer[0],
        "cloud_top_height": layer[1],
        "cloud_base_height": layer[2],
        "precipitation_rate_mm_h": rate,
        "rain": s.get("rain"),
        "snow": s.get("snow"),
        "cloud_ice": s.get("cloud_ice"),
        "valid": valid,
        "below_ground": below,
        "drizzle_time_scale_s": o.drizzle_time_scale_s,
        "hydrometeors_given": given,
        "ice_saturation": f_ice,
    }


def _sld_fields(res):
    """Return the fields of an :class:`icing.sld.SLDDiagnosis` that the columns keep."""
    return {
        "sld_class": np.asarray(res.sld_class),
        "sld_lwc": np.asarray(res.sld_lwc, float),
        "sld_mvd": np.asarray(res.sld_mvd, float),
        "sld_dmax": np.asarray(res.sld_dmax, float),
        "possible_drizzle": np.asarray(res.possible_drizzle, bool),
        "precip_type": np.asarray(res.precip_type),
    }


def _hydrometeors_given(present, shape):
    """Per column: the model's rain or snow field was given (None: neither anywhere)."""
    if "rain" not in present and "snow" not in present:
        return None
    given = np.zeros(shape, bool)
    for k in ("rain", "snow"):
        if k in present:
            given |= present[k]
    return given
