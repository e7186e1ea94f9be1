"""The message review of the issue tracker, item by item: each test states one
point of the review list on the wording, numbering and counting of what specguard
prints, and fails on the code before the point was fixed."""

from __future__ import annotations

import datetime as dt

from specguard.engine.waivers import apply_waivers

from .policy.helpers import fake_locate, finding, spec_with

TODAY = dt.date(2026, 12, 2)


# ------------------------------------------------------------ 6. waivers count from 1
def test_waivers_are_numbered_from_one():
    waivers = ({"rule": "pwm-audible"}, {"rule": "ripple-over-rated-curent"})
    names = {"pwm-audible": "pwm-audible", "ripple-over-rated-current": "ripple-over-rated-current"}
    out = apply_waivers([finding(point="hold")], spec_with(*waivers), fake_locate(), {}, TODAY, False, names=names)
    problems = sorted((f for f in out if f.rule == "waiver-invalid"), key=lambda f: f.location.line)
    assert [p.message.split(":")[0] for p in problems] == [
        "waiver 1 for 'pwm-audible'",
        "waiver 2 for 'ripple-over-rated-curent'",
    ]
    assert [p.location.line for p in problems] == [40, 51]  # the first waiver, the 'rule' key of the second
