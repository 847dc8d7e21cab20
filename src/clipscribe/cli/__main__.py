"""``python -m clipscribe.cli``: the same command as the installed ``clipscribe``."""

import sys

from . import main

sys.exit(main())
