"""``python -m diag``: the command line."""
import sys

from diag.cli import main

if __name__ == "__main__":
    sys.exit(main())
