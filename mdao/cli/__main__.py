"""``python -m mdao.cli`` runs the command line."""
import sys

from mdao.cli import main

sys.exit(main())
