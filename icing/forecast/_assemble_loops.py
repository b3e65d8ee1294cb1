"""Compiled loops of the column assembly (numba): imported only by ``assemble_columns``.

A grid block's specific humidity and its omega conversion are a dozen numpy passes of
plain arithmetic over every value (about 2.5 ms of a 3,600-column block); here they
are one pass each. They transcribe, value by value and in the same order of IEEE
operations (no fast-math, no fused multiply-adds), the numpy functions that remain the
reference: :func:`icing.calc.thermo.specific_humidity_from_relative_humidity` with
``np.nan_to_num`` as :func:`icing.forecast.assemble.assemble_columns` applies it, and
:func:`icing.calc.thermo.vertical_velocity_from_omega` (Wallace & Hobbs 2006 eq. 7.33
with the moist density of eq. 3.60). Only the basic operations occur (the saturation
vapour pressures come from numpy), so the results are numpy's to the bit
(``tests/test_assemble_compiled.py``), but for the sign bit of a NaN (numpy's negation
sets it, this one keeps it: a NaN either way).
"""

from __future__ import annotations

import numba

from icing.calc._scalars import nan_to_num as _nan_to_num
from icing.constants import EPSILON, RD, G

__all__ = ["specific_humidity", "updraft_from_omega"]

_jit = numba.njit(cache=True, error_model="numpy", nogil=True)

# constants formed as the numpy reference forms them (Python floats, same order)
_OME = 1.0 - EPSILON  # thermo.specific_humidity_from_relative_humidity
_KV = 1.0 / EPSILON - 1.0  # thermo.virtual_temperature


@_jit
def specific_humidity(p, hum, es, kind, out):
    """``nan_to_num(specific_humidity_of(...), nan=0.0)`` of flat arrays, into ``out``.

    ``kind``: 0 relative humidity (``hum``), 1 dewpoint (``hum`` its saturation vapour
    pressure), 2 specific humidity (``hum``; ``es`` unused); ``es`` the saturation
    vapour pressure over water at the temperatures [Pa].
    """
    for i in range(p.size):
        if kind == 2:
            q = hum[i]
        else:
            r = hum[i] if kind == 0 else hum[i] / es[i]
            e = r * es[i]
            q = EPSILON * e / (p[i] - _OME * e)
        out[i] = _nan_to_num(q)


@_jit
def updraft_from_omega(omega, p, t, q, out):
    """``thermo.vertical_velocity_from_omega(omega, p, t, q)`` of flat arrays, into ``out``."""
    for i in range(p.size):
        tv = t[i] * (1.0 + _KV * q[i])
        rho = p[i] / (RD * tv)
        out[i] = -omega[i] / (rho * G)
