"""Choices of the column physics (:class:`ColumnOptions`), written into every output."""

from __future__ import annotations

from dataclasses import dataclass

from icing.calc import clouds, droplets
from icing.constants import T0, T_HOMOGENEOUS
from icing.errors import InputError

__all__ = ["ColumnOptions"]


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
    sub_adiabatic_floor_convective : float
        Smallest ratio in convective layers, 0.2: the low end of the cumulus ratios
        of Warner (1955), about 0.2-0.5 (from memory). [1]
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
        Longest time drizzle grows in a warm-topped layer (passed to
        ``icing.sld.diagnose_sld``): the residence time is the depth above the level
        over the fall speed of a 50 um drizzle embryo (Khairoutdinov & Kogan 2000's
        embryo size), at most this, 3600 s (our choice: the order of a stratiform
        deck's drizzle-cell lifetime, no source). [s]
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
    sub_adiabatic_floor_convective: float = 0.2
    rh_threshold_model: str = "ice-water-blend"
    rh_threshold_warm: float = 0.95
    rh_threshold_ice_fraction: float = 0.5
    bridge_single_level_gaps: bool = True
    cloud_fraction_floor: float = 0.1
    updraft_floor_stratiform_m_s: float = 0.1
    updraft_floor_convective_m_s: float = 1.0
    convective_updraft_m_s: float = 1.0
    subgrid_updraft_m_s: float = 0.2
    drizzle_time_scale_s: float = 3600.0
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
        if not 0.0 <= self.sub_adiabatic_floor_convective <= 1.0:
            raise InputError(
                "sub_adiabatic_floor_convective must be in [0, 1], got "
                f"{self.sub_adiabatic_floor_convective!r}",
                where="ColumnOptions.sub_adiabatic_floor_convective",
                fix="use e.g. 0.2",
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
                f"{self.sub_adiabatic_scale_height_m} m), h above the adiabatic base "
                "(0.77 Braun et al. 2018; fall with height after Warner 1955); at least "
                f"{self.sub_adiabatic_floor_convective} in convective layers (Warner 1955, "
                "cumulus 0.2-0.5, from memory)"
            ),
            "adiabatic_base": (
                "the lifting condensation level (Bolton 1980) of the air at the layer's "
                "base: the humidity threshold flags cloud, saturation starts the liquid"
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
                "& Mazin 2003 balance), over a residence time; it enters the severity word "
                "(icing.calc.severity): one step lower where the liquid is diagnosed only "
                "and the likelihood is high or the model holds ice and no liquid"
            ),
            "optional_fields": (
                "an optional field (cloud liquid, ice, rain, snow, cloud fraction, vertical "
                "velocity) missing at every level of a column is absent for that column, "
                "not a coverage gap"
            ),
            "aerosol_per_cm3": self.aerosol_per_cm3,
            "ice_crystal_radius_m": self.ice_crystal_radius_m,
            "crystal_density_kg_m3": self.crystal_density_kg_m3,
            "glaciation_residence_time_s": self.glaciation_residence_time_s,
            "drizzle_time_scale_s": self.drizzle_time_scale_s,
            "drizzle": (
                "Khairoutdinov & Kogan (2000) autoconversion plus accretion of cloud water "
                "by drizzle, integrated over the residence time of drizzle in the layer "
                "above each level (depth over the fall speed of a 50 um drizzle embryo, at "
                "most drizzle_time_scale_s)"
            ),
            "appendix_c_envelopes": "14 CFR 25 Appendix C maxima, values from memory",
        }
