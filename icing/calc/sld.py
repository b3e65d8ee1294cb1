"""Supercooled large drops: freezing rain and freezing drizzle in a column.

Two mechanisms, diagnosed level by level over arrays shaped (..., level):

* Freezing rain (melting process): precipitation melts in a warm layer aloft
  (T > 0 C) and falls, liquid, into a sub-freezing layer beneath. Whether the
  snow melts and whether the drops refreeze into ice pellets before a level is
  judged with Bourgouin's (2000) positive and negative areas. Drop sizes follow
  Marshall & Palmer (1948).
* Freezing drizzle (warm-rain process, no melting layer needed): collision-
  coalescence in a cloud with a warm top, no ice falling into it and few
  droplets (Huffman & Norman 1988; Rasmussen et al. 2002). The drizzle content is
  grown by the Khairoutdinov & Kogan (2000) autoconversion and accretion over its
  residence time in the layer (:func:`icing.calc.warm_rain.layer_drizzle`); its
  LWC, MVD and maximum size are bounded by the 14 CFR 25 Appendix O
  freezing-drizzle envelopes. Where the conditions of the climatologies hold but
  the growth stays marginal, the levels are flagged ``possible_drizzle``.

Neither is gated by the cloud mask: rain and drizzle fall through clear air
below cloud base. A level is an SLD level only where T <= 0 C.

Thresholds (source tags as in the project's reference list: [V] read in the
source, [M] from memory, [C] common practice, no source, [O] our choice):

- The Bourgouin (2000) area thresholds: :mod:`icing.calc.bourgouin`.
- ``PRECIP_RATE_MIN`` = 0.01 mm/h: precipitating [C].
- ``HYDROMETEOR_MIN`` = 1e-6 kg/kg: model rain, snow or ice present [C].
- ``NOMINAL_RAIN_RATE`` = 1 mm/h: the rate assumed when precipitation is inferred
  from cloud alone [C].
- ``DRIZZLE_TOP_T_MIN`` = -12 C: the coldest cloud top for the warm-rain process;
  Huffman & Norman (1988) give 0 to -10/-12 C [V]; the colder bound is taken so
  that more decks qualify [O, conservative].
- ``ICE_ALOFT_T`` = -12 C: cloud, or air saturated over ice, colder than this at or
  above a level counts as ice falling into it [O].
- ``DRIZZLE_MIN_DEPTH`` = 300 m: cloud depth for drizzle [C].
- ``DRIZZLE_LWC_MIN`` = 1e-5 kg/m3 (0.01 g/m3): the in-cloud liquid threshold of
  Korolev et al. (2003) [V], borrowed as the smallest drizzle content worth
  reporting [O].
- ``POSSIBLE_DRIZZLE_MAX_NUMBER`` = 100 cm-3: "few droplets" for possible freezing
  drizzle; Rasmussen et al. (2002) find drizzle forming at low droplet
  concentrations, about 100 cm-3 or fewer [M].
- ``POSSIBLE_DRIZZLE_FRACTION`` = 0.1: growth within a factor 10 of
  ``DRIZZLE_LWC_MIN`` is "marginal" [O].
- ``FZDZ_DMAX`` = 500 um: Appendix O freezing drizzle, Dmax 100-500 um [V for
  the structure].
- ``FZRA_DMAX`` = 2.2 mm: cap on the freezing-rain Dmax after Appendix O [M].
- Freezing-drizzle LWC envelope: 0.29 g/m3 at 0 C to 0.18 g/m3 at -25 C, linear,
  after Appendix O freezing drizzle MVD > 40 um [M]: the published figures could not
  be read here; check them before relying on it.
- Huffman & Norman (1988) tops 0 to -10 C with a dry layer above [V; also confirmed
  in a secondary source].
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass

import numpy as np

from icing import codes
from icing.calc import _special as special  # scipy.special, tabled for the usual runs
from icing.calc.bourgouin import (
    NA_PELLETS_OFFSET,
    NA_SLOPE,
    PA_SNOW,
    PA_SURFACE_SNOW,
    _rev_cummax,
    _rev_cummin,
    _take,
    warm_layer_areas,
)
from icing.calc.droplets import (
    combined_median_volume_diameter,
    marshall_palmer,
    marshall_palmer_from_lwc,
)
from icing.calc.thermo import air_density, ice_saturation_relative_humidity
from icing.calc.warm_rain import layer_drizzle
from icing.constants import IN_CLOUD_LWC as _IN_CLOUD_LWC
from icing.constants import T0

__all__ = [
    "SLDDiagnosis",
    "diagnose_sld",
    "appendix_o_class",
    "PRECIP_RATE_MIN",
    "HYDROMETEOR_MIN",
    "NOMINAL_RAIN_RATE",
    "DRIZZLE_TOP_T_MIN",
    "ICE_ALOFT_T",
    "DRIZZLE_MIN_DEPTH",
    "DRIZZLE_LWC_MIN",
    "POSSIBLE_DRIZZLE_MAX_NUMBER",
    "POSSIBLE_DRIZZLE_FRACTION",
    "FZDZ_DMAX",
    "FZRA_DMAX",
    "APPENDIX_O_MVD_SPLIT",
]

PRECIP_RATE_MIN = 0.01  # mm/h, common practice
HYDROMETEOR_MIN = 1e-6  # kg/kg, common practice
NOMINAL_RAIN_RATE = 1.0  # mm/h, common practice
DRIZZLE_TOP_T_MIN = T0 - 12.0  # K, Huffman & Norman (1988) range 0 to -10/-12 C
ICE_ALOFT_T = T0 - 12.0  # K, our choice
DRIZZLE_MIN_DEPTH = 300.0  # m, common practice
DRIZZLE_LWC_MIN = _IN_CLOUD_LWC  # constants.IN_CLOUD_LWC (Korolev et al. 2003)
POSSIBLE_DRIZZLE_MAX_NUMBER = 100e6  # m-3, Rasmussen et al. (2002), from memory
POSSIBLE_DRIZZLE_FRACTION = 0.1  # of DRIZZLE_LWC_MIN, our choice
FZDZ_DMAX = 500e-6  # m, 14 CFR 25 Appendix O
FZRA_DMAX = 2.2e-3  # m, 14 CFR 25 Appendix O, from memory
APPENDIX_O_MVD_SPLIT = 40e-6  # m, 14 CFR 25 Appendix O

#: Appendix O freezing drizzle (MVD > 40 um) LWC envelope [kg/m3] at 0 and -25 C [M].
_FZDZ_LWC_ENVELOPE = ((T0 - 25.0, 0.18e-3), (T0, 0.29e-3))
#: Largest-to-median diameter of an exponential spectrum: 99.9 % by mass over 50 %.
_DMAX_OVER_D0 = float(special.gammaincinv(4.0, 0.999) / special.gammaincinv(4.0, 0.5))
#: Drizzle population MVD: an exponential spectrum whose Dmax is FZDZ_DMAX [O].
_FZDZ_MVD = FZDZ_DMAX / _DMAX_OVER_D0
_BLOCK_LEVELS = 200_000  # levels per block of columns (bounds the temporaries' memory)
_PT = {name: i for i, name in enumerate(codes.PRECIP_TYPES)}


@dataclass(frozen=True)
class SLDDiagnosis:
    """The supercooled-large-drop population of a set of columns.

    Attributes
    ----------
    sld_class : numpy.ndarray of int8, shape (..., level)
        ``codes.SLD_NONE`` / ``SLD_DRIZZLE`` / ``SLD_RAIN``; ``codes.GAP`` (-1) at
        levels with unusable data (NaN, ``valid`` False). Below ground: SLD_NONE.
    sld_lwc : numpy.ndarray, shape (..., level)
        Liquid water content of the SLD population [kg m-3]; 0 where none, NaN at gaps.
    sld_mvd : numpy.ndarray, shape (..., level)
        Median volume diameter of the SLD population [m]; NaN where none.
    sld_dmax : numpy.ndarray, shape (..., level)
        Largest drop size worth considering [m]; NaN where none.
    precip_type : numpy.ndarray of int8, shape (...)
        Surface precipitation type, index into ``codes.PRECIP_TYPES``; ``codes.GAP``
        for a column without usable levels.
    melting_area : numpy.ndarray, shape (...)
        Bourgouin positive area of the warm layer that decides the surface type
        (elevated warm layer over a cold surface layer, or the surface warm layer)
        [J kg-1]; 0 where there is none, NaN for a gap column.
    refreezing_area : numpy.ndarray, shape (...)
        Bourgouin negative area of the surface-based cold layer beneath a warm layer
        [J kg-1]; 0 where there is no warm layer above a cold surface layer.
    drizzle_content : numpy.ndarray, shape (..., level)
        Diagnosed warm-rain drizzle water content reaching each level before the
        threshold and the envelope cap [kg m-3] (for inspection).
    possible_drizzle : numpy.ndarray of bool, shape (..., level)
        Possible freezing drizzle: a sub-freezing level at or below a warm-topped,
        deep enough, unseeded layer with few droplets (``POSSIBLE_DRIZZLE_MAX_NUMBER``)
        whose grown drizzle stays under ``DRIZZLE_LWC_MIN`` but within
        ``POSSIBLE_DRIZZLE_FRACTION`` of it; never where SLD is diagnosed.
    complete : numpy.ndarray of bool, shape (...)
        False where some above-ground level was unusable: the diagnosis then
        bridges the gap and a "none" there is less certain.
    """

    sld_class: np.ndarray
    sld_lwc: np.ndarray
    sld_mvd: np.ndarray
    sld_dmax: np.ndarray
    precip_type: np.ndarray
    melting_area: np.ndarray
    refreezing_area: np.ndarray
    drizzle_content: np.ndarray
    complete: np.ndarray
    possible_drizzle: np.ndarray


def appendix_o_class(
    sld_class, sld_mvd, *, sld_lwc=None, cloud_lwc=None, cloud_mvd=None, cloud_shape=2.0
):
    """Name the 14 CFR 25 Appendix O condition of an SLD population.

    Appendix O splits its freezing-drizzle and freezing-rain environments at an MVD
    of 40 um taken over the whole drop distribution. Given the cloud-droplet
    population too (``sld_lwc``, ``cloud_lwc``, ``cloud_mvd``), the MVD compared with
    40 um is that of cloud and SLD drops together
    (``icing.droplets.combined_median_volume_diameter``; the SLD population
    exponential, as Marshall-Palmer); otherwise the SLD population's own MVD, which
    for diagnosed drizzle (140 um) and rain is always above 40 um.

    Parameters
    ----------
    sld_class : array_like of int
        ``codes.SLD_*`` (``codes.GAP`` allowed).
    sld_mvd : array_like
        Median volume diameter of the SLD population. [m]
    sld_lwc : array_like, optional
        LWC of the SLD population. [kg m-3]
    cloud_lwc, cloud_mvd : array_like, optional
        LWC [kg m-3] and MVD [m] of the cloud droplets at the same place.
    cloud_shape : array_like, optional
        Gamma shape mu of the cloud droplets. [1]

    Returns
    -------
    numpy.ndarray of str
        ``"none"``, ``"freezing-drizzle MVD<40um"``, ``"freezing-drizzle MVD>40um"``,
        ``"freezing-rain MVD<40um"``, ``"freezing-rain MVD>40um"``, or ``"gap"``. An
        SLD class with a NaN MVD is put in the larger-drop (> 40 um) class.

    References
    ----------
    14 CFR Part 25, Appendix O, Part I (freezing drizzle and freezing rain
    environments, each split at an MVD of 40 um).

    Examples
    --------
    >>> appendix_o_class([0, 1, 2], [np.nan, 30e-6, 900e-6]).tolist()
    ['none', 'freezing-drizzle MVD<40um', 'freezing-rain MVD>40um']
    >>> appendix_o_class(1, 140e-6, sld_lwc=0.02e-3, cloud_lwc=0.4e-3, cloud_mvd=20e-6).tolist()
    'freezing-drizzle MVD<40um'
    """
    c = np.asarray(sld_class)
    m = np.asarray(sld_mvd, dtype=float)
    if sld_lwc is not None and cloud_lwc is not None and cloud_mvd is not None:
        m = combined_median_volume_diameter(
            cloud_lwc, cloud_mvd, sld_lwc, m, shape_a=cloud_shape, shape_b=0.0
        )
    c, m = np.broadcast_arrays(c, m)
    small = m < APPENDIX_O_MVD_SPLIT
    suffix = np.where(small, " MVD<40um", " MVD>40um")
    base = np.asarray(codes.words(c, codes.SLD_CLASSES, gap="gap"), dtype=object)
    out = np.where(c > codes.SLD_NONE, base.astype(str) + suffix, base.astype(str))
    return out.astype(object)


def _take_or_view(a, idx):
    """Reorder ``a`` along levels by ``idx``; return ``a`` itself where ``idx`` is None."""
    return a if idx is None else np.take_along_axis(a, idx, axis=-1)


def _level_array(x, shape, default, dtype=float):
    if x is None:
        return np.full(shape, default, dtype=dtype)
    return np.broadcast_to(np.asarray(x, dtype=dtype), shape)


def diagnose_sld(
    pressure,
    temperature,
    height,
    *,
    relative_humidity,
    cloud,
    lwc,
    droplet_number,
    cloud_top_temperature,
    cloud_top_height,
    cloud_base_height,
    precipitation_rate_mm_h=None,
    rain=None,
    snow=None,
    cloud_ice=None,
    valid=None,
    below_ground=None,
    drizzle_time_scale_s=3600.0,
    hydrometeors_given=None,
    ice_saturation=None,
):
    """Diagnose freezing rain and freezing drizzle level by level.

    Parameters
    ----------
    pressure, temperature, height : array_like, shape (..., level)
        Pressure [Pa], temperature [K] and height [m] of every level, in either
        order (sorted internally by height; outputs keep the input order).
    relative_humidity : array_like, shape (..., level)
        Relative humidity over water [1]. Used to find air subsaturated over ice, in
        which ice falling from a cloud aloft sublimates before it can seed a deck
        below (NaN counts as dry). Sub-cloud evaporation of drizzle and rain is not
        modelled (conservative).
    cloud : array_like of bool, shape (..., level)
        Cloud mask.
    lwc : array_like, shape (..., level)
        Cloud liquid water content. [kg m-3]
    droplet_number : array_like, shape (..., level)
        Cloud droplet number. [m-3]
    cloud_top_temperature, cloud_top_height, cloud_base_height : array_like, (..., level)
        Top temperature [K], top and base heights [m] of the cloud layer holding
        each level (NaN outside cloud).
    precipitation_rate_mm_h : array_like, shape (...), optional
        Surface (or column) precipitation rate. [mm h-1]
    rain, snow, cloud_ice : array_like, shape (..., level), optional
        Model rain, snow and cloud-ice mixing ratios. [kg kg-1]
    valid : array_like of bool, shape (..., level), optional
        False marks unusable levels (also any level with NaN p, T or z).
    below_ground : array_like of bool, shape (..., level), optional
        Levels under the surface; excluded from the physics.
    drizzle_time_scale_s : float, optional
        Longest residence time of drizzle in a layer. [s]
    hydrometeors_given : array_like of bool, shape (...), optional
        Per column: the model's rain or snow field was given (a profile set may
        mix columns with and without them). Default: every column when ``rain`` or
        ``snow`` is given, none otherwise.
    ice_saturation : array_like, shape (..., level), optional
        ``thermo.ice_saturation_relative_humidity(temperature)`` when the caller has
        it already (saves computing it again).

    Returns
    -------
    SLDDiagnosis

    Notes
    -----
    **Areas.** Each layer between adjacent usable levels contributes the positive
    and negative Bourgouin areas of ``bourgouin_layer_areas``. For a sub-freezing
    level beneath a warm layer, PA is the positive area of the nearest warm layer
    above it and NA the negative area between that warm layer's base and the level.

    **Freezing rain** at a level where: T <= 0 C; a warm layer lies above with
    ``PA >= PA_SNOW`` (the snow melts at least partly); ``NA <= 66 + 0.66 PA`` (not
    all drops have refrozen by this level: Bourgouin's ice-pellet line, the mixed
    band counted as freezing rain); and precipitation is falling: a rate above
    ``PRECIP_RATE_MIN``, model rain or snow above ``HYDROMETEOR_MIN`` at or above the
    level, or -- only when the column carries neither a rate nor rain/snow fields --
    cloud at or above the warm layer. Model rain at a sub-freezing level beneath a
    melting layer is freezing rain whatever the areas say (the model's own
    microphysics kept it liquid; conservative). Deep cold layers give ice pellets at the
    surface while the upper part of the cold layer still holds supercooled rain,
    which is what ice pellets at the ground imply aloft.

    **Rain drop sizes**: the model's rain content wins where the model has rain at
    the level (Marshall-Palmer inverted for Lambda from the content); elsewhere the
    Marshall-Palmer spectrum of the precipitation rate, or of ``NOMINAL_RAIN_RATE``
    where no rate above ``PRECIP_RATE_MIN`` is given (precipitation inferred from
    cloud or from model hydrometeors higher up); rates above 100 mm/h are sized at
    100 mm/h, the limit of ``marshall_palmer``. Never a blend of the two.
    ``sld_dmax`` is the 99.9 % mass quantile of the exponential spectrum
    (3.5 D0), capped at ``FZRA_DMAX`` but never below D0.

    **Freezing drizzle**: in cloud levels whose layer has a top no colder than
    ``DRIZZLE_TOP_T_MIN``, a depth of at least ``DRIZZLE_MIN_DEPTH`` and no ice falling
    into the level (model cloud ice or snow above ``HYDROMETEOR_MIN``, or cloud colder
    than ``ICE_ALOFT_T``, at or above the level with no ice-subsaturated clear air in
    between to sublimate the crystals), drizzle grows by autoconversion and accretion
    (Khairoutdinov & Kogan 2000) over its residence time in the layer above the
    level (:func:`icing.calc.warm_rain.layer_drizzle`, at most
    ``drizzle_time_scale_s``). Drizzle falls: each level receives the largest
    content grown at or above it (no evaporation, no summation). Levels with
    T <= 0 C receiving at least ``DRIZZLE_LWC_MIN`` are
    freezing drizzle, with LWC capped by the Appendix O envelope at the level's
    temperature, Dmax = ``FZDZ_DMAX`` and the MVD of an exponential spectrum with that
    Dmax (140 um). Model rain at a sub-freezing level with no melting layer above is
    freezing drizzle with the model's content (not capped). Where both mechanisms
    apply, freezing rain wins.

    **Surface type** (lowest usable level), from the precipitation's origin: it is
    of ice origin where the column holds ice (model cloud ice or snow above
    ``HYDROMETEOR_MIN``, or cloud colder than ``ICE_ALOFT_T``), else liquid (warm
    rain). Cold surface: freezing rain, else freezing drizzle, else ice pellets
    (warm layer above but refrozen), else snow (ice origin) or freezing drizzle
    (liquid origin); warm surface: snow if the precipitation is of ice origin,
    there is cold air aloft and the surface warm layer's area is below
    ``PA_SURFACE_SNOW``; drizzle if it is warm-rain drizzle (liquid origin,
    drizzle at the ground); else rain. Snow, rain and drizzle need evidence of
    precipitation (a rate, model rain/snow or diagnosed drizzle); cloud alone
    never makes them, only the melting-layer inference for freezing rain and ice
    pellets. The three-layer cases of Bourgouin (warm layer
    over a cold one over a warm surface layer) are reduced to the surface layer.

    References
    ----------
    Bourgouin, P. (2000), Wea. Forecasting 15, 583-592.
    Marshall, J. S. & Palmer, W. McK. (1948), J. Meteor. 5, 165-166.
    Huffman, G. J. & Norman, G. A. (1988), Mon. Wea. Rev. 116, 2172-2182.
    Rasmussen, R. M. et al. (2002), J. Atmos. Sci. 59, 837-860.
    Khairoutdinov, M. & Kogan, Y. (2000), Mon. Wea. Rev. 128, 229-243.
    Korolev, A. V. et al. (2003), QJRMS 129, 39-65.
    14 CFR Part 25, Appendix O.

    Examples
    --------
    A warm nose (+3 C near 1.5 km) over a shallow cold surface layer, in rain:

    >>> z = np.array([0.0, 300.0, 600.0, 1000.0, 1500.0, 2000.0, 2500.0, 3000.0])
    >>> t = 273.15 + np.array([-3.0, -2.0, -0.5, 1.5, 3.0, 1.0, -2.0, -5.0])
    >>> p = 101325.0 * np.exp(-z / 8000.0)
    >>> no = np.zeros_like(z, dtype=bool)
    >>> nan = np.full_like(z, np.nan)
    >>> d = diagnose_sld(p, t, z, relative_humidity=np.ones_like(z), cloud=no,
    ...                  lwc=np.zeros_like(z), droplet_number=nan,
    ...                  cloud_top_temperature=nan, cloud_top_height=nan,
    ...                  cloud_base_height=nan, precipitation_rate_mm_h=1.0)
    >>> d.sld_class.tolist()
    [2, 2, 2, 0, 0, 0, 0, 0]
    >>> codes.PRECIP_TYPES[int(d.precip_type)]
    'freezing-rain'
    """
    p_in = np.asarray(pressure, dtype=float)
    t_in = np.asarray(temperature, dtype=float)
    z_in = np.asarray(height, dtype=float)
    shape = np.broadcast_shapes(p_in.shape, t_in.shape, z_in.shape, np.shape(cloud))
    if len(shape) == 0 or shape[-1] == 0:
        raise ValueError(
            f"diagnose_sld needs arrays with a level axis (..., level) of at least one "
            f"level; got shape {shape}"
        )
    level = {
        "pressure": p_in,
        "temperature": t_in,
        "height": z_in,
        "relative_humidity": relative_humidity,
        "cloud": cloud,
        "lwc": lwc,
        "droplet_number": droplet_number,
        "cloud_top_temperature": cloud_top_temperature,
        "cloud_top_height": cloud_top_height,
        "cloud_base_height": cloud_base_height,
        "rain": rain,
        "snow": snow,
        "cloud_ice": cloud_ice,
        "valid": valid,
        "below_ground": below_ground,
        "ice_saturation": ice_saturation,
    }
    args = {k: (None if v is None else np.broadcast_to(v, shape)) for k, v in level.items()}
    args["precipitation_rate_mm_h"] = (
        None
        if precipitation_rate_mm_h is None
        else np.broadcast_to(np.asarray(precipitation_rate_mm_h, dtype=float), shape[:-1])
    )
    tau = float(drizzle_time_scale_s)
    given = rain is not None or snow is not None
    args["hydrometeors_given"] = np.broadcast_to(
        np.asarray(given if hydrometeors_given is None else hydrometeors_given, bool),
        shape[:-1],
    )
    # blocks of columns along the first axis bound the memory of the temporaries
    rows = max(1, _BLOCK_LEVELS // max(1, int(np.prod(shape[1:]))))
    if len(shape) == 1 or shape[0] <= rows:
        return _diagnose_rows(args, tau)
    parts = [
        _diagnose_rows({k: (None if v is None else v[i : i + rows]) for k, v in args.items()}, tau)
        for i in range(0, shape[0], rows)
    ]
    return SLDDiagnosis(
        **{
            f.name: np.concatenate([getattr(b, f.name) for b in parts], axis=0)
            for f in dataclasses.fields(SLDDiagnosis)
        }
    )


def _diagnose_rows(a, drizzle_time_scale_s):
    """Diagnose a block, sorting the levels only of the columns that need it.

    A column needs its levels reordered when an unusable level (below the ground, or
    missing) lies under a usable one; a block of a mountainous grid has a few such
    columns among many that do not. Those are diagnosed apart, so the others keep
    their levels in place (no sort, no gathers); columns are independent, so the
    result is the same as one diagnosis of the whole block.
    """
    shape = np.broadcast_shapes(*(np.shape(v) for v in (a["pressure"], a["temperature"])))
    if len(shape) != 2:
        return _diagnose_block(a, drizzle_time_scale_s)
    key = np.where(_usable_levels(a, shape), a["height"], np.inf)
    need = ~np.all(key[:, 1:] >= key[:, :-1], axis=1)
    n_need = int(np.count_nonzero(need))
    if n_need in (0, shape[0]):
        return _diagnose_block(a, drizzle_time_scale_s)
    parts = []
    for rows in (np.flatnonzero(~need), np.flatnonzero(need)):
        sub = {
            k: (None if v is None else np.broadcast_to(v, _full(k, shape))[rows])
            for k, v in a.items()
        }
        parts.append((rows, _diagnose_block(sub, drizzle_time_scale_s)))
    out = {}
    for f in dataclasses.fields(SLDDiagnosis):
        first = getattr(parts[0][1], f.name)
        arr = np.empty((shape[0],) + first.shape[1:], dtype=first.dtype)
        for rows, d in parts:
            arr[rows] = getattr(d, f.name)
        out[f.name] = arr
    return SLDDiagnosis(**out)


def _full(name, shape):
    """Return the shape of argument ``name`` in a block shaped ``shape`` (no levels: columns)."""
    return shape[:-1] if name in ("precipitation_rate_mm_h", "hydrometeors_given") else shape


def _usable_levels(a, shape):
    """Levels with valid, finite pressure, temperature and height, above the ground."""
    p_in, t_in, z_in = a["pressure"], a["temperature"], a["height"]
    valid_in = _level_array(a["valid"], shape, True, bool)
    below_in = _level_array(a["below_ground"], shape, False, bool)
    finite = np.isfinite(p_in) & np.isfinite(t_in) & np.isfinite(z_in) & (p_in > 0)
    return valid_in & finite & ~below_in


def _diagnose_block(a, drizzle_time_scale_s):
    """Diagnose one block of columns (``a``: broadcast arrays or None, see diagnose_sld)."""
    b = _sorted_block(a)
    p, t = b["p"], b["t"]
    with np.errstate(invalid="ignore", divide="ignore"):
        rho = air_density(p, t)
        areas = warm_layer_areas(b["usable"], p, t)
        precip, hydro = _precipitation(a, b, areas)
        fzra, melted, model_rain, q_rain = _freezing_rain(a, b, areas, precip, rho)
        ra_lwc, ra_mvd, ra_dmax = _rain_sizes(a, b, model_rain, q_rain)
        seeded, ice_origin = _seeded(b)
        drizzle, possible = _drizzle_content(b, rho, seeded, drizzle_time_scale_s)
        # model rain at a sub-freezing level without a melting layer above: warm-rain
        # drizzle by the model's own microphysics, taken at its word with its content
        model_drizzle = areas["cold"] & model_rain & ~areas["warm_above"]
        fzdz = areas["cold"] & ((drizzle >= DRIZZLE_LWC_MIN) | model_drizzle) & ~fzra
        s_lwc = _sld_content(t, fzra, fzdz, ra_lwc, drizzle, model_drizzle, q_rain)
        possible &= areas["cold"] & ~fzra & ~fzdz
    # ---- per-level results (sorted order)
    cls = np.where(fzra, codes.SLD_RAIN, np.where(fzdz, codes.SLD_DRIZZLE, codes.SLD_NONE))
    s_mvd = np.where(fzra, ra_mvd, np.where(fzdz, _FZDZ_MVD, np.nan))
    s_dmax = np.where(fzra, ra_dmax, np.where(fzdz, FZDZ_DMAX, np.nan))
    ptype, melting, refreezing = _surface_type(
        b, areas, precip, hydro, melted, fzra, fzdz, drizzle, ice_origin
    )
    return _unsorted_result(
        b, cls, s_lwc, s_mvd, s_dmax, drizzle, possible, ptype, melting, refreezing
    )


def _sorted_block(a):
    """Usable levels first, by height (unusable ones after them), and the sorted inputs.

    Levels that already come in that order (the usual case) skip the sort: a stable
    sort of non-decreasing keys is the identity.
    """
    p_in, t_in, z_in = a["pressure"], a["temperature"], a["height"]
    shape = p_in.shape
    below_in = _level_array(a["below_ground"], shape, False, bool)
    usable_in = _usable_levels(a, shape)
    key = np.where(usable_in, z_in, np.inf)
    if np.all(key[..., 1:] >= key[..., :-1]):
        order = inverse = None
    else:
        order = np.argsort(key, axis=-1, kind="stable")
        inverse = np.argsort(order, axis=-1, kind="stable")
    del key

    def srt(name, default=np.nan, dtype=float):
        return _take_or_view(_level_array(a[name], shape, default, dtype), order)

    all_usable = bool(usable_in.all())  # the usual case: no masking needed
    u = _take_or_view(usable_in, order)
    p, t = _take_or_view(p_in, order), _take_or_view(t_in, order)
    if not all_usable:
        p, t = np.where(u, p, np.nan), np.where(u, t, np.nan)
    return {
        "shape": shape,
        "nlev": shape[-1],
        "order": order,
        "inverse": inverse,
        "all_usable": all_usable,
        "usable_in": usable_in,
        "below_in": below_in,
        "gap_in": ~usable_in & ~below_in,
        "usable": u,
        "p": p,
        "t": t,
        "cloud": srt("cloud", False, bool) & u,
        "lwc": srt("lwc"),
        "droplet_number": srt("droplet_number"),
        "cloud_top_temperature": srt("cloud_top_temperature"),
        "cloud_top_height": srt("cloud_top_height"),
        "cloud_base_height": srt("cloud_base_height"),
        "rain": srt("rain", 0.0),
        "snow": srt("snow", 0.0),
        "cloud_ice": srt("cloud_ice", 0.0),
        "relative_humidity": srt("relative_humidity"),
        "ice_saturation": None if a["ice_saturation"] is None else srt("ice_saturation"),
        "idx": np.broadcast_to(np.arange(shape[-1]), shape),
        "n_use": u.sum(axis=-1),
        "rate": _column_rate(a, shape),
        "z": _take_or_view(z_in, order),
        "hydrometeors_given": a["hydrometeors_given"],
    }


def _precipitation(a, b, areas):
    """Is precipitation falling at each level? And model hydrometeors per level."""
    shape, u, rate = b["shape"], b["usable"], b["rate"]
    rate_flag = (rate > PRECIP_RATE_MIN)[..., None]
    hydro = np.zeros(shape, dtype=bool)
    if a["rain"] is not None:
        hydro |= b["rain"] > HYDROMETEOR_MIN
    if a["snow"] is not None:
        hydro |= b["snow"] > HYDROMETEOR_MIN
    hydro &= u
    hydro_above = _rev_cummax(hydro.astype(np.int8)).astype(bool)
    no_info = (~np.isfinite(rate) & ~b["hydrometeors_given"])[..., None]
    cloud_above = _rev_cummax(b["cloud"].astype(np.int8)).astype(bool)
    cloud_above_warm = areas["warm_above"] & _take(cloud_above, areas["kw_c"])
    return rate_flag | hydro_above | (no_info & cloud_above_warm), hydro


def _column_rate(a, shape):
    """Per-column precipitation rate [mm/h] (NaN where none was given)."""
    rate = a["precipitation_rate_mm_h"]
    if rate is None:
        return np.full(shape[:-1], np.nan)
    return np.broadcast_to(np.asarray(rate, dtype=float), shape[:-1])


def _freezing_rain(a, b, areas, precip, rho):
    """Freezing-rain levels (Bourgouin's verdict, or model rain under a melting layer)."""
    u, shape = b["usable"], b["shape"]
    pa, na, warm_above = areas["pa"], areas["na"], areas["warm_above"]
    na_limit = NA_PELLETS_OFFSET + NA_SLOPE * pa
    melted = warm_above & (pa >= PA_SNOW)
    q_rain = b["rain"] * rho
    model_rain = (
        (b["rain"] > HYDROMETEOR_MIN) & u if a["rain"] is not None else np.zeros(shape, bool)
    )
    # Bourgouin's verdict, or the model's own supercooled rain beneath a melting layer
    fzra = areas["cold"] & ((melted & precip & (na <= na_limit)) | (model_rain & warm_above))
    return fzra, melted, model_rain, q_rain


def _rain_sizes(a, b, model_rain, q_rain):
    """Rain LWC, MVD and Dmax per level: the model's content where it has rain, else MP."""
    shape, rate = b["shape"], b["rate"]
    # Marshall-Palmer holds to 100 mm/h (droplets.marshall_palmer); heavier rates
    # are sized at that limit rather than left without a size
    rate_eff = np.where(rate > PRECIP_RATE_MIN, np.minimum(rate, 100.0), NOMINAL_RAIN_RATE)
    # one spectrum per column (the rate is per column), spread over its levels
    lwc_mp, d0_mp = (np.broadcast_to(v[..., None], shape) for v in marshall_palmer(rate_eff))
    if a["rain"] is None:  # no model rain anywhere: the rate's spectrum everywhere
        ra_lwc, ra_mvd = lwc_mp, d0_mp
    else:
        d0_model = np.full(shape, np.nan)
        at = np.nonzero(model_rain)  # sized only where there is rain
        d0_model[at] = marshall_palmer_from_lwc(q_rain[at])[0]
        ra_lwc = np.where(model_rain, q_rain, lwc_mp)
        ra_mvd = np.where(model_rain, d0_model, d0_mp)
    ra_dmax = np.maximum(np.minimum(_DMAX_OVER_D0 * ra_mvd, FZRA_DMAX), ra_mvd)
    return ra_lwc, ra_mvd, ra_dmax


def _ice_saturation(b, at):
    """Water humidity of ice-saturated air at the levels ``at`` (given, else computed)."""
    given = b["ice_saturation"]
    return given[at] if given is not None else ice_saturation_relative_humidity(b["t"][at])


def _seeded(b):
    """Levels seeded by ice (at or above, no ice-subsaturated clear air in between).

    Returns the seeded levels and, per column, whether the column holds any ice
    (the precipitation's origin for the surface type).
    """
    u, t, cld, nlev, idx = b["usable"], b["t"], b["cloud"], b["nlev"], b["idx"]
    rh_s = b["relative_humidity"]
    cold_aloft = u & (t < ICE_ALOFT_T)
    ice_sat = np.zeros(t.shape, bool)
    # ice saturation is above 40 % over water down to about -90 C: judge moister levels
    at = np.nonzero(cold_aloft & ~cld & (rh_s >= 0.4))
    ice_sat[at] = rh_s[at] >= _ice_saturation(b, at)
    # model ice or snow; cloud, or air saturated over ice, colder than ICE_ALOFT_T
    ice_flag = (
        (b["cloud_ice"] > HYDROMETEOR_MIN)
        | (b["snow"] > HYDROMETEOR_MIN)
        | (cold_aloft & (cld | ice_sat))
    )
    ice_flag &= u
    # crystals fall until air subsaturated over ice (not cloud, no ice) sublimates them
    first_ice = _rev_cummin(np.where(ice_flag, idx, nlev))
    # dry air matters only below some ice: judge the humidity at those levels alone
    dry = u & ~cld & ~ice_flag & (first_ice < nlev)
    at = np.nonzero(dry)
    # NaN humidity counts as dry
    dry[at] = ~(rh_s[at] >= _ice_saturation(b, at))
    first_dry = _rev_cummin(np.where(dry, idx, nlev))
    # ice at or above, with no dry gap between; and any ice in the column
    return first_ice < first_dry, first_ice[..., 0] < nlev


def _drizzle_content(b, rho, seeded, drizzle_time_scale_s):
    """Warm-rain drizzle reaching each level [kg m-3], and the possible-drizzle levels.

    Drizzle grows in cloud levels of warm-topped (``DRIZZLE_TOP_T_MIN``), deep enough
    (``DRIZZLE_MIN_DEPTH``), unseeded layers (:func:`icing.calc.warm_rain.layer_drizzle`).
    Where those layers also have few droplets (``POSSIBLE_DRIZZLE_MAX_NUMBER``) but
    the drizzle grown stays under ``DRIZZLE_LWC_MIN`` (and within
    ``POSSIBLE_DRIZZLE_FRACTION`` of it), the levels at and below them are possible
    freezing drizzle.
    """
    source = (
        b["cloud"]
        & (b["cloud_top_temperature"] >= DRIZZLE_TOP_T_MIN)
        & ((b["cloud_top_height"] - b["cloud_base_height"]) >= DRIZZLE_MIN_DEPTH)
        & ~seeded
        & (b["lwc"] > 0.0)
        & (b["droplet_number"] > 0.0)
    )
    drizzle, produced = layer_drizzle(
        np.where(b["usable"], b["z"], np.nan),
        rho,
        b["cloud"],
        np.nan_to_num(b["lwc"]),
        b["droplet_number"],
        b["cloud_top_height"],
        b["p"],
        b["t"],
        source=source,
        max_residence_time=drizzle_time_scale_s,
    )
    few = source & (b["droplet_number"] <= POSSIBLE_DRIZZLE_MAX_NUMBER)
    marginal = few & (produced >= POSSIBLE_DRIZZLE_FRACTION * DRIZZLE_LWC_MIN)
    possible = _rev_cummax(marginal.astype(np.int8)).astype(bool) & b["usable"]
    return drizzle, possible & (drizzle < DRIZZLE_LWC_MIN)


def _sld_content(t, fzra, fzdz, ra_lwc, drizzle, model_drizzle, q_rain):
    """SLD liquid per level: rain content, or drizzle capped by the Appendix O envelope."""
    (t_lo, q_lo), (t_hi, q_hi) = _FZDZ_LWC_ENVELOPE
    s_lwc = np.where(fzra, ra_lwc, 0.0)
    at = np.nonzero(fzdz)  # fzdz levels are cold, so usable, and never fzra
    if at[0].size:
        capped = np.minimum(drizzle[at], np.interp(t[at], [t_lo, t_hi], [q_lo, q_hi]))
        md = model_drizzle[at]
        s_lwc[at] = np.where(md, np.maximum(q_rain[at], capped), capped)
    return s_lwc


def _surface_type(b, areas, precip, hydro, melted, fzra, fzdz, drizzle, ice_origin):
    """Surface precipitation type and the Bourgouin areas that decided it, per column.

    ``ice_origin`` (per column): the column holds ice, so precipitation without a
    melting layer reaches the ground as snow; otherwise it is warm-rain liquid.
    """
    shape, nlev, t = b["shape"], b["nlev"], b["t"]
    rate = b["rate"]
    has = b["n_use"] > 0
    t0 = t[..., 0]
    cold_sfc = has & (t0 <= T0)
    warm_sfc = has & (t0 > T0)
    # precipitation evidence at the ground: a rate or model hydrometeors; cloud alone
    # only through the melting-layer inference (``precip``), never as snow or rain
    evidence = (rate > PRECIP_RATE_MIN) | hydro.any(-1)
    kc0 = areas["first_cold"][..., 0]
    pa_sfc = _take(areas["cpos"], np.clip(kc0, 0, nlev - 1)[..., None])[..., 0]
    cold_aloft = kc0 < nlev
    liquid_drizzle_0 = drizzle[..., 0] >= DRIZZLE_LWC_MIN
    ptype = np.full(shape[:-1], _PT["none"], dtype=int)
    liquid = _PT["freezing-drizzle"]  # warm-rain precipitation on a cold surface
    ptype = np.where(cold_sfc & evidence, np.where(ice_origin, _PT["snow"], liquid), ptype)
    refrozen = precip[..., 0] & melted[..., 0] & ~fzra[..., 0]
    ptype = np.where(cold_sfc & refrozen, _PT["ice-pellets"], ptype)
    ptype = np.where(cold_sfc & fzdz[..., 0], _PT["freezing-drizzle"], ptype)
    ptype = np.where(cold_sfc & fzra[..., 0], _PT["freezing-rain"], ptype)
    snow_sfc = ice_origin & cold_aloft & (pa_sfc < PA_SURFACE_SNOW)
    warm_rain = np.where(liquid_drizzle_0 & ~ice_origin, _PT["drizzle"], _PT["rain"])
    warm_type = np.where(snow_sfc, _PT["snow"], warm_rain)
    ptype = np.where(warm_sfc & (evidence | liquid_drizzle_0), warm_type, ptype)
    ptype = np.where(has, ptype, codes.GAP).astype(np.int8)
    pa, na = areas["pa"], areas["na"]
    melting = np.where(cold_sfc, pa[..., 0], np.where(warm_sfc, pa_sfc, np.nan))
    refreezing = np.where(cold_sfc, na[..., 0], np.where(warm_sfc, 0.0, np.nan))
    return ptype, melting, refreezing


def _unsorted_result(b, cls, s_lwc, s_mvd, s_dmax, drizzle, possible, ptype, melting, refreezing):
    """Back to the input order, gaps and below-ground levels marked: the SLDDiagnosis."""
    inverse, usable_in, below_in, gap_in = b["inverse"], b["usable_in"], b["below_in"], b["gap_in"]

    def back(x):
        return _take_or_view(x, inverse)

    possible_in = np.ascontiguousarray(back(possible))
    if b["all_usable"]:  # no gaps, nothing below ground
        cls_in, lwc_in, mvd_in, dmax_in = back(cls), back(s_lwc), back(s_mvd), back(s_dmax)
        drz_in = np.ascontiguousarray(back(drizzle))
    else:
        cls_in = np.where(gap_in, codes.GAP, back(cls))
        lwc_in = np.where(gap_in, np.nan, np.where(below_in, 0.0, back(s_lwc)))
        mvd_in = np.where(usable_in, back(s_mvd), np.nan)
        dmax_in = np.where(usable_in, back(s_dmax), np.nan)
        drz_in = np.where(usable_in, back(drizzle), np.where(below_in, 0.0, np.nan))
        cls_in = np.where(below_in, codes.SLD_NONE, cls_in)
    return SLDDiagnosis(
        sld_class=cls_in.astype(np.int8),
        sld_lwc=lwc_in,
        sld_mvd=mvd_in,
        sld_dmax=dmax_in,
        precip_type=ptype,
        melting_area=melting,
        refreezing_area=refreezing,
        drizzle_content=drz_in,
        complete=~gap_in.any(axis=-1),
        possible_drizzle=possible_in & usable_in,
    )
