"""Physical constants, SI units, each with its source.

==================  ===============  ==========  ==========================================
name                value            unit        source
==================  ===============  ==========  ==========================================
``T0``              273.15           K           definition of 0 degC
``G``               9.80665          m s-2       standard gravity (WMO; U.S. Std Atm 1976)
``RD``              287.0475         J kg-1 K-1  dry air gas constant (MetPy constants)
``RV``              461.523          J kg-1 K-1  water vapour gas constant (MetPy constants)
``EPSILON``         0.62196          1           RD / RV
``CP_AIR``          1004.67          J kg-1 K-1  dry air, constant pressure (MetPy constants)
``CP_WATER``        4218.0           J kg-1 K-1  liquid water at 0 degC (Pruppacher & Klett 1997)
``CP_ICE``          2106.0           J kg-1 K-1  ice at 0 degC (Pruppacher & Klett 1997)
``LV0``             2.501e6          J kg-1      vaporisation at 0 degC (Rogers & Yau 1989)
``LS0``             2.834e6          J kg-1      sublimation at 0 degC (Rogers & Yau 1989)
``LF0``             3.34e5           J kg-1      fusion at 0 degC (Rogers & Yau 1989)
``RHO_WATER``       1000.0           kg m-3      liquid water (supercooled: within 0.2 %)
``RHO_ICE``         917.0            kg m-3      solid ice, the glaze density
``P0_STD``          101325.0         Pa          sea-level pressure, ICAO / U.S. Std Atm 1976
``T0_STD``          288.15           K           sea-level temperature, ICAO standard atmosphere
``LAPSE_STD``       0.0065           K m-1       troposphere lapse rate, ICAO standard atmosphere
``T_HOMOGENEOUS``   235.15           K           -38 degC homogeneous freezing of cloud drops
``IN_CLOUD_LWC``    1.0e-5           kg m-3      0.01 g/m3 in-cloud threshold (Korolev 2003)
``PRANDTL_AIR``     0.71             1           air near 0 degC (Incropera & DeWitt, from memory)
``FT``              0.3048           m           international foot
``KT``              0.514444...      m s-1       international knot (1852 m / 3600 s)
``NMI``             1852.0           m           international nautical mile
==================  ===============  ==========  ==========================================
"""

from __future__ import annotations

__all__ = [
    "T0",
    "G",
    "RD",
    "RV",
    "EPSILON",
    "CP_AIR",
    "CP_WATER",
    "CP_ICE",
    "LV0",
    "LS0",
    "LF0",
    "RHO_WATER",
    "RHO_ICE",
    "P0_STD",
    "T0_STD",
    "LAPSE_STD",
    "T_HOMOGENEOUS",
    "IN_CLOUD_LWC",
    "PRANDTL_AIR",
    "FT",
    "KT",
    "NMI",
]

T0 = 273.15
G = 9.80665
RD = 287.0475
RV = 461.523
EPSILON = RD / RV
CP_AIR = 1004.67
CP_WATER = 4218.0
CP_ICE = 2106.0
LV0 = 2.501e6
LS0 = 2.834e6
LF0 = 3.34e5
RHO_WATER = 1000.0
RHO_ICE = 917.0
P0_STD = 101325.0
T0_STD = 288.15
LAPSE_STD = 0.0065
T_HOMOGENEOUS = 235.15
IN_CLOUD_LWC = 1.0e-5
PRANDTL_AIR = 0.71
FT = 0.3048
KT = 1852.0 / 3600.0
NMI = 1852.0
