"""``python -m specguard``."""

import sys

from .cli import entry

sys.exit(entry())
