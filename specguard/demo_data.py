"""Where the bundled demo lives once installed (read through the package, never the source tree)."""

from __future__ import annotations

from importlib.resources import files
from pathlib import Path


def demo_root() -> Path:
    """The installed demo folder (an invented lab robot with its library)."""
    return Path(str(files("specguard.demo")))
