"""The results of a run: one :class:`FileResult` per input and the :class:`Report`
over them, with the exit status. Frozen plain data below every reporter, so the
reporters are typed against it; the pipeline builds it.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import TYPE_CHECKING

from .findings import SEVERITY_ORDER, Finding

if TYPE_CHECKING:  # for the annotations only
    from .engine.baseline import BaselineOutcome
    from .figures import FigureSet
    from .model.spec import Spec


@dataclass(frozen=True)
class FileResult:
    file: str
    findings: tuple[Finding, ...]
    spec: Spec | None = None  # when it was built
    closure: tuple[tuple[str, str], ...] = ()
    input_error: str | None = None  # set when the file could not be read (exit 2)
    links: tuple[tuple[str, str], ...] = ()  # references reached through a symbolic link
    figures: FigureSet | None = None  # when computed
    fail_level: str | None = None  # the file's policy's, where it differs from the run's
    # a path named on the command line that holds no file to check: "missing" (no
    # such path) or "directory" (no spec file in it); listed with its input error,
    # never counted as a file
    not_a_file: str | None = None


@dataclass(frozen=True)
class RuleDoc:
    """What the outputs say about a rule of the pack (SARIF rule descriptors)."""

    id: str
    title: str
    description: str  # what it checks
    help: str  # why it matters and the relation behind it
    default_severity: str
    sources: tuple[str, ...] = ()
    aliases: tuple[str, ...] = ()


@dataclass(frozen=True)
class Report:
    files: tuple[FileResult, ...]
    fail_level: str = "error"
    parser: str = ""
    extra: dict = field(default_factory=dict)
    baseline: BaselineOutcome | None = None
    rules: tuple[RuleDoc, ...] = ()

    @property
    def findings(self) -> tuple[Finding, ...]:
        out = [f for r in self.files for f in r.findings]
        return tuple(sorted(out, key=Finding.sort_key))

    def counts(self) -> dict[str, int]:
        counts = {"error": 0, "warning": 0, "info": 0}
        for f in self.findings:
            if not f.suppressed:
                counts[f.severity] += 1
        return counts

    def fail_level_of(self, result: FileResult) -> str:
        """The fail level a file is judged by: its policy's, else the run's."""
        return result.fail_level or self.fail_level

    @property
    def file_count(self) -> int:
        """The files of the run: every input but the paths that hold no file."""
        return sum(1 for r in self.files if r.not_a_file is None)

    @property
    def input_errors(self) -> tuple[FileResult, ...]:
        return tuple(r for r in self.files if r.input_error is not None)

    def exit_status(self) -> int:
        if any(f.rule == "internal-error" for f in self.findings):
            return 3
        if self.input_errors:
            return 2
        for r in self.files:
            threshold = SEVERITY_ORDER[self.fail_level_of(r)]
            for f in r.findings:
                if not f.suppressed and SEVERITY_ORDER[f.severity] >= threshold:
                    return 1
        if self.baseline is not None and self.baseline.strict and self.baseline.stale_count:
            return 1
        return 0
