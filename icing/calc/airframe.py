"""An airframe's collectors, and the icing of each at every point of an array.

An airframe is a set of *collectors*: the parts that catch supercooled water
and whose ice matters (wing and tail leading edges, rotor and propeller blade
sections, struts, arms, probes), each modelled as a circular cylinder across
the flow (:mod:`icing.calc.collection`); the equivalent cylinders are described
in :mod:`icing.airframes`, which reads presets and user files.
:func:`airframe_icing` runs the whole collector chain (collection, heat balance,
ice type and density, rates, severity) for every collector over arrays of any
shape.

Conventions of ours, stated once:

* **Ice type** from the stagnation freezing fraction ``n0``: ``n0 >= 1`` rime
  (dry growth); ``MIXED_MIN_FRACTION <= n0 < 1`` (0.3) mixed (wet growth, most
  water freezes near the leading edge, some runs back); ``0 < n0 < 0.3`` clear
  (wet growth, most water runs back and freezes aft as clear ice). Runback is
  flagged wherever ``n0 < 1`` and ice forms.
* **Aft of the stagnation line** the kinetic heating is smaller: the boundary
  layer recovers only part of the dynamic temperature (``AFT_RECOVERY_FACTOR``
  = 0.85 of the stagnation kinetic heating, air and drops; the low end of the
  0.85-0.89 boundary-layer recovery factors). The same Messinger balance with
  that heating gives the aft freezing fraction ``n_aft``. Where ``n0 <= 0`` at
  the stagnation line but ``n_aft > 0``, water runs back and freezes aft: clear
  ice with runback, nothing frozen at the stagnation line itself. Where neither
  freezes there is no ice (a fast airframe's ram rise, e.g. a jet at cruise
  near -10 C).
* **Counted catch**: runback water freezes aft, so the severity counts the
  caught water, not the fraction frozen at the stagnation line: all of it where
  ``max(n0, n_aft) >= 0.3`` (it refreezes over a few such stretches aft), in
  proportion ``max(n0, n_aft) / 0.3`` below (very wet growth: most water leaves
  the surface unfrozen). This keeps the count continuous from rime through
  clear ice to none.
* **Whole catch**: the accretion rate reported (``accretion_rate_mm_h``) is
  the counted catch as ice thickness at the stagnation line, frozen there, by
  runback aft or (SLD in sub-freezing air) aft of the leading edge,
  ``beta0 LWC V x counted / rho_ice``, times the share the collector's ice
  protection leaves on it (``PROTECTION_RESIDUAL``): the ice that stays. The ice
  frozen at the stagnation line alone is ``stagnation_rate_mm_h``. Wherever
  anything freezes the rate is positive, so an icing stretch never shows a zero
  thickness.
* **Severity** (:mod:`icing.calc.severity`, rules stated there): the
  *equivalent outer-wing rate* of the counted catch as if unprotected, the
  caught mass spread as solid ice over the collector's frontal height
  ``E LWC V / 917 kg m-3`` [mm/h] (for an airfoil the equivalent cylinder's
  frontal height, twice its leading-edge radius), mapped onto the AIM rates;
  the collector's protection and ice tolerance decide whether the airframe
  copes (``PROTECTION_RESIDUAL`` of the catch left on it, its time to the
  tolerance); SLD aft of the protected areas raises the word; supercooled
  liquid at or below 0 C is never "none"; glaciation lowers words resting on
  diagnosed liquid only.
* **SLD in sub-freezing air** strikes and runs back aft of the leading edge,
  where kinetic heating is smaller and local static temperatures fall below
  ambient: its catch counts as freezing there whatever the stagnation balance
  says (common practice, no source; a screening tool must not let ram heating
  hide freezing rain).
* Missing input (NaN) reads ``codes.GAP``, never none.

References
----------
.. [Mes53] Messinger, B. L. (1953), Equilibrium temperature of an unheated icing
   surface as a function of air speed, J. Aeronaut. Sci. 20, 29-42.
.. [And04] Anderson, D. N. (2004), Manual of scaling methods, NASA/CR-2004-212875.
.. [MS84] Makkonen, L. & Stallabrass, J. R. (1984/1987), rime density
   experiments (form as quoted from memory in docs/references.md).
.. [Mac62] Macklin, W. C. (1962), The density and structure of ice formed by
   accretion, QJRMS 88, 30-50.
.. [Kor03] Korolev, A. V. et al. (2003), Microphysical characterization of mixed-
   phase clouds, QJRMS 129, 39-65.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from icing import codes
from icing.calc.accretion import (
    AFT_RECOVERY_FACTOR,
    MIXED_MIN_FRACTION,
    _dry_surface_temperature,
    _evaporation_coefficient,
    _glaze_fraction,
    ice_density,
    ice_type,
)
from icing.calc.collection import (
    _model,
    _ratios_per_point,
    _spectrum_fast,
    _spectrum_kernel,
    finstad_out_of_range,
    inertia_parameter,
    range_parameter,
    spectrum_quadrature,
)
from icing.calc.collector import (  # noqa: F401  (kept importable from here)
    LEADING_EDGE_RADIUS_FACTOR,
    PROTECTIONS,
    SHAPES,
    Airframe,
    Collector,
)
from icing.calc.severity import (
    AIM_RATES_MM_H,
    GLACIATION_LOWERS,
    IN_CLOUD_LWC,
    PROTECTION_RESIDUAL,
    TOLERANCE_MINUTES,
    collector_severity,
    lower_for_glaciation,
)
from icing.calc.thermo import (
    air_conductivity,
    air_density,
    air_viscosity,
    saturation_vapor_pressure,
)
from icing.constants import (
    PRANDTL_AIR,
    RHO_ICE,
    RHO_WATER,
    T0,
)

__all__ = [
    "AirframeIcing",
    "airframe_icing",
    "airframe_severity",
    "fit_range_flags",
    "assumptions",
]

_FIELDS = (
    "severity",
    "collection_efficiency",
    "beta0",
    "freezing_fraction",
    "ice_type",
    "ice_density",
    "accretion_rate_mm_h",
    "mass_rate",
    "runback",
    "time_to_tolerance_min",
    "stagnation_rate_mm_h",
    "unprotected_rate_mm_h",
    "notes",
)


@dataclass(frozen=True)
class AirframeIcing:
    """Icing of an airframe at every point of an array (shape S).

    Attributes
    ----------
    severity : ndarray int8
        ``codes.SEVERITY`` index 0..4; ``codes.GAP`` (-1) where input is missing.
    worst_collector : ndarray int
        Index into ``airframe.collectors`` of the collector setting severity (the
        reference collector where nothing ices).
    collection_efficiency : ndarray
        Overall total collection efficiency ``E`` of the worst collector: cloud and
        SLD populations weighted by their liquid water content. [1]
    beta0 : ndarray
        Stagnation-line efficiency, weighted the same way. [1]
    freezing_fraction : ndarray
        Stagnation freezing fraction ``n0`` (not clipped; NaN without water). [1]
    ice_type : ndarray int8
        ``codes.ICE_TYPES`` index.
    ice_density : ndarray
        [kg m-3]; NaN where no ice.
    accretion_rate_mm_h : ndarray
        Thickness rate of the ice that stays on the collector: the whole counted
        catch (frozen at the stagnation line, by runback aft, and SLD aft) at the
        stagnation line, ``beta0 LWC V counted / rho_ice``, times the share its ice
        protection leaves (``PROTECTION_RESIDUAL``: all of it unprotected). [mm/h]
    unprotected_rate_mm_h : ndarray
        Equivalent outer-wing rate of the counted catch as if unprotected,
        ``E LWC V counted / 917 kg m-3``: the quantity the rate word maps onto the
        AIM rates. [mm/h]
    stagnation_rate_mm_h : ndarray
        Thickness rate of the ice frozen at the stagnation line itself,
        ``beta0 LWC V min(n0, 1) / rho_ice``. [mm/h]
    mass_rate : ndarray
        Total catch per unit span ``E LWC V D`` (cloud and SLD). [kg m-1 s-1]
    runback : ndarray bool
        Water runs back (``0 < n0 < 1``).
    time_to_tolerance_min : ndarray
        Minutes until the ice that stays (``accretion_rate_mm_h``) reaches the
        collector's ice tolerance; ``inf`` where no ice, NaN in gaps. [min]
    notes : ndarray int16
        ``icing.calc.severity.NOTE_*`` bits: the rules that set the word (0 in gaps).
    per_collector : dict
        Collector name -> dict of the same fields (except ``worst_collector``).
    """

    severity: np.ndarray
    worst_collector: np.ndarray
    collection_efficiency: np.ndarray
    beta0: np.ndarray
    freezing_fraction: np.ndarray
    ice_type: np.ndarray
    ice_density: np.ndarray
    accretion_rate_mm_h: np.ndarray
    mass_rate: np.ndarray
    runback: np.ndarray
    time_to_tolerance_min: np.ndarray
    stagnation_rate_mm_h: np.ndarray
    unprotected_rate_mm_h: np.ndarray
    notes: np.ndarray
    per_collector: dict = field(default_factory=dict)


def _collector_icing(c, prot, tol_mm, st, recovery_factor, lean=False):
    """All fields for one collector on flat arrays (n,); ``st`` holds the air state.

    ``lean``: only ``severity``, ``accretion_rate_mm_h`` and the tie-breaker (the same
    values; :func:`airframe_severity`).
    """
    d = float(c.diameter)
    v = c.speed(st["v"])
    lwc, sld_lwc, t = st["lwc"], st["sld_lwc"], st["t"]
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        e, b0 = _cloud_catch(c, st, v, d)
        es, bs, has_sld = _sld_catch(c, st, v, d, e.shape)
        m_imp = (b0 * lwc + bs * sld_lwc) * v  # stagnation impinging flux [kg m-2 s-1]
        bal = _heat_balance(st, v, d, m_imp, recovery_factor)
        n0, stag = bal["n0"], bal["stag"]
        # SLD in sub-freezing air freezes aft whatever the stagnation balance (module doc)
        sld_cold = has_sld & ((bs > 0.0) | (es > 0.0)) & (t <= T0)
        counted_sld = np.where(sld_cold, 1.0, bal["counted"])
        catch_stag = (b0 * lwc * bal["counted"] + bs * sld_lwc * counted_sld) * v
        catch_total = (e * lwc * bal["counted"] + es * sld_lwc * counted_sld) * v
        freezes = catch_stag > 0.0
        rho_i = np.where(
            freezes, ice_density(bal["mvd_eff"], v, bal["ts"], glaze=~bal["dry"]), np.nan
        )
        per_rho = np.where(freezes, 3.6e6 / rho_i, 0.0)  # kg m-2 s-1 -> mm/h of this ice
        catch_rate = catch_stag * per_rho  # the whole counted catch, frozen anywhere
        outer_wing = catch_total * (3.6e6 / RHO_ICE)  # as if unprotected [mm/h]
        left = catch_rate * PROTECTION_RESIDUAL[prot]  # what the protection leaves [mm/h]
        ttt = np.where(freezes, 60.0 * tol_mm / left, np.inf)
    sld_ice = (freezes & has_sld & (bs > 0.0)) | sld_cold
    sev, notes = collector_severity(
        outer_wing,
        freezes,
        ttt,
        prot,
        sld_ice=sld_ice,
        sld_class=st["sld_class"],
        cold_liquid=((lwc > 0.0) | has_sld) & (t <= T0),
        caught=m_imp > 0.0,
    )
    sev, notes = lower_for_glaciation(
        sev,
        notes,
        model_glaciated=st["model_glaciated"],
        glaciation=st["glaciation"],
        diagnosed=st["diagnosed"],
        sld=has_sld,
    )
    if lean:
        with np.errstate(invalid="ignore", divide="ignore"):
            return {"severity": sev, "accretion_rate_mm_h": left, "_tie": left / tol_mm}
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        stag_rate = np.where(stag, m_imp * np.minimum(n0, 1.0) * per_rho, 0.0)
        total_lwc = lwc + sld_lwc
        e_all = np.where(total_lwc > 0.0, (e * lwc + es * sld_lwc) / total_lwc, e)
        b_all = np.where(total_lwc > 0.0, (b0 * lwc + bs * sld_lwc) / total_lwc, b0)
    return {
        "severity": sev,
        "collection_efficiency": e_all,
        "beta0": b_all,
        "freezing_fraction": n0,
        "ice_type": np.where(
            stag, ice_type(n0), np.where(freezes, codes.ICE_CLEAR, codes.ICE_NONE)
        ).astype(np.int8),
        "ice_density": rho_i,
        "accretion_rate_mm_h": left,
        "unprotected_rate_mm_h": outer_wing,
        "mass_rate": (e * lwc + es * sld_lwc) * v * d,
        "runback": (freezes & (n0 < 1.0)) | sld_cold,
        "time_to_tolerance_min": ttt,
        "stagnation_rate_mm_h": stag_rate,
        "notes": notes,
        "_tie": left / tol_mm,
    }


def _cloud_catch(c, st, v, d):
    """Total and stagnation efficiency of the cloud-drop spectrum on one collector."""
    lwc = st["lwc"]
    if st["method"] == "table":  # looked up only where there are cloud drops to catch
        e, b0 = np.zeros(lwc.shape), np.zeros(lwc.shape)
        at = np.flatnonzero(lwc > 0.0)
        if at.size:
            lv = np.log10(np.maximum(np.broadcast_to(v, lwc.shape)[at], 1e-6))
            ld = np.log10(d)
            e_at, b0[at] = _spectrum_fast(
                st["lk0"][at] + lv - ld,
                st["lp0"][at] + lv + ld,
                st["shape"][at],
                st["n_bins"],
                st["model"],
                st["compiled"],
            )
            e[at] = e_at * c.catch_factor
        return e, b0
    else:
        phi = range_parameter(d, v, st["rho"], st["mu"])
        e, b0 = _spectrum_kernel(
            inertia_parameter(st["mvd"], d, v, st["mu"]),
            phi,
            st["ratios"],
            st["fractions"],
            st["model_fn"],
        )
    e = np.where(lwc > 0.0, e * c.catch_factor, 0.0)
    b0 = np.where(lwc > 0.0, b0, 0.0)
    return e, b0


def _sld_catch(c, st, v, d, shape):
    """Total and stagnation efficiency of the SLD population (exponential spectrum).

    As the cloud drops' (:func:`_cloud_catch`): with the table method, read from the
    exponential spectrum's table (``collection_table`` at gamma shape 0, within 1e-3
    of the direct sum); else the direct sum over its bins.
    """
    has_sld = st["sld_lwc"] > 0.0
    if not np.any(has_sld):
        zero = np.zeros(shape)
        return zero, zero, has_sld
    sel = has_sld
    es = np.zeros(shape)
    bs = np.zeros(shape)
    vs = v[sel] if np.ndim(v) else np.broadcast_to(v, shape)[sel]
    if st["method"] == "table":
        lv = np.log10(np.maximum(vs, 1e-6))
        ld = np.log10(d)
        lk0 = 2.0 * np.log10(st["sld_mvd"][sel]) - st["lmu"][sel]  # as the cloud drops' lk0
        es[sel], bs[sel] = _spectrum_fast(
            lk0 + lv - ld, st["lp0"][sel] + lv + ld, 0.0, st["n_bins"], st["model"], st["compiled"]
        )
    else:
        phi_s = range_parameter(d, vs, st["rho"][sel], st["mu"][sel])
        k_s = inertia_parameter(st["sld_mvd"][sel], d, vs, st["mu"][sel])
        es[sel], bs[sel] = _spectrum_kernel(
            k_s, phi_s, st["sld_ratios"], st["sld_fractions"], st["model_fn"]
        )
    es *= c.catch_factor
    return es, bs, has_sld


def _heat_balance(st, v, d, m_imp, recovery_factor):
    """Messinger balance at the stagnation line and aft: what freezes, and where.

    Returns the stagnation and aft freezing fractions, the counted fraction of the
    catch (module docstring), the dry-growth surface temperature and the MVD that
    sets the rime density.
    """
    t, coef, e_a = st["t"], st["coef"], st["e_a"]
    h_c = st["h_c"](d, v)
    n0 = _glaze_fraction(t, v, m_imp, h_c, coef, e_a, recovery_factor)
    n_aft = _glaze_fraction(t, v, m_imp, h_c, coef, e_a, recovery_factor * AFT_RECOVERY_FACTOR)
    stag = (m_imp > 0.0) & (n0 > 0.0)  # ice at the stagnation line
    # fraction of the catch that freezes somewhere on the collector (module doc)
    counted = np.clip(np.fmax(n0, n_aft) / MIXED_MIN_FRACTION, 0.0, 1.0)
    counted = np.where(m_imp > 0.0, counted, 0.0)
    freezes = counted > 0.0
    dry = stag & (n0 >= 1.0)
    ts = np.full_like(t, T0)
    if np.any(dry):
        vd = np.broadcast_to(v, t.shape)[dry]
        ts[dry] = _dry_surface_temperature(
            t[dry], vd, m_imp[dry], h_c[dry], coef[dry], e_a[dry], recovery_factor
        )
    return {
        "n0": n0,
        "n_aft": n_aft,
        "stag": stag,
        "counted": counted,
        "freezes": freezes,
        "dry": dry,
        "ts": ts,
        "mvd_eff": np.where(st["lwc"] > 0.0, st["mvd"], st["sld_mvd"]),
    }


def _broadcast_inputs(
    lwc,
    mvd,
    temperature,
    pressure,
    spectrum_shape,
    sld_lwc,
    sld_mvd,
    sld_class,
    airspeed,
    relative_humidity,
):
    arrays = np.broadcast_arrays(
        *(
            np.asarray(a, dtype=float)
            for a in (
                lwc,
                mvd,
                temperature,
                pressure,
                spectrum_shape,
                sld_lwc,
                sld_mvd,
                sld_class,
                airspeed,
                relative_humidity,
            )
        )
    )
    return arrays[0].shape, [a.reshape(-1) for a in arrays]


def airframe_icing(
    airframe,
    *,
    lwc,
    mvd,
    temperature,
    pressure,
    spectrum_shape=2.0,
    sld_lwc=0.0,
    sld_mvd=np.nan,
    sld_class=0,
    airspeed=None,
    relative_humidity=1.0,
    model="finstad88",
    n_bins=7,
    recovery_factor=1.0,
    spectrum_method="table",
    glaciation=None,
    model_glaciated=None,
    basis=None,
):
    """Icing of every collector of an airframe, and the airframe's severity.

    For each collector: total and stagnation collection efficiency over the
    cloud-drop spectrum and, separately, over the SLD population
    (:mod:`icing.collection`); the Messinger balance on the combined stagnation
    catch (:func:`freezing_fraction`), the surface temperature in dry growth,
    the ice type and density, the stagnation thickness rate, the total catch and
    its time to the collector's ice tolerance, and the severity (module
    docstring). The airframe's severity is the worst over its critical
    collectors (ties: the one reaching its tolerance first).

    Parameters
    ----------
    airframe : icing.airframes.Airframe
        The airframe and its collectors.
    lwc : array_like
        Supercooled cloud liquid water content. [kg m-3]
    mvd : array_like
        Cloud-drop median volume diameter. [m]
    temperature : array_like
        Static air temperature. [K]
    pressure : array_like
        Air pressure. [Pa]
    spectrum_shape : array_like
        Gamma shape ``mu`` of the cloud-drop spectrum. [1]
    sld_lwc : array_like
        Liquid water content of the drizzle/rain population. [kg m-3]
    sld_mvd : array_like
        Its median volume diameter (NaN: none). [m]
    sld_class : array_like of int
        ``codes.SLD_*`` (0 none, 1 freezing drizzle, 2 freezing rain).
    airspeed : array_like, optional
        True airspeed; default the airframe's cruise speed. [m/s]
    relative_humidity : array_like
        Ambient relative humidity over water (fraction). [1]
    model : {"finstad88", "langmuir46"}
        Collision-efficiency fit.
    n_bins : int
        Quadrature nodes of the spectra.
    recovery_factor : float
        Recovery factor at the stagnation line. [1]
    spectrum_method : {"table", "direct"}
        Collection of the cloud drops and of the SLD from the precomputed spectrum
        tables (:func:`icing.collection.collection_table`, within 1e-3; the SLD's at
        gamma shape 0) or the direct sum over the bins at every point.
    glaciation : array_like, optional
        Glaciation likelihood of the cloud liquid (``ColumnDiagnosis.glaciation``). [1]
    model_glaciated : array_like of bool, optional
        The model holds ice and no liquid here (``ColumnDiagnosis.model_glaciated``).
    basis : array_like of int, optional
        ``codes.BASIS`` of the cloud liquid; the glaciation rule of
        :mod:`icing.calc.severity` lowers only words resting on diagnosed liquid.
        Without it no word is lowered.

    Returns
    -------
    AirframeIcing
        Every field shaped like the broadcast inputs.

    Notes
    -----
    Liquid below 0.01 g/m3 (Korolev et al. 2003) is ignored in each population.
    NaN in ``temperature``, ``pressure``, ``lwc``, ``airspeed``,
    ``relative_humidity``, or in ``mvd`` / ``spectrum_shape`` where there is
    cloud liquid, or in ``sld_mvd`` where there is SLD liquid, gives
    ``severity = codes.GAP``.

    Examples
    --------
    >>> from icing.airframes import load_airframe
    >>> res = airframe_icing(load_airframe("light-piston"), lwc=3e-4, mvd=20e-6,
    ...                      temperature=263.15, pressure=80000.0)
    >>> from icing.codes import SEVERITY
    >>> SEVERITY[int(res.severity)] in ("light", "moderate")
    True
    """
    shape, gap, st = _prepared(
        airframe,
        lwc=lwc,
        mvd=mvd,
        temperature=temperature,
        pressure=pressure,
        spectrum_shape=spectrum_shape,
        sld_lwc=sld_lwc,
        sld_mvd=sld_mvd,
        sld_class=sld_class,
        airspeed=airspeed,
        relative_humidity=relative_humidity,
        model=model,
        n_bins=n_bins,
        spectrum_method=spectrum_method,
        glaciation=glaciation,
        model_glaciated=model_glaciated,
        basis=basis,
    )
    per = {}
    for c in airframe.collectors:
        per[c.name] = _collector_icing(c, *_limits(airframe, c), st, recovery_factor)
    worst = _worst_collector(airframe, per, gap.size)
    return _assemble(airframe, per, worst, gap, shape)


def airframe_severity(airframe, **inputs):
    """Return the airframe's severity and accretion rate alone, as :func:`airframe_icing`'s.

    Takes :func:`airframe_icing`'s keywords (and ``compiled``: the table lookups as
    compiled loops where numba is installed, the same values) and gives, to the bit,
    its ``severity``
    (``codes.GAP`` in gaps) and ``accretion_rate_mm_h`` (NaN in gaps), computing only
    what sets them: the collectors that can set the airframe's fields (the critical
    ones and the reference) and, for each, only the catch, the heat balance, the ice
    density and the severity rules. What a grid's bands keep of the collector physics,
    at a fraction of its cost (a twin turboprop's propeller is reported, not
    severity-setting: a third of the work).

    Returns
    -------
    (numpy.ndarray of int8, numpy.ndarray)
        Severity and accretion rate [mm/h], shaped like the broadcast inputs.

    Examples
    --------
    >>> from icing.airframes import load_airframe
    >>> af = load_airframe("twin-turboprop")
    >>> kw = dict(lwc=3e-4, mvd=20e-6, temperature=263.15, pressure=80000.0)
    >>> sev, rate = airframe_severity(af, **kw)
    >>> full = airframe_icing(af, **kw)
    >>> int(sev) == int(full.severity) and float(rate) == float(full.accretion_rate_mm_h)
    True
    """
    recovery_factor = inputs.pop("recovery_factor", 1.0)
    shape, gap, st = _prepared(airframe, **inputs)
    names = [c.name for c in airframe.collectors]
    ref = names.index(airframe.reference)
    per = {}
    for i, c in enumerate(airframe.collectors):
        if c.critical or i == ref:
            per[c.name] = _collector_icing(
                c, *_limits(airframe, c), st, recovery_factor, lean=True
            )
    worst = _worst_collector(airframe, per, gap.size)
    sev, rate = per[names[ref]]["severity"], per[names[ref]]["accretion_rate_mm_h"]
    for i, nm in enumerate(names):
        if i != ref and airframe.collectors[i].critical:
            sev = np.where(worst == i, per[nm]["severity"], sev)
            rate = np.where(worst == i, per[nm]["accretion_rate_mm_h"], rate)
    if gap.any():
        sev = _mask_gap(sev, gap, "severity")
        rate = _mask_gap(rate, gap, "accretion_rate_mm_h")
    return np.asarray(sev).reshape(shape), np.asarray(rate).reshape(shape)


#: airframe_icing's optional keywords and their defaults (airframe_severity takes the same).
_DEFAULTS = {
    "spectrum_shape": 2.0,
    "sld_lwc": 0.0,
    "sld_mvd": np.nan,
    "sld_class": 0,
    "airspeed": None,
    "relative_humidity": 1.0,
    "model": "finstad88",
    "n_bins": 7,
    "spectrum_method": "table",
    "compiled": False,
    "glaciation": None,
    "model_glaciated": None,
    "basis": None,
}


def _limits(airframe, c):
    """Return a collector's ice protection and ice tolerance [mm] (the airframe's where unset)."""
    prot = c.protection or airframe.ice_protection
    tol = c.ice_tolerance_mm if c.ice_tolerance_mm is not None else airframe.ice_tolerance_mm
    return prot, float(tol)


def _prepared(airframe, *, lwc, mvd, temperature, pressure, **optional):
    """Broadcast the inputs; return (shape, gap mask, the air state of every collector)."""
    o = {**_DEFAULTS, **optional}
    if set(o) != set(_DEFAULTS):
        unknown = sorted(set(o) - set(_DEFAULTS))
        raise TypeError(f"unexpected keyword arguments {unknown}")
    _model(o["model"])
    airspeed = airframe.cruise_tas if o["airspeed"] is None else o["airspeed"]
    shape, flat = _broadcast_inputs(
        lwc,
        mvd,
        temperature,
        pressure,
        o["spectrum_shape"],
        o["sld_lwc"],
        o["sld_mvd"],
        o["sld_class"],
        airspeed,
        o["relative_humidity"],
    )
    gap = _input_gaps(*flat)
    st = _working_state(
        flat, gap, model=o["model"], n_bins=o["n_bins"], spectrum_method=o["spectrum_method"]
    )
    st["compiled"] = bool(o["compiled"])
    st.update(_broadcast_phase(shape, o["glaciation"], o["model_glaciated"], o["basis"]))
    return shape, gap, st


def _broadcast_phase(shape, glaciation, model_glaciated, basis):
    """Flat inputs of the glaciation rule (``severity.lower_for_glaciation``)."""

    def flat(a, default, dtype):
        a = default if a is None else a
        return np.broadcast_to(np.asarray(a, dtype=dtype), shape).reshape(-1)

    return {
        "glaciation": flat(glaciation, np.nan, float),
        "model_glaciated": flat(model_glaciated, False, bool),
        "diagnosed": flat(basis, codes.BASIS_NONE, float) == codes.BASIS_DIAGNOSED,
    }


def _input_gaps(lwc, mvd, t, p, mu_shape, sld_lwc, sld_mvd, sld_cls, v_air, rh):
    """Points whose inputs are missing where they matter: a coverage gap."""
    gap = (
        np.isnan(t)
        | np.isnan(p)
        | np.isnan(lwc)
        | np.isnan(v_air)
        | np.isnan(rh)
        | np.isnan(sld_lwc)
        | (np.nan_to_num(sld_cls, nan=-1) < codes.SLD_NONE)
    )
    cloud = np.where(gap, False, lwc >= IN_CLOUD_LWC)
    gap |= cloud & (np.isnan(mvd) | np.isnan(mu_shape) | (mvd <= 0.0))
    sld = np.where(gap, False, sld_lwc >= IN_CLOUD_LWC)
    gap |= sld & (np.isnan(sld_mvd) | (sld_mvd <= 0.0))
    return gap


def _working_state(flat, gap, *, model, n_bins, spectrum_method):
    """Build the air state shared by every collector (safe values in gaps, masked later)."""
    lwc, mvd, t, p, mu_shape, sld_lwc, sld_mvd, sld_cls, v_air, rh = flat
    ok = ~gap
    cloud = ok & (lwc >= IN_CLOUD_LWC)
    sld = ok & (sld_lwc >= IN_CLOUD_LWC)
    t_w = np.where(gap, 263.15, t)
    p_w = np.where(gap, 7.0e4, p)
    mvd_w = np.where(cloud, mvd, 20e-6)
    shape_w = np.where(cloud & np.isfinite(mu_shape), mu_shape, 2.0)
    rho = air_density(p_w, t_w)
    mu = air_viscosity(t_w)
    kcond = air_conductivity(t_w)
    pr04 = PRANDTL_AIR**0.4

    def h_c(d, v):
        return 1.14 * np.sqrt(rho * v * d / mu) * pr04 * kcond / d  # Nu = 1.14 Re^0.5 Pr^0.4

    rh_w = np.where(gap, 1.0, np.clip(rh, 0.0, 1.2))
    st = {
        "v": np.where(gap, 50.0, np.maximum(v_air, 0.0)),
        "t": t_w,
        "rho": rho,
        "mu": mu,
        "lwc": np.where(cloud, lwc, 0.0),
        "mvd": mvd_w,
        "sld_lwc": np.where(sld, sld_lwc, 0.0),
        "sld_mvd": np.where(sld, sld_mvd, 1e-3),
        "sld_class": np.where(sld, np.nan_to_num(sld_cls), 0.0),
        "h_c": h_c,
        "model": model,
        "model_fn": _model(model),
        "n_bins": n_bins,
        "method": spectrum_method,
        "shape": shape_w,
        "coef": _evaporation_coefficient(p_w, t_w, rho=rho, mu=mu),
        "e_a": rh_w * saturation_vapor_pressure(t_w, phase="liquid"),
    }
    st["sld_ratios"], st["sld_fractions"] = spectrum_quadrature(0.0, n_bins)
    if spectrum_method == "table":
        with np.errstate(divide="ignore"):
            # log10 K - log10(V/D) (less the drops' 2 log10 MVD: "lmu") and log10 phi -
            # log10(V D); the SLD's K is formed from "lmu" at their own MVD
            st["lmu"] = np.log10(9.0 * mu / RHO_WATER)
            st["lk0"] = 2.0 * np.log10(mvd_w) - st["lmu"]
            st["lp0"] = np.log10(9.0 * rho * rho / (mu * RHO_WATER))
    elif spectrum_method == "direct":
        st["ratios"], st["fractions"] = _ratios_per_point(shape_w, n_bins, lwc.size)
    else:
        raise ValueError(f"unknown spectrum_method {spectrum_method!r}; expected table, direct")
    return st


def _worst_collector(airframe, per, n):
    """Index of the worst critical collector per point (``_tie`` entries removed).

    Highest severity, ties to the one reaching its tolerance first; the reference
    collector where nothing ices.
    """
    ref = [c.name for c in airframe.collectors].index(airframe.reference)
    worst = np.full(n, ref, dtype=np.intp)
    best = np.zeros(n)
    for i, c in enumerate(airframe.collectors):  # collectors, not points
        if not c.critical:
            continue
        tie = per[c.name].pop("_tie")
        score = per[c.name]["severity"] + 0.5 * tie / (1.0 + tie)
        better = score > best
        worst[better] = i
        best = np.maximum(best, score)
    for fields in per.values():
        fields.pop("_tie", None)
    return worst


def _assemble(airframe, per, worst, gap, shape):
    """Pick the worst collector's fields, mask the gaps, reshape: the AirframeIcing."""
    names = [c.name for c in airframe.collectors]
    ref = names.index(airframe.reference)
    out = {}
    for f in _FIELDS:
        pick = per[names[ref]][f]
        for i, nm in enumerate(names):
            if i != ref and airframe.collectors[i].critical:
                pick = np.where(worst == i, per[nm][f], pick)
        out[f] = pick
    any_gap = bool(gap.any())
    for f in _FIELDS:
        for nm in names:
            a = _mask_gap(per[nm][f], gap, f) if any_gap else per[nm][f]
            per[nm][f] = a.reshape(shape)
        if any_gap:
            out[f] = _mask_gap(out[f], gap, f)
    return AirframeIcing(
        worst_collector=worst.reshape(shape),
        per_collector=per,
        **{f: np.asarray(out[f]).reshape(shape) for f in _FIELDS},
    )


def _mask_gap(a, gap, name):
    if name in ("severity",):
        return np.where(gap, codes.GAP, a).astype(np.int8)
    if name == "ice_type":
        return np.where(gap, codes.ICE_NONE, a).astype(np.int8)
    if name == "notes":
        return np.where(gap, 0, a).astype(np.int16)
    if name == "runback":
        return np.where(gap, False, a)
    return np.where(gap, np.nan, a)


def fit_range_flags(airframe, *, mvd, temperature, pressure, airspeed=None, model="finstad88"):
    """Where each collector's collision efficiency leaves its fit's range.

    For ``model="finstad88"``: True where the range parameter at the collector is
    outside 100..1e4 or the inertia parameter at the MVD above ~1e3
    (:func:`icing.collection.finstad_out_of_range`; how each case is handled is
    in :func:`icing.collection.collision_efficiency_finstad88`). The
    Langmuir-Blodgett fit is defined for every ``phi`` (all False). For the
    assumptions written with the results.

    Parameters
    ----------
    airframe : icing.airframes.Airframe
    mvd, temperature, pressure : array_like
        Cloud-drop MVD [m], air temperature [K] and pressure [Pa].
    airspeed : array_like, optional
        True airspeed; default the airframe's cruise speed. [m/s]
    model : {"finstad88", "langmuir46"}

    Returns
    -------
    dict of str -> numpy.ndarray of bool

    Examples
    --------
    >>> from icing.airframes import load_airframe
    >>> flags = fit_range_flags(load_airframe("small-multirotor"), mvd=15e-6,
    ...                         temperature=263.15, pressure=9e4)
    >>> bool(flags["propeller"]), bool(flags["arm"])
    (True, False)
    """
    _model(model)
    v = airframe.cruise_tas if airspeed is None else airspeed
    t = np.asarray(temperature, dtype=float)
    rho = air_density(pressure, t)
    mu = air_viscosity(t)
    out = {}
    for c in airframe.collectors:
        u = c.speed(v)
        k = inertia_parameter(mvd, c.diameter, u, mu)
        phi = range_parameter(c.diameter, u, rho, mu)
        if model == "finstad88":
            out[c.name] = np.asarray(finstad_out_of_range(k, phi))
        else:
            out[c.name] = np.zeros(np.shape(k), dtype=bool)
    return out


def assumptions(*, model="finstad88", n_bins=7, spectrum_method="table"):
    """Return the collector-physics conventions as a JSON-able dict for the outputs.

    Examples
    --------
    >>> assumptions()["ice_type"]["mixed_min_freezing_fraction"]
    0.3
    """
    _model(model)
    return {
        "collision_efficiency": {
            "model": model,
            "spectrum": f"gamma, mass-weighted over {n_bins} bins ({spectrum_method})",
            "sld_spectrum": f"exponential (gamma shape 0), over {n_bins} bins ({spectrum_method})",
            "equivalent_cylinder": "airfoil and rotor sections: D = 2 * 1.1019 t^2 c "
            "(NACA 4-digit leading-edge radius)",
            "below_phi_100": "max(Finstad at phi = 100, Langmuir-Blodgett), flagged",
            "above_phi_1e4": "Finstad at phi = 1e4 (conservative), flagged",
        },
        "heat_balance": {
            "model": "Messinger (1953) in Anderson (2004) form, stagnation line",
            "nusselt": "1.14 Re^0.5 Pr^0.4 (laminar stagnation line, potential-flow gradient)",
            "evaporation": "Chilton-Colburn, saturation over water at 0 C",
            "aft_recovery_factor": AFT_RECOVERY_FACTOR,
        },
        "ice_type": {
            "rime_min_freezing_fraction": 1.0,
            "mixed_min_freezing_fraction": MIXED_MIN_FRACTION,
        },
        "ice_density": "Makkonen-Stallabrass 1 <= R <= 60, bridged to 917 kg/m3 at R = 173; "
        "917 kg/m3 for glaze; impact speed = section speed",
        "severity": {
            "scale_mm_h": list(AIM_RATES_MM_H),
            "rate": "counted catch as solid ice over the collector's frontal height, as if "
            "unprotected (the AIM intensities describe unprotected surfaces)",
            "protection": "a protected collector reads at most moderate while the ice its "
            "protection leaves (protection_residual of the catch) takes at least "
            f"{TOLERANCE_MINUTES[0]:g} min to reach its ice tolerance; sooner: severe",
            "protection_residual": dict(PROTECTION_RESIDUAL),
            "tolerance_minutes": list(TOLERANCE_MINUTES),
            "in_cloud_lwc_g_m3": IN_CLOUD_LWC * 1e3,
            "supercooled_liquid": "at least 0.01 g/m3 of liquid at or below 0 C reads at least "
            "trace whatever the kinetic heating",
            "sld": "freezing rain: severe (none, de-ice), >= moderate (anti-ice); freezing "
            "drizzle: severe (de-ice), >= moderate (none, anti-ice)",
            "glaciation": f"one step lower (never below trace) where the liquid is diagnosed "
            f"only and the model holds ice and no liquid, or the glaciation likelihood is at "
            f"least {GLACIATION_LOWERS}",
            "accretion": "the whole counted catch (stagnation line, runback, SLD aft)",
        },
    }
