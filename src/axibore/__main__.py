"""``python -m axibore``: the command line, as the ``axibore`` command."""

import sys

from .cli import main

sys.exit(main())
