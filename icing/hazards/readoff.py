"""Read diagnosed columns off at flight altitudes, and the airframe's icing there.

Columns are diagnosed whole (:func:`icing.calc.diagnose_columns`); only then are
their fields read off at the targets (the flight altitude, the rows of the
altitude curtain), linearly between the two bracketing levels. Where several
candidate columns stand near a sample, the worst candidate is kept: a cloudy and
a dry sounding are never blended.
"""

from __future__ import annotations

import numpy as np

from icing import codes
from icing.calc.airframe import airframe_icing, airframe_severity
from icing.constants import IN_CLOUD_LWC
from icing.hazards._compiled import compiled_kernels

__all__ = [
    "read_off",
    "locate",
    "sorted_levels",
    "read_located",
    "subset",
    "icing_at",
    "severity_at",
    "worst_over_candidates",
    "take_last",
    "EXTRAPOLATE_M",
]

#: Depth below a column's lowest level over which its values are held (near-surface air). [m]
EXTRAPOLATE_M = 300.0

#: Fields of ColumnDiagnosis interpolated linearly in the vertical.
_LINEAR = (
    "temperature",
    "relative_humidity",
    "lwc",
    "lwc_model",
    "lwc_diagnosed",
    "droplet_number",
    "mvd",
    "glaciation",
    "sld_lwc",
    "sld_mvd",
)


def _vertical_coordinate(diag, reference):
    """Monotonic vertical coordinate of the diagnosed levels: height, or -ln p."""
    if reference == "pressure":
        return -np.log(np.asarray(diag.pressure, float))
    return np.asarray(diag.height, float)


def _bracket(zs, order, c, tz):
    """Levels around each target on the sorted coordinate ``zs`` (m, L), without (S, L) copies.

    Returns ``(lo, hi, z_lo, z_hi, z_min, i_lo, i_hi)``: positions in the sorted
    levels, their coordinates, the lowest level's coordinate and the levels'
    indices in the diagnosis. ``lo`` counts the levels at or below the target
    (less one, clipped), exactly as a comparison with every level would: a
    search over each column's finite levels (sorted first), plus the infinite
    ones that compare as at or below it.
    """
    m, nlev = zs.shape
    finite = np.isfinite(zs)
    n_fin = finite.sum(axis=-1)
    neg_inf = (zs == -np.inf).sum(axis=-1)
    pos_inf = (zs == np.inf).sum(axis=-1)
    base = c * nlev
    left = _count_on_grid(zs, finite, c, tz)
    if left is None:
        left = _count_binary(zs, finite, n_fin[c], base, tz)
    with np.errstate(invalid="ignore"):
        above = left + np.where(np.isnan(tz), 0, neg_inf[c])
        above = above + np.where(tz == np.inf, pos_inf[c], 0)
    lo = np.clip(above - 1, 0, nlev - 2) % nlev
    hi = (lo + 1) % nlev
    zf, of = zs.reshape(-1), order.reshape(-1)
    return lo, hi, zf[base + lo], zf[base + hi], zf[base], of[base + lo], of[base + hi]


def _count_binary(zs, finite, n, base, tz):
    """Finite levels at or below each target: a branchless binary search per target."""
    nlev = zs.shape[1]
    # the sorted finite levels, with +inf beyond each column's count: one gather a step
    flat = np.where(finite, zs, np.inf).reshape(-1)
    left = np.zeros(tz.shape, dtype=np.int64)
    step = 1 << max(int(nlev).bit_length() - 1, 0)
    with np.errstate(invalid="ignore"):
        while step:
            cand = left + step
            ok = (cand <= n) & (flat[base + np.minimum(cand, nlev) - 1] <= tz)
            left = np.where(ok, cand, left)
            step >>= 1
    return left


#: Levels on a grid of 2**-_GRID_BITS (every height above 2**-10 m read from a float32
#: field is) are searched as exact integers, all columns in one sorted array. [m]
_GRID_BITS = 33


def _count_on_grid(zs, finite, c, tz):
    """Finite levels at or below each target, as :func:`_count_binary` counts them.

    Where every finite level is a whole multiple of ``2**-_GRID_BITS``, the levels
    become exact integers (a power-of-two scaling), a level is at or below a target
    exactly when its integer is at or below the target's scaled floor, and one
    ``searchsorted`` over all columns (each lifted by its own stride, the non-finite
    levels last in it) counts them. Returns None where that does not hold (levels off
    the grid, or too large for 64-bit keys): the binary search then counts.
    """
    m = zs.shape[0]
    scale = 2.0**_GRID_BITS
    kz = np.where(finite, zs, 0.0) * scale
    top = float(np.abs(kz).max(initial=0.0))
    if not (top < 2.0**52 and np.array_equal(kz, np.floor(kz))):
        return None
    k = int(top) + 1  # level keys within [-(k - 1), k - 1]; targets clipped to [-k, k]
    stride = 2 * k + 4
    if stride * (m + 1) >= 2**62:
        return None
    lift = np.arange(m, dtype=np.int64)[:, None] * stride
    keys = (np.where(finite, kz.astype(np.int64), k + 1) + lift).reshape(-1)
    nan = np.isnan(tz)
    with np.errstate(over="ignore"):
        tk = np.clip(np.floor(np.where(nan, 0.0, tz) * scale), -k, k).astype(np.int64)
    # each target meets only its own column's keys; the sentinels (k + 1) stay above it
    left = np.searchsorted(keys, tk + lift[c, 0], side="right") - c * zs.shape[1]
    return np.where(nan, 0, left)


def sorted_levels(z):
    """Each column's level coordinates ascending, the non-finite ones last, and their order.

    Returns ``(zs, order)``, both (m, L): ``zs = take_along_axis(z, order, -1)``.
    """
    order = np.argsort(np.where(np.isfinite(z), z, np.inf), axis=-1)
    return np.take_along_axis(z, order, -1), order


def locate(diag, column_index, target, *, reference="msl", compiled=False):
    """Where each target stands in its column: the two levels around it and the weight.

    The first half of :func:`read_off` (same parameters); the result reads any fields
    with :func:`read_located`, and :func:`subset` keeps some of the targets (a grid run
    locates every altitude once, then reads the liquid ones again for the physics).
    ``compiled``: search in the compiled loop where numba is installed (a grid run:
    :mod:`icing.hazards._compiled`; the same values).
    """
    z = _vertical_coordinate(diag, reference)  # (m, L)
    m, nlev = z.shape
    zs, order = sorted_levels(z)
    ci = np.asarray(column_index)
    present = ci >= 0
    c = np.where(present, ci, 0)
    tgt = np.asarray(target, float)
    tz = -np.log(tgt) if reference == "pressure" else tgt
    # Between the ground and the lowest forecast level the lowest level's values hold,
    # over a limited depth only (a model's lowest level is its near-surface air).
    depth = np.log(1.0 + EXTRAPOLATE_M / 8000.0) if reference == "pressure" else EXTRAPOLATE_M
    loops = compiled_kernels() if compiled else None
    if loops is not None:
        return _locate_compiled(loops, zs, order, c, present, tz, depth)
    lo, hi, z_lo, z_hi, z_min, i_lo, i_hi = _bracket(zs, order, c, tz)
    with np.errstate(invalid="ignore", divide="ignore"):
        w = np.clip((tz - z_lo) / (z_hi - z_lo), 0.0, 1.0)
        inside = present & np.isfinite(tz) & (tz >= z_lo) & (tz <= z_hi)
        near_base = present & np.isfinite(tz) & (tz < z_min) & (tz >= z_min - depth) & (lo == 0)
    return {
        "shape": (m, nlev),
        "present": present,
        "w": w,
        "inside": inside | near_base,
        "f_lo": c * nlev + i_lo,
        "f_hi": c * nlev + i_hi,
    }


def _locate_compiled(loops, zs, order, c, present, tz, depth):
    """:func:`locate` by the compiled loop (flat targets in, shaped arrays out)."""
    shape = np.broadcast_shapes(c.shape, tz.shape)
    flat = [np.ascontiguousarray(np.broadcast_to(a, shape)).reshape(-1) for a in (c, present, tz)]
    w = np.empty(flat[0].size)
    inside = np.empty(flat[0].size, bool)
    f_lo = np.empty(flat[0].size, np.int64)
    f_hi = np.empty(flat[0].size, np.int64)
    order = np.ascontiguousarray(order, dtype=np.int64)
    loops.locate(
        zs, order, flat[0].astype(np.int64), *flat[1:], float(depth), w, inside, f_lo, f_hi
    )
    return {
        "shape": zs.shape,
        "present": flat[1].reshape(shape),
        "w": w.reshape(shape),
        "inside": inside.reshape(shape),
        "f_lo": f_lo.reshape(shape),
        "f_hi": f_hi.reshape(shape),
    }


def subset(located, at):
    """Return the located targets ``at`` (an index or mask), as :func:`locate` gives them."""
    return {k: (v if k == "shape" else v[at]) for k, v in located.items()}


def read_off(diag, column_index, target, *, reference="msl", fields=None):
    """Read diagnosed column fields off at target altitudes.

    Parameters
    ----------
    diag : ColumnDiagnosis
        Diagnosis of m columns, fields shaped (m, level).
    column_index : ndarray of int, shape S
        The column of every target (-1: none, which reads as invalid).
    target : ndarray, shape S
        Target height MSL [m] (``reference="msl"``) or pressure [Pa]
        (``reference="pressure"``).
    reference : {"msl", "pressure"}
    fields : collection of str, optional
        Only these outputs (``valid``, ``below_ground`` and ``height`` always come);
        default all. A grid run reads a few fields at every altitude first and the
        rest only where there is liquid.

    Returns
    -------
    dict of ndarray, shape S
        The ``_LINEAR`` fields interpolated linearly, ``sld_class`` the worse of the
        two bracketing levels, ``basis`` of the level with more liquid, ``pressure``
        log-linearly, ``valid`` (both levels valid, inside the column, column
        present) and ``below_ground``.
    """
    located = locate(diag, column_index, target, reference=reference)
    return read_located(diag, located, fields=fields)


def read_located(diag, located, *, fields=None, compiled=False):
    """Read fields off at targets located by :func:`locate` (see :func:`read_off`).

    ``compiled``: the linear fields and the validity in the compiled loops where numba
    is installed (a grid run: :mod:`icing.hazards._compiled`; the same values).
    """
    loops = compiled_kernels() if compiled else None
    if loops is not None:
        return _read_compiled(loops, diag, located, fields)
    return _read_numpy(diag, located, fields)


_SIZES = ("mvd", "sld_mvd", "droplet_number", "glaciation")


def _read_compiled(loops, diag, located, fields):
    """:func:`read_located` with the linear fields and the validity in compiled loops."""
    m, nlev = located["shape"]
    w, f_lo, f_hi = (np.ascontiguousarray(located[k]).reshape(-1) for k in ("w", "f_lo", "f_hi"))
    linear = [
        n for n in _LINEAR if fields is None or n in fields or (n == "lwc" and "cloud" in fields)
    ]
    rest = _read_numpy(diag, located, fields, skip=set(linear) | {"height", "valid"})
    out = {}
    for name in (*linear, "height"):
        a = np.asarray(getattr(diag, name))
        if a.shape != (m, nlev):
            a = np.broadcast_to(a, (m, nlev))
        mode = 2 if name in _SIZES else 1 if name.startswith(("lwc", "sld_lwc")) else 0
        got = np.empty(w.size)
        loops.lerp(np.ascontiguousarray(a, dtype=float).reshape(-1), f_lo, f_hi, w, mode, got)
        out[name] = got.reshape(located["w"].shape)
    valid, below = np.empty(w.size, bool), np.empty(w.size, bool)
    flags = [
        np.ascontiguousarray(np.broadcast_to(a, (m, nlev)), dtype=bool).reshape(-1)
        for a in (diag.valid, diag.below_ground)
    ]
    present, inside = (np.ascontiguousarray(located[k]).reshape(-1) for k in ("present", "inside"))
    loops.validity(*flags, f_lo, f_hi, w, present, inside, valid, below)
    out["valid"], out["below_ground"] = (
        valid.reshape(located["w"].shape),
        below.reshape(located["w"].shape),
    )
    if "lwc" in out:
        out["cloud"] = out["lwc"] >= IN_CLOUD_LWC
    return {**rest, **out}


def _read_numpy(diag, located, fields, skip=()):
    """:func:`read_located` in numpy (the reference); leaves out the fields in ``skip``."""
    m, nlev = located["shape"]
    w, f_lo, f_hi = located["w"], located["f_lo"], located["f_hi"]

    def pick(field):
        a = np.asarray(field)
        if a.shape != (m, nlev):
            a = np.broadcast_to(a, (m, nlev))
        a = a.reshape(-1)
        return a[f_lo], a[f_hi]

    want = None if fields is None else set(fields)
    out = {}
    for name in _LINEAR:
        if want is not None and name not in want and not (name == "lwc" and "cloud" in want):
            continue
        if name in skip:
            continue
        a, b = pick(getattr(diag, name))
        a = np.asarray(a, float)
        b = np.asarray(b, float)
        if name in _SIZES:
            # a size exists only where its population does: take the other level's size
            a = np.where(np.isfinite(a), a, b)
            b = np.where(np.isfinite(b), b, a)
        else:
            a = np.nan_to_num(a, nan=0.0) if name.startswith(("lwc", "sld_lwc")) else a
            b = np.nan_to_num(b, nan=0.0) if name.startswith(("lwc", "sld_lwc")) else b
        with np.errstate(invalid="ignore"):
            out[name] = a + w * (b - a)
    if want is None or "pressure" in want:
        pa, pb = pick(diag.pressure)
        with np.errstate(invalid="ignore", divide="ignore"):
            out["pressure"] = np.exp(np.log(pa) + w * (np.log(pb) - np.log(pa)))
    if "height" not in skip:
        ha, hb = pick(diag.height)
        with np.errstate(invalid="ignore"):
            out["height"] = ha + w * (hb - ha)
    if want is None or "sld_class" in want:
        sa, sb = pick(diag.sld_class)
        # GAP (-1) marks an unusable level; validity is carried by ``valid`` below
        out["sld_class"] = np.maximum(np.maximum(sa, sb), codes.SLD_NONE)
    if want is None or "spectrum_shape" in want:
        mu = np.broadcast_to(np.asarray(getattr(diag, "spectrum_shape", 2.0), float), (m, nlev))
        mu_a, mu_b = pick(mu)
        out["spectrum_shape"] = np.where(
            np.isfinite(mu_a), mu_a, np.where(np.isfinite(mu_b), mu_b, 2.0)
        )
    if want is None or "basis" in want:
        ba, bb = pick(diag.basis)
        la, lb = pick(diag.lwc)
        out["basis"] = np.where(np.nan_to_num(la) >= np.nan_to_num(lb), ba, bb)
    if "valid" not in skip:
        va, vb = pick(diag.valid)
        ga, gb = pick(diag.below_ground)
        out["below_ground"] = located["present"] & (ga & ((w < 0.5) | gb))
        out["valid"] = located["inside"] & va & vb & ~out["below_ground"]
    if "lwc" in out:
        out["cloud"] = out["lwc"] >= IN_CLOUD_LWC
    _flags(diag, pick, want, out, np.shape(w))
    return out


def _flags(diag, pick, want, out, shape):
    """Read the flags: glaciated by the model only where both levels are.

    Possible drizzle where either is (a stated possibility is never interpolated away).
    """
    for name, both in (("model_glaciated", True), ("possible_drizzle", False)):
        if want is not None and name not in want:
            continue
        flag = getattr(diag, name, None)
        if flag is None:
            out[name] = np.zeros(shape, bool)
            continue
        fa, fb = pick(np.asarray(flag, bool))
        out[name] = (fa & fb) if both else (fa | fb)


def icing_at(airframe, state, airspeed):
    """Airframe icing at read-off states; severity ``codes.GAP`` where a state is invalid.

    Returns
    -------
    (AirframeIcing, ndarray)
        The collector results and the severity with gaps marked.
    """
    result = airframe_icing(airframe, **_collector_inputs(state, airspeed))
    sev = np.where(state["valid"], result.severity, codes.GAP)
    return result, sev


def severity_at(airframe, state, airspeed, *, compiled=False):
    """Return the airframe's severity and accretion rate [mm/h] alone, as :func:`icing_at` does.

    :func:`icing.calc.airframe.airframe_severity`: only what sets the two (a grid's
    bands keep nothing else). Severity ``codes.GAP`` where a state is invalid.
    ``compiled``: its table lookups as compiled loops (the same values).
    """
    sev, rate = airframe_severity(
        airframe, **_collector_inputs(state, airspeed), compiled=compiled
    )
    return np.where(state["valid"], sev, codes.GAP), rate


def _collector_inputs(state, airspeed):
    """Return the collector physics' keywords of read-off states (no liquid where invalid)."""
    return {
        "lwc": np.where(state["valid"], state["lwc"], np.nan),
        "mvd": state["mvd"],
        "temperature": state["temperature"],
        "pressure": state["pressure"],
        "spectrum_shape": state.get("spectrum_shape", 2.0),
        "sld_lwc": np.nan_to_num(state["sld_lwc"]),
        "sld_mvd": state["sld_mvd"],
        "sld_class": state["sld_class"],
        "airspeed": airspeed,
        "relative_humidity": np.clip(np.nan_to_num(state["relative_humidity"], nan=1.0), 0, 1.2),
        "glaciation": state.get("glaciation"),
        "model_glaciated": state.get("model_glaciated"),
        "basis": state.get("basis"),
    }


def worst_over_candidates(sev, rate):
    """Index of the worst candidate along the last axis (severity, then rate)."""
    score = np.where(sev == codes.GAP, -1e12, sev * 1e6 + np.nan_to_num(rate))
    return np.argmax(score, axis=-1)


def take_last(a, k):
    """Pick ``a[..., k]`` per leading index (``k`` shaped like ``a`` without its last axis)."""
    a = np.asarray(a)
    return np.take_along_axis(a, k[..., None], -1)[..., 0]
