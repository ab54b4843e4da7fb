"""``python -m lcoe.cli``: the command line."""

import sys

from lcoe.cli.main import main

sys.exit(main())
