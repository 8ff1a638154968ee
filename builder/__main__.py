"""``python -m builder`` runs the periplus command line."""

import sys

from .cli import main

sys.exit(main())
