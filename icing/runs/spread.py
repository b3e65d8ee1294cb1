"""Parametric spread: the diagnosis repeated over stated ranges of its uncertain choices.

``--spread`` screens one forecast as several members that differ only in one
choice of the column physics each (one choice at a time, the others as stated,
so every member names the assumption it tests). The members are reported as an
ensemble's (fractions of members, the statistic's word, the worst member's), so
the user sees whether a word hangs on an assumption. The ranges and their sources:

``air-mass``
    the other named CCN air mass (maritime / continental: Hobbs, Bowdle & Radke
    1985 spectra, Martin et al. 1994 widths; ``icing.calc.droplets.AIR_MASSES``).
``sub-adiabatic``
    the liquid's fraction of the adiabatic value at cloud base, 0.64 and 0.90: the
    mean minus and plus one standard deviation of Braun et al. (2018), 0.77 +- 0.13
    (docs/references.md, [Bra18]).
``humidity-threshold``
    the cloud's humidity threshold: the other model (ice-water blend / water
    saturation; ``icing.calc.clouds``), and the blend's ice fraction at 0.25 and
    0.75 around its 0.5 (our choice: half way to each end).
``ice-nuclei``
    the other ice-nucleus models of the glaciation likelihood (Meyers et al. 1992,
    Fletcher 1962, DeMott et al. 2010).

Where the stated options already hold an alternative (``--air-mass continental``),
the member tests the other value instead.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

from icing.errors import InputError

__all__ = ["SPREAD_CHOICES", "SpreadVariant", "spread_variants"]

#: The uncertain choices --spread can vary, in the order their members are listed.
SPREAD_CHOICES = ("air-mass", "sub-adiabatic", "humidity-threshold", "ice-nuclei")


@dataclass(frozen=True)
class SpreadVariant:
    """One member of a parametric spread: the stated options with one choice changed."""

    label: str
    """The member's name: ``"as stated"`` or ``"choice=value"``."""
    options: object
    """The member's :class:`icing.calc.column.ColumnOptions`."""
    choice: str | None
    """The choice varied (one of :data:`SPREAD_CHOICES`), None for the stated options."""
    source: str
    """Where the value comes from (a published source, or "our choice")."""

    def describe(self) -> dict:
        """Return the member for the outputs: name, choice and source."""
        return {"member": self.label, "choice": self.choice, "source": self.source}


def _alternatives(choice, base):
    """``(label, changes, source)`` of each alternative of one choice against ``base``."""
    if choice == "air-mass":
        name = base.air_mass if isinstance(base.air_mass, str) else "custom"
        other = "continental" if name == "maritime" else "maritime"
        src = "CCN spectra: Hobbs, Bowdle & Radke (1985); widths: Martin et al. (1994)"
        return [(f"air-mass={other}", {"air_mass": other}, src)]
    if choice == "sub-adiabatic":
        src = "Braun et al. (2018): LWC/LWC_ad = 0.77 +- 0.13 (mean -/+ one standard deviation)"
        return [
            (f"sub-adiabatic={v:g}", {"sub_adiabatic_factor_at_base": v}, src)
            for v in (0.64, 0.90)
            if abs(v - base.sub_adiabatic_factor_at_base) > 1e-9
        ]
    if choice == "humidity-threshold":
        other = (
            "water-saturation"
            if base.rh_threshold_model == "ice-water-blend"
            else "ice-water-blend"
        )
        out = [
            (
                f"humidity-threshold={other}",
                {"rh_threshold_model": other},
                "the other threshold model of icing.calc.clouds",
            )
        ]
        if base.rh_threshold_model == "ice-water-blend":
            out += [
                (
                    f"humidity-threshold-ice-fraction={v:g}",
                    {"rh_threshold_ice_fraction": v},
                    "our choice: half way from the stated 0.5 to each end",
                )
                for v in (0.25, 0.75)
                if abs(v - base.rh_threshold_ice_fraction) > 1e-9
            ]
        return out
    if choice == "ice-nuclei":
        sources = {
            "meyers92": "Meyers, DeMott & Cotton (1992)",
            "fletcher62": "Fletcher (1962)",
            "demott10": "DeMott et al. (2010)",
        }
        return [
            (f"ice-nuclei={m}", {"ice_nuclei_model": m}, sources[m])
            for m in sources
            if m != base.ice_nuclei_model
        ]
    raise InputError(
        f"unknown spread choice {choice!r}",
        where="--spread",
        fix=f"give 'all' or a comma-separated list of {', '.join(SPREAD_CHOICES)}",
    )


def spread_variants(base=None, choices="all") -> tuple:
    """Return the members of a parametric spread around the stated column options.

    Parameters
    ----------
    base : ColumnOptions, optional
        The stated options (the first member); default ``ColumnOptions()``.
    choices : str or sequence of str
        ``"all"``, or some of :data:`SPREAD_CHOICES` (a list or a comma-separated string).

    Returns
    -------
    tuple of SpreadVariant
        The stated options first, then one member per alternative.

    Examples
    --------
    >>> [v.label for v in spread_variants(choices="air-mass,ice-nuclei")]
    ['as stated', 'air-mass=continental', 'ice-nuclei=fletcher62', 'ice-nuclei=demott10']
    """
    from icing.calc.column import ColumnOptions

    base = base or ColumnOptions()
    if isinstance(choices, str):
        choices = SPREAD_CHOICES if choices.strip() == "all" else choices.split(",")
    names = [c.strip() for c in choices if c.strip()]
    if not names:
        raise InputError(
            "--spread without a choice",
            where="--spread",
            fix=f"give 'all' or some of {', '.join(SPREAD_CHOICES)}",
        )
    out = [SpreadVariant("as stated", base, None, "the run's stated column options")]
    for choice in dict.fromkeys(names):
        for label, changes, source in _alternatives(choice, base):
            out.append(SpreadVariant(label, replace(base, **changes), choice, source))
    return tuple(out)
