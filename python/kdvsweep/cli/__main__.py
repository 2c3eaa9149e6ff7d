"""``python -m kdvsweep.cli``: the ``kdvsweep`` command."""

import sys

from . import main

sys.exit(main())
