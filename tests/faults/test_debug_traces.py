"""``--debug`` reaches every place the analysis turns an exception into a finding or
goes on without a trial (docs/reliability.md: a traceback only with --debug).

A fault is injected into the figure computation of the fix variants only (the spec's
own figures are computed first and stay sound): without --debug the finding simply
has no verified fix; with --debug the traceback of the injected fault is on stderr and
the check still ends with its findings. A fault in the spec's own rule evaluation is
an internal-error finding without --debug and a traceback with it.
"""

from __future__ import annotations

from pathlib import Path

import pytest

import specguard.figures as figures_pkg
from specguard.pipeline import check_paths

ROOT = Path(__file__).resolve().parents[2]
LIFT = ROOT / "examples" / "robot" / "axes" / "sample-lift.axis.yaml"


class InjectedFault(RuntimeError):
    pass


def _fault_after_first(monkeypatch):
    real = figures_pkg.compute
    calls = {"n": 0}

    def compute(spec, settings=None):
        calls["n"] += 1
        if calls["n"] > 2:  # the spec's own figures, then its catalogue comparison
            raise InjectedFault("variant figures")
        return real(spec, settings)

    monkeypatch.setattr(figures_pkg, "compute", compute)
    return calls


def _fixes(report):
    return [r for f in report.findings for r in (f.remedies or ())]


@pytest.mark.parametrize("debug", [False, True])
def test_a_fault_in_a_fix_variant_is_shown_only_with_debug(monkeypatch, capsys, debug):
    calls = _fault_after_first(monkeypatch)
    report = check_paths([str(LIFT)], root=ROOT / "examples" / "robot", debug=debug)
    err = capsys.readouterr().err
    assert calls["n"] > 2  # the fix search did try variants
    assert not [f for f in report.findings if f.rule == "internal-error"]
    assert _fixes(report) == []  # no variant could be judged: no verified fix
    if debug:
        assert "specguard --debug: a fix variant's figures failed" in err
        assert "InjectedFault: variant figures" in err
    else:
        assert "InjectedFault" not in err and "Traceback" not in err


def test_a_fault_in_the_rules_is_a_finding_or_with_debug_a_traceback(monkeypatch):
    import specguard.engine.evaluate as evaluate_mod

    def boom(*_a, **_k):
        raise InjectedFault("rules")

    monkeypatch.setattr(evaluate_mod, "evaluate", boom)
    report = check_paths([str(LIFT)], root=ROOT / "examples" / "robot")
    assert [f.rule for f in report.findings] == ["internal-error"]
    assert "InjectedFault: rules" in report.findings[0].message
    with pytest.raises(InjectedFault):
        check_paths([str(LIFT)], root=ROOT / "examples" / "robot", debug=True)


def test_without_a_fault_the_lift_has_verified_fixes():
    """The control of the first test: the demo's lift does get fixes."""
    report = check_paths([str(LIFT)], root=ROOT / "examples" / "robot")
    # the demo's golden text output (tests/golden/demo.txt) prints five fix lines for the lift
    assert len(_fixes(report)) >= 3
