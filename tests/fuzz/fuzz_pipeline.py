"""Coverage-guided fuzzing of the whole in-process check (extended tier only).

Run: ``python tests/fuzz/fuzz_pipeline.py -max_total_time=600 tests/corpus`` after
``pip install atheris`` (Linux). The harness accepts only the tool's own outcomes:
findings (located, any rule id except internal-error). Anything else — an
exception escaping the pipeline or an internal-error finding — is a crash; add the
input to tests/corpus with its expected outcome.
"""

from __future__ import annotations

import sys
import tempfile
from pathlib import Path

import atheris

with atheris.instrument_imports():
    from specguard.pipeline import check_paths

_ROOT = Path(tempfile.mkdtemp(prefix="specguard-fuzz-"))
(_ROOT / ".git").mkdir()
_TARGET = _ROOT / "fuzz.axis.yaml"


def one_input(data: bytes) -> None:
    _TARGET.write_bytes(data)
    report = check_paths([str(_TARGET)], root=_ROOT)
    for finding in report.findings:
        if finding.rule == "internal-error":
            raise RuntimeError(f"internal error on fuzz input: {finding.message}")
        if finding.location.line < 1 or finding.location.column < 1:
            raise RuntimeError(f"unlocated finding: {finding}")


def main() -> None:
    atheris.Setup(sys.argv, one_input)
    atheris.Fuzz()


if __name__ == "__main__":
    main()
