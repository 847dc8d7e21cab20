"""The frozen app's entry point: the same ``clipscribe`` command as the installed package."""

import sys

from clipscribe.cli import main

if __name__ == "__main__":
    sys.exit(main())
