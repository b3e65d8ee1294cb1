"""Physics of icing in plain numpy and SI units: no files, no xarray.

One face for the column and collector physics, like ``metpy.calc``: every public
name of the modules below is importable from ``icing.calc``. The modules follow
the modelling chain:

``thermo`` (saturation, density, hypsometry, moist adiabat) ->
``clouds`` (cloud layers, adiabatic liquid, glaciation) ->
``droplets`` (activation, spectra, fall speed) -> ``sld`` (freezing rain and
drizzle) -> ``column`` (the whole column diagnosis) -> ``collection``
(collision efficiency) -> ``accretion`` (heat balance, ice type and density) ->
``severity`` (the words) -> ``airframe`` (every collector of an airframe).

Examples
--------
>>> from icing import calc
>>> round(float(calc.air_viscosity(273.15)) * 1e5, 3)
1.716
"""

from icing.calc import (
    accretion,
    airframe,
    clouds,
    collection,
    column,
    droplets,
    severity,
    sld,
    thermo,
)
from icing.calc.accretion import *  # noqa: F403
from icing.calc.airframe import *  # noqa: F403
from icing.calc.clouds import *  # noqa: F403
from icing.calc.collection import *  # noqa: F403
from icing.calc.column import *  # noqa: F403
from icing.calc.droplets import *  # noqa: F403
from icing.calc.severity import *  # noqa: F403
from icing.calc.sld import *  # noqa: F403
from icing.calc.thermo import *  # noqa: F403

__all__ = sorted(
    {
        name
        for module in (
            thermo,
            clouds,
            droplets,
            sld,
            column,
            collection,
            accretion,
            severity,
            airframe,
        )
        for name in module.__all__
    }
)
