"""The ``icing`` command: a thin layer over the public API.

Exit codes: 0 done (whatever the hazard), 3 when a stated condition (``--fail-on``
and its kin) is met, 2 on bad input or usage, 1 on an internal error. Output files
are written to temporary files beside their targets and renamed together, so a
failed run leaves nothing half-written.

``options`` holds the option types and bounds, ``inputs`` turns options into the
library's inputs, ``commands`` runs each subcommand, ``parser`` builds the parser
and holds ``main``.
"""

from icing.cli.inputs import departure_window
from icing.cli.parser import build_parser, main

__all__ = ["main", "build_parser", "departure_window"]
