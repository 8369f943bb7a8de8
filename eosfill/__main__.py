"""`python -m eosfill` runs the command line (see eosfill.cli)."""
import sys

from eosfill.io.cli import main

sys.exit(main())
