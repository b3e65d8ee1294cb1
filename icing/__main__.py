"""``python -m icing`` runs the ``icing`` command."""

import sys

from .cli import main

sys.exit(main())
