"""Physics of icing in plain numpy and SI units: no files, no xarray.

One face for the column and collector physics, like ``metpy.calc``: every public
name of the modules below is importable from ``icing.calc``. The modules follow
the modelling chain:

``thermo`` (saturation, density, hypsometry, moist adiabat) ->
``clouds`` (cloud layers, adiabatic liquid, glaciation) ->
``droplets`` (activation, spectra, fall speed) -> ``warm_rain`` (drizzle growth)
-> ``bourgouin`` (melting and refreezing areas) -> ``sld`` (freezing rain and
drizzle) -> ``column`` (the whole column diagnosis; its choices in
``column_options``) -> ``collection`` (collision efficiency) -> ``accretion``
(heat balance, ice type and density) -> ``severity`` (the words) -> ``airframe``
(every collector of an airframe; the airframes themselves in ``collector``, their
speed schedules in ``airspeed``).

Examples
--------
>>> from icing import calc
>>> round(float(calc.air_viscosity(273.15)) * 1e5, 3)
1.716
"""

from icing.calc import (
    accretion,
    airframe,
    airspeed,
    bourgouin,
    clouds,
    collection,
    collector,
    column,
    column_options,
    droplets,
    severity,
    sld,
    thermo,
    warm_rain,
)
from icing.calc.accretion import *  # noqa: F403
from icing.calc.airframe import *  # noqa: F403
from icing.calc.airspeed import *  # noqa: F403
from icing.calc.bourgouin import *  # noqa: F403
from icing.calc.clouds import *  # noqa: F403
from icing.calc.collection import *  # noqa: F403
from icing.calc.collector import *  # noqa: F403
from icing.calc.column import *  # noqa: F403
from icing.calc.column_options import *  # noqa: F403
from icing.calc.droplets import *  # noqa: F403
from icing.calc.severity import *  # noqa: F403
from icing.calc.sld import *  # noqa: F403
from icing.calc.thermo import *  # noqa: F403
from icing.calc.warm_rain import *  # noqa: F403

__all__ = sorted(
    {
        name
        for module in (
            thermo,
            clouds,
            droplets,
            bourgouin,
            sld,
            column,
            column_options,
            collector,
            collection,
            accretion,
            severity,
            airspeed,
            airframe,
            warm_rain,
        )
        for name in module.__all__
    }
)
