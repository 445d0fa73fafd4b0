"""``python -m probe`` runs the command-line tool."""
import sys

from probe.cli import main

sys.exit(main())
