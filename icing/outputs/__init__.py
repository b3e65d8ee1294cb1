"""Outputs of a run: GeoJSON and summary JSON, tables, pictures, the report.

Outputs format what the runs computed and never compute themselves. Every file
is written through :mod:`icing.outputs.atomic`. The pictures import matplotlib,
so they are imported from their own modules (:mod:`icing.outputs.plot`,
:mod:`icing.outputs.report`), not from here.
"""

from icing.outputs.atomic import atomic_write, replace_atomically
from icing.outputs.write import write_outputs

__all__ = ["atomic_write", "replace_atomically", "write_outputs"]
