"""``python -m lcoe``: the command line, the same as the ``lcoe`` command."""

import sys

from lcoe.cli import main

sys.exit(main())
