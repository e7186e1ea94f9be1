"""specguard: a design-rule linter for machine-readable electric-drive specifications."""

__version__ = "0.1.0"

# Version of the spec format this release reads (the ``format:`` key of a spec).
SPEC_FORMAT_VERSION = 1
