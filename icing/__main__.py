"""``python -m icing`` runs the ``icing`` command."""

import sys

from icing.cli import main

sys.exit(main())
