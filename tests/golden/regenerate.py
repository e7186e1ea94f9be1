"""Regenerate the golden outputs of the demo: ``python -m tests.golden.regenerate``
(from the repository root, in the project's virtualenv).

The goldens are what ``specguard demo`` prints in each output format (text, JSON,
SARIF) for the bundled demo robot, plus its exit status. ``test_golden.py``
compares a fresh run with them byte for byte, so any change of a message, a
figure, a location or an output shape shows up as a reviewable diff of these
files. After an intended change, run this command and commit the new files
together with the change.

The runs are pinned: fixed hash seed, a fixed date for waiver expiry
(SOURCE_DATE_EPOCH), no colour.
"""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

HERE = Path(__file__).resolve().parent
ROOT = HERE.parents[1]
FORMATS = {"text": "demo.txt", "json": "demo.json", "sarif": "demo.sarif"}
EXIT_FILE = "demo.exit"
# 2027-01-15 00:00 UTC: the reference date for waiver expiry in the goldens.
SOURCE_DATE_EPOCH = "1799971200"


def run_demo(fmt: str) -> tuple[int, bytes]:
    env = dict(os.environ)
    env.update(
        {
            "PYTHONPATH": str(ROOT) + os.pathsep + env.get("PYTHONPATH", ""),
            "PYTHONHASHSEED": "0",
            "SOURCE_DATE_EPOCH": SOURCE_DATE_EPOCH,
            "NO_COLOR": "1",
        }
    )
    done = subprocess.run(
        [sys.executable, "-m", "specguard", "demo", "--format", fmt, "--no-color"],
        cwd=ROOT,
        env=env,
        capture_output=True,
        timeout=300,
    )
    if done.returncode not in (0, 1):
        raise SystemExit(
            f"specguard demo --format {fmt} failed ({done.returncode}):\n" + done.stderr.decode(errors="replace")
        )
    return done.returncode, done.stdout


def main() -> None:
    statuses = set()
    for fmt, name in FORMATS.items():
        status, output = run_demo(fmt)
        statuses.add(status)
        (HERE / name).write_bytes(output)
        print(f"wrote tests/golden/{name} ({len(output)} bytes)")
    if len(statuses) != 1:
        raise SystemExit(f"the formats disagree on the exit status: {sorted(statuses)}")
    (HERE / EXIT_FILE).write_text(f"{statuses.pop()}\n", encoding="ascii")
    print(f"wrote tests/golden/{EXIT_FILE}")


if __name__ == "__main__":
    main()
