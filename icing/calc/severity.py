"""Severity words from the ice an airframe's collector takes on.

The published intensity definitions (FAA Aeronautical Information Manual,
"Icing intensities"; an earlier edition's representative rates of accumulation
"on the outer wing": trace < 1/4 in/h, light 1/4-1 in/h, moderate 1-3 in/h,
severe > 3 in/h, i.e. 6, 25 and 75 mm/h) describe the rate at which ice
accumulates on an unprotected reference surface, with the aircraft's ice
protection in use: "moderate" is a rate at which "use of deicing/anti-icing
equipment or flight diversion is necessary", "severe" one at which the
equipment "fails to reduce or control the hazard". So:

1. the **rate word** maps the counted catch of a collector as if it were
   unprotected (the *equivalent outer-wing rate*, :mod:`icing.calc.airframe`)
   onto those rates; protection never scales the rate (that would count it
   twice: once in the rate, once in the words' own definitions);
2. **protection decides whether the airframe copes**: on a protected collector
   the word stays at most "moderate" while the ice its protection leaves
   (``PROTECTION_RESIDUAL`` of the catch: what boots leave between cycles, what
   runs back and freezes aft of a heated zone; our convention) stays under the
   collector's ice tolerance for ``TOLERANCE_MINUTES[0]`` (5 min); once it
   reaches the tolerance sooner the protection no longer copes: "severe". On
   every collector the time until that remaining ice reaches the tolerance
   floors the word (< 5 min severe, < 20 min at least moderate, < 60 min at
   least light; our convention after the AIM's "over 1 hour" and "even short
   encounters");
3. **SLD** striking aft of the protected areas (the AIM's mark of severe)
   raises the word (freezing rain: severe on unprotected and boot-protected
   collectors, at least moderate on anti-iced ones; freezing drizzle: severe
   on boot-protected collectors, at least moderate elsewhere);
4. **supercooled liquid is never "none"**: at least 0.01 g/m3 of liquid
   (Korolev et al. 2003 in-cloud threshold) at a static air temperature at or
   below 0 C reads at least "trace", even where kinetic heating keeps the
   stagnation line above 0 C at the airspeed used (the speed changes, local
   static temperatures aft fall below ambient, and an unknown speed must not
   hide liquid), with that reason stated;
5. **glaciation** lowers a word by one step, never below "trace", where the
   liquid is only diagnosed (``basis`` diagnosed) and the model itself holds
   ice and no liquid at the level, or the glaciation likelihood is at least
   ``GLACIATION_LOWERS`` (0.9, our choice): observed phase is bimodal (Korolev
   et al. 2003), so such a level is most likely glaciated, but liquid patches
   stay possible. Words raised by SLD are never lowered.

Every rule that moved a word leaves a bit in the ``notes`` mask
(``NOTE_*``); :func:`severity_reasons` turns it into words.
"""

from __future__ import annotations

import numpy as np

from icing import codes
from icing.constants import IN_CLOUD_LWC as _IN_CLOUD_LWC

__all__ = [
    "AIM_RATES_MM_H",
    "TOLERANCE_MINUTES",
    "PROTECTION_RESIDUAL",
    "GLACIATION_LOWERS",
    "IN_CLOUD_LWC",
    "NOTES",
    "NOTE_KINETIC_HEATING",
    "NOTE_PROTECTION_COPES",
    "NOTE_PROTECTION_OVERWHELMED",
    "NOTE_TOLERANCE",
    "NOTE_SLD_AFT",
    "NOTE_MODEL_GLACIATED",
    "NOTE_GLACIATION_LIKELY",
    "NOTE_POSSIBLE_DRIZZLE",
    "NOTE_NO_CATCH",
    "rate_severity",
    "collector_severity",
    "lower_for_glaciation",
    "severity_reasons",
]

#: In-cloud liquid threshold (Korolev et al. 2003): 0.01 g/m3. [kg m-3]
IN_CLOUD_LWC = _IN_CLOUD_LWC  # constants.IN_CLOUD_LWC (Korolev et al. 2003)
#: Earlier AIM edition's representative outer-wing rates: trace/light,
#: light/moderate and moderate/severe boundaries. [mm/h]
AIM_RATES_MM_H = (6.0, 25.0, 75.0)
#: Minutes until the ice left on a collector reaches its tolerance that make the
#: word severe / at least moderate / at least light (our convention).
TOLERANCE_MINUTES = (5.0, 20.0, 60.0)
#: Fraction of the caught ice that each kind of ice protection leaves on the
#: collector (our convention): boots leave the ice between cycles and the residue
#: after them, heated surfaces the runback that freezes aft of the heated zone.
#: Used only to judge whether the protection copes, never to scale the rate word.
PROTECTION_RESIDUAL = {"none": 1.0, "de-ice": 1.0 / 3.0, "anti-ice": 0.1}
#: Glaciation likelihood from which a word resting on diagnosed liquid is lowered
#: one step (our choice; see the module docstring). [1]
GLACIATION_LOWERS = 0.9

#: Reasons a word moved, as bits of the ``notes`` mask, with their text (``{kt}``
#: is the true airspeed in knots).
NOTES = {
    1: "liquid present; kinetic heating keeps the stagnation line above 0 C at {kt} kt",
    2: "the unprotected-surface rate reads severe; the ice protection copes: moderate",
    4: "the ice the protection leaves reaches the ice tolerance within 5 min: severe",
    8: "raised by the time until the ice reaches the ice tolerance",
    16: "supercooled large drops strike aft of the protected areas",
    32: "lowered one step: the model holds ice and no liquid here (diagnosed liquid only)",
    64: "lowered one step: glaciation likely (ice outpaces the updraft's liquid supply)",
    128: "possible freezing drizzle: warm-topped, unseeded, few droplets; growth marginal",
    256: "liquid present; the collectors catch none of it at {kt} kt",
}
(
    NOTE_KINETIC_HEATING,
    NOTE_PROTECTION_COPES,
    NOTE_PROTECTION_OVERWHELMED,
    NOTE_TOLERANCE,
    NOTE_SLD_AFT,
    NOTE_MODEL_GLACIATED,
    NOTE_GLACIATION_LIKELY,
    NOTE_POSSIBLE_DRIZZLE,
    NOTE_NO_CATCH,
) = sorted(NOTES)


def rate_severity(rate_mm_h):
    """Return the severity code of a rate on the AIM outer-wing scale.

    Trace below 6 mm/h, light 6-25, moderate 25-75, severe from 75 mm/h; 0 for
    a zero rate.

    Examples
    --------
    >>> rate_severity([0.0, 3.0, 10.0, 50.0, 100.0]).tolist()
    [0, 1, 2, 3, 4]
    """
    r = np.asarray(rate_mm_h, dtype=float)
    sev = (r > 0.0).astype(np.int8)
    for bound in AIM_RATES_MM_H:
        sev += r >= bound
    return sev


def _tolerance_floor(minutes):
    """Word floor from the minutes until the remaining ice reaches the tolerance."""
    return np.select(
        [
            minutes < TOLERANCE_MINUTES[0],
            minutes < TOLERANCE_MINUTES[1],
            minutes < TOLERANCE_MINUTES[2],
        ],
        [codes.SEV_SEVERE, codes.SEV_MODERATE, codes.SEV_LIGHT],
        codes.SEV_NONE,
    )


def collector_severity(
    outer_wing, freezes, time_to_tolerance, prot, *, sld_ice, sld_class, cold_liquid, caught=None
):
    """Severity code of one collector, and the notes of the rules that set it.

    Parameters
    ----------
    outer_wing : ndarray
        Equivalent outer-wing rate of the counted catch, as if unprotected. [mm/h]
    freezes : ndarray of bool
        Some of the catch freezes on the collector.
    time_to_tolerance : ndarray
        Minutes until the ice the collector's protection leaves reaches its
        tolerance (``inf`` where nothing freezes). [min]
    prot : {"none", "de-ice", "anti-ice"}
        The collector's ice protection.
    sld_ice : ndarray of bool
        SLD freeze on the collector (or strike it in sub-freezing air).
    sld_class : ndarray
        ``codes.SLD_*`` of the SLD population.
    cold_liquid : ndarray of bool
        At least 0.01 g/m3 of liquid (cloud or SLD) at a static temperature at or
        below 0 C.
    caught : ndarray of bool, optional
        The collector catches some of that liquid (default: wherever there is
        liquid); names the reason of a trace that nothing freezes on.

    Returns
    -------
    (ndarray of int8, ndarray of int16)
        ``codes.SEVERITY`` index and the ``NOTE_*`` bits.

    Examples
    --------
    >>> sev, notes = collector_severity(np.array([100.0]), np.array([True]), np.array([30.0]),
    ...                                 "de-ice", sld_ice=np.array([False]),
    ...                                 sld_class=np.array([0]), cold_liquid=np.array([True]))
    >>> int(sev[0]), bool(notes[0] & NOTE_PROTECTION_COPES)
    (3, True)
    """
    rate_word = np.where(freezes, rate_severity(outer_wing), codes.SEV_NONE).astype(np.int16)
    notes = np.zeros(rate_word.shape, np.int16)
    sev = rate_word
    if prot != "none":  # the word of a protected surface while the protection copes
        capped = sev > codes.SEV_MODERATE
        notes |= np.where(capped, NOTE_PROTECTION_COPES, 0).astype(np.int16)
        sev = np.minimum(sev, codes.SEV_MODERATE)
    floor = np.where(freezes, _tolerance_floor(time_to_tolerance), codes.SEV_NONE)
    raised = floor > sev
    overwhelmed = raised & (floor == codes.SEV_SEVERE) & (prot != "none")
    notes |= np.where(overwhelmed, NOTE_PROTECTION_OVERWHELMED, 0).astype(np.int16)
    notes |= np.where(raised & ~overwhelmed, NOTE_TOLERANCE, 0).astype(np.int16)
    sev = np.maximum(sev, floor)
    if np.any(sld_ice):
        rain = sld_ice & (sld_class == codes.SLD_RAIN)
        drizzle = sld_ice & (sld_class != codes.SLD_RAIN)
        sld_floor = {
            "none": (codes.SEV_SEVERE, codes.SEV_MODERATE),
            "de-ice": (codes.SEV_SEVERE, codes.SEV_SEVERE),
            "anti-ice": (codes.SEV_MODERATE, codes.SEV_MODERATE),
        }[prot]
        floor = np.where(rain, sld_floor[0], np.where(drizzle, sld_floor[1], codes.SEV_NONE))
        notes |= np.where(floor > sev, NOTE_SLD_AFT, 0).astype(np.int16)
        sev = np.maximum(sev, floor)
    # "the protection copes" no longer describes a word raised to severe
    notes &= np.where(sev > codes.SEV_MODERATE, ~NOTE_PROTECTION_COPES, -1).astype(np.int16)
    kinetic = cold_liquid & (sev < codes.SEV_TRACE) & ~freezes
    caught = cold_liquid if caught is None else np.asarray(caught, bool)
    notes |= np.where(kinetic & caught, NOTE_KINETIC_HEATING, 0).astype(np.int16)
    notes |= np.where(kinetic & ~caught, NOTE_NO_CATCH, 0).astype(np.int16)
    sev = np.where(freezes | sld_ice | cold_liquid, np.maximum(sev, codes.SEV_TRACE), sev)
    return sev.astype(np.int8), notes


def lower_for_glaciation(severity, notes, *, model_glaciated, glaciation, diagnosed, sld):
    """Lower a word one step where the diagnosed liquid is most likely glaciated.

    Rule 5 of the module docstring: where the liquid is only diagnosed
    (``diagnosed``), no SLD is present (``sld`` False), and either the model holds
    ice and no liquid (``model_glaciated``) or the glaciation likelihood is at
    least ``GLACIATION_LOWERS``, the word goes down one step but never below
    trace. Gaps (``codes.GAP``) and "none" stay as they are.

    Returns
    -------
    (ndarray of int8, ndarray of int16)
        The word and the notes with ``NOTE_MODEL_GLACIATED`` or
        ``NOTE_GLACIATION_LIKELY`` set where it was lowered.

    Examples
    --------
    >>> s, n = lower_for_glaciation(np.array([4, 1, 3]), np.zeros(3, np.int16),
    ...                             model_glaciated=np.array([True, True, False]),
    ...                             glaciation=np.array([0.2, 1.0, 0.95]),
    ...                             diagnosed=np.array([True, True, True]),
    ...                             sld=np.array([False, False, False]))
    >>> s.tolist(), [bool(v & NOTE_GLACIATION_LIKELY) for v in n]
    ([3, 1, 2], [False, False, True])
    """
    sev = np.asarray(severity).astype(np.int16)
    notes = np.asarray(notes).astype(np.int16)
    model = np.asarray(model_glaciated, bool)
    with np.errstate(invalid="ignore"):
        likely = np.asarray(glaciation, float) >= GLACIATION_LOWERS
    eligible = np.asarray(diagnosed, bool) & ~np.asarray(sld, bool) & (sev > codes.SEV_TRACE)
    lower = eligible & (model | likely)
    notes = notes | np.where(lower & model, NOTE_MODEL_GLACIATED, 0).astype(np.int16)
    notes = notes | np.where(lower & ~model, NOTE_GLACIATION_LIKELY, 0).astype(np.int16)
    return np.where(lower, sev - 1, sev).astype(np.int8), notes


def severity_reasons(notes, *, tas_kt=None):
    """Return the reasons of a ``notes`` mask as a list of sentences (``NOTES``).

    Parameters
    ----------
    notes : int
        ``NOTE_*`` bits.
    tas_kt : float, optional
        True airspeed for the kinetic-heating reason. [kt]

    Examples
    --------
    >>> severity_reasons(NOTE_KINETIC_HEATING, tas_kt=440)[0]
    'liquid present; kinetic heating keeps the stagnation line above 0 C at 440 kt'
    """
    n = int(notes)
    kt = "the planned" if tas_kt is None or not np.isfinite(tas_kt) else f"{tas_kt:.0f}"
    return [text.format(kt=kt) for bit, text in NOTES.items() if n & bit]
