"""`python -m eosfill` runs the command line (see eosfill.cli)."""
import sys

from .cli import main

sys.exit(main())
