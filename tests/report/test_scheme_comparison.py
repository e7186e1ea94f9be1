"""The HTML report's side-by-side PWM schemes of a two-level (bipolar) H-bridge axis.

Check values: each row must be what `specguard check` finds for the same axis file with
only `stage.pwm.scheme` edited as text (the row is the same judgement, reached through
the variant path), and the three-level wave at the same leg frequency must halve the
voltage step and, with phase-shifted legs, double the ripple frequency
(docs/physics.md §1.2: unipolar phase-shifted PWM, ripple at twice the leg frequency).
"""

from __future__ import annotations

import shutil
from pathlib import Path

import pytest

from specguard.pipeline import check_paths
from specguard.report import html as html_report

REPO = Path(__file__).resolve().parents[2]
AXIS = "pipette-x.axis.yaml"


def _row_figures(rows, label_start):
    return next((fs, found) for label, fs, found in rows if label.startswith(label_start))


@pytest.fixture(scope="module")
def comparison():
    report = check_paths([str(REPO / "examples" / "robot")], root=REPO)
    result = next(r for r in report.files if r.file.endswith(AXIS))
    return result, html_report.scheme_comparison(result, html_report._MapContext(REPO))


def _checked_as_text(tmp_path: Path, scheme: str):
    tree = tmp_path / "robot"
    shutil.copytree(REPO / "examples" / "robot", tree)
    axis = tree / "axes" / AXIS
    source = axis.read_text(encoding="utf-8")
    assert "scheme: bipolar" in source and "frequency_is: leg" in source
    axis.write_text(source.replace("scheme: bipolar", f"scheme: {scheme}"), encoding="utf-8")
    report = check_paths([str(axis)], root=tmp_path)
    return report.files[0]


@pytest.mark.parametrize(
    ("scheme", "label"), [("unipolar-single", "three-level, one leg"), ("unipolar-phase-shifted", "three-level, phase")]
)
def test_each_row_is_what_check_finds_for_the_edited_file(comparison, tmp_path, scheme, label):
    _, rows = comparison
    fs, found = _row_figures(rows, label)
    edited = _checked_as_text(tmp_path, scheme)
    for name in ("ripple_frequency", "ripple_pp_worst"):
        assert fs.axis[name] == pytest.approx(edited.figures.axis[name], rel=1e-12), name
    for (point, values), (point_b, values_b) in zip(fs.points, edited.figures.points, strict=True):
        assert point == point_b
        assert values["pwm_eddy_loss"] == pytest.approx(values_b["pwm_eddy_loss"], rel=1e-12)
    for severity in ("error", "warning"):
        assert sum(f.severity == severity for f in found) == sum(f.severity == severity for f in edited.findings)


def test_the_three_level_schemes_change_what_the_motor_sees(comparison):
    result, rows = comparison
    assert [label for label, _, _ in rows][0].startswith("two-level (bipolar), as written")
    as_written, _ = _row_figures(rows, "two-level")
    assert as_written.axis == result.figures.axis  # the first row is the spec as written
    single, _ = _row_figures(rows, "three-level, one leg")
    shifted, _ = _row_figures(rows, "three-level, phase")
    f_leg = as_written.axis["pwm_frequency_leg"]
    assert as_written.axis["ripple_frequency"] == pytest.approx(f_leg)
    assert single.axis["ripple_frequency"] == pytest.approx(f_leg)
    assert shifted.axis["ripple_frequency"] == pytest.approx(2.0 * f_leg)
    # half the voltage step at the same frequency and inductance: less ripple than two-level
    assert single.axis["ripple_pp_worst"] < as_written.axis["ripple_pp_worst"]
    assert shifted.axis["ripple_pp_worst"] < as_written.axis["ripple_pp_worst"]


def test_the_table_is_in_the_report_only_for_two_level_axes():
    report = check_paths([str(REPO / "examples" / "robot")], root=REPO)
    page = html_report.render(report, jobs=1)
    assert page.count("<h4>PWM schemes side by side</h4>") == 1  # pipette-x is the demo's only bipolar axis
    section = page[page.index("PWM schemes side by side") :]
    section = section[: section.index("</table>")]
    assert section.count("<tr>") == 4  # header and three schemes
    assert "two-level (bipolar), as written" in section
