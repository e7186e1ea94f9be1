"""Extreme values in every numeric field: never a crash, never "inf" or "nan" in words.

For every numeric field of the unit-mutation reference specs (tests/test_unit_mutation.py)
and the two demo specs not among them, the value is multiplied by 1e-9, 1e-6, 1e6 and
1e9 (nanoamperes, kiloseconds, megahenry: wild but still valid numbers) and the spec
is run through the model, the figures and the rule pack in this process. Each mutant
must come back as findings: no exception (which the CLI turns into exit 3), no
internal-error finding, and no message or fix that says "inf" or "nan" instead of a
number. This scan found a division by zero in the thermal eigenvalues of a runaway
profile (a torque constant times 1e-9).
"""

from __future__ import annotations

import copy
import re

import pytest

from specguard.engine.evaluate import load_pack

from .test_unit_mutation import SPECS, Checker, _leaves, _set, assemble_spec, mutate_value

EXTRA = ("examples/robot/axes/pipette-x.axis.yaml", "examples/medical/axes/infusion-drive.axis.yaml")
FACTORS = (1e-9, 1e-6, 1e6, 1e9)
_NOT_A_NUMBER = re.compile(r"(?<![\w.])-?(inf|nan)(?![\w])", re.IGNORECASE)


@pytest.fixture(scope="module")
def problems():
    checker = Checker(load_pack())
    found: list[str] = []
    count = 0
    for rel in SPECS + EXTRA:
        doc = assemble_spec(rel)
        for path, value in list(_leaves(doc.data)):
            for factor in FACTORS:
                new = mutate_value(value, factor)
                if new is None:
                    continue
                count += 1
                data = copy.deepcopy(doc.data)
                _set(data, path, new)
                where = f"{rel} {'/'.join(map(str, path))} x{factor:g}"
                try:
                    findings = checker.findings(data, doc.locate)
                except Exception as exc:  # the CLI would report exit 3
                    found.append(f"{where}: {type(exc).__name__}: {exc}")
                    continue
                for f in findings:
                    if f.rule == "internal-error":
                        found.append(f"{where}: {f.message}")
                    for text in (f.message, *f.remedies):
                        if _NOT_A_NUMBER.search(text):
                            found.append(f"{where}: [{f.rule}] {text}")
    return count, found


def test_extreme_values_give_findings_not_crashes(problems):
    count, found = problems
    assert count > 500  # five specs, dozens of numeric fields each, four factors
    assert not found, "\n".join(found[:20])
