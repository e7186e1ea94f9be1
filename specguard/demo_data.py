"""Where the bundled demo lives once installed (read through the package, never the source tree)."""

from __future__ import annotations

from importlib.resources import files
from pathlib import Path


def demo_root() -> Path:
    """The installed demo folder (an invented lab robot with its library)."""
    return Path(str(files("specguard.demo")))


def copy_demo(target: Path) -> Path:
    """Copy the demo tree (specs, library, policy, team rule, README) into ``target``,
    a new or empty folder, to start a repository of one's own from it. Raises
    OSError (``FileExistsError`` when ``target`` holds anything)."""
    import errno
    import os
    import shutil

    if target.exists() and (not target.is_dir() or any(target.iterdir())):
        raise FileExistsError(errno.EEXIST, "exists and is not an empty folder", str(target))
    source = demo_root()

    def skip(folder: str, names: list[str]) -> list[str]:
        return [n for n in names if n == "__pycache__" or n.endswith((".py", ".pyc"))]

    shutil.copytree(source, target, ignore=skip, dirs_exist_ok=True)
    for folder, _dirs, names in os.walk(target):  # read-only installs give read-only copies
        for name in names:
            os.chmod(os.path.join(folder, name), 0o644)
        os.chmod(folder, 0o755)
    return target
