"""`specguard hook FILE...`: the pre-commit mode (docs/reliability.md FI20, §7.2)."""

from __future__ import annotations

import json
import subprocess
import sys

from .conftest import specguard

HEAVY = ("pydantic", "ruamel", "numpy", "jsonschema", "specguard.engine", "specguard.model")


def test_no_files_exits_zero_without_loading_the_checker(demo_repo):
    code = (
        "import sys; from specguard.cli import main; status = main(['hook']); "
        "print(status, sorted({m.split('.')[0] if not m.startswith('specguard') else m for m in sys.modules}"
        f" & set({HEAVY!r})))"
    )
    done = subprocess.run([sys.executable, "-c", code], cwd=demo_repo, capture_output=True, text=True)
    assert done.stdout.strip() == "0 []", done.stdout + done.stderr
    assert specguard(demo_repo, "hook").returncode == 0


def test_given_spec_is_checked(demo_repo):
    done = specguard(demo_repo, "hook", "axes/sample-lift.axis.yaml")
    assert done.returncode == 1
    assert "axes/sample-lift.axis.yaml:15:29: error:" in done.stdout  # braking into a bus that cannot take it
    assert "pipette-x" not in done.stdout and "in 1 file" in done.stdout


def test_library_file_checks_every_spec_using_it(demo_repo):
    done = specguard(demo_repo, "hook", "library/chokes/choke-47uh-6a.yaml")
    assert done.returncode == 1
    assert "axes/sample-lift.axis.yaml" in done.stdout  # the only axis with this choke
    assert "pipette-x" not in done.stdout and "carousel" not in done.stdout
    assert "in 1 file" in done.stdout


def test_library_reached_through_a_chain(demo_repo):
    lib = demo_repo / "library" / "motors"
    base = lib / "coreless-22mm-24v.yaml"
    variant = lib / "variant.yaml"
    variant.write_text("format: 1\nmotor:\n  from: coreless-22mm-24v.yaml\n  rated_current: 1.8 A\n", encoding="utf-8")
    spec = demo_repo / "axes" / "sample-lift.axis.yaml"
    spec.write_text(
        spec.read_text(encoding="utf-8").replace(
            "from: ../library/motors/coreless-22mm-24v.yaml", "from: ../library/motors/variant.yaml"
        ),
        encoding="utf-8",
    )
    done = specguard(demo_repo, "hook", str(base.relative_to(demo_repo)))
    assert "axes/sample-lift.axis.yaml" in done.stdout and "in 1 file" in done.stdout


def test_flow_mapping_reference_is_found(demo_repo):
    spec = demo_repo / "axes" / "pipette-x.axis.yaml"
    text = spec.read_text(encoding="utf-8")
    assert "motor:\n  from: ../library/motors/coreless-13mm-12v.yaml\n" in text
    spec.write_text(
        text.replace(
            "motor:\n  from: ../library/motors/coreless-13mm-12v.yaml\n",
            "motor: {from: '../library/motors/coreless-13mm-12v.yaml'}\n",
        ),
        encoding="utf-8",
    )
    done = specguard(demo_repo, "hook", "library/motors/coreless-13mm-12v.yaml")
    assert "axes/pipette-x.axis.yaml" in done.stdout


def test_unreferenced_yaml_is_ignored_silently(demo_repo):
    (demo_repo / "library" / "notes.yaml").write_text("anything: [1, 2\n", encoding="utf-8")
    done = specguard(demo_repo, "hook", "library/notes.yaml")
    assert (done.returncode, done.stdout, done.stderr) == (0, "", "")


def test_spec_and_its_library_reported_once(demo_repo):
    done = specguard(
        demo_repo,
        "hook",
        "axes/sample-lift.axis.yaml",
        "library/motors/coreless-22mm-24v.yaml",
        "library/chokes/choke-47uh-6a.yaml",
    )
    assert "in 1 file" in done.stdout
    assert done.stdout.count("[choke-saturation]") == 1


def _policy_repo(repo):
    """The demo repository with a policy file and a team rule directory of its own."""
    import shutil

    from .conftest import REPO

    shutil.copytree(REPO / "examples" / "team-rules", repo / "team-rules")
    (repo / ".specguard.yaml").write_text("format: 1\nextra_rule_dirs: [team-rules]\n", encoding="utf-8")
    return repo


def test_staged_policy_file_checks_every_spec(demo_repo):
    repo = _policy_repo(demo_repo)
    done = specguard(repo, "hook", "--format", "json", ".specguard.yaml")
    # a policy change can change the outcome of any spec: all three demo axes
    checked = sorted(f["file"] for f in json.loads(done.stdout)["files"])
    assert checked == ["axes/carousel.axis.yaml", "axes/pipette-x.axis.yaml", "axes/sample-lift.axis.yaml"]
    assert done.returncode == 1  # sample-lift has errors


def test_staged_team_rule_checks_every_spec(demo_repo):
    repo = _policy_repo(demo_repo)
    done = specguard(repo, "hook", "team-rules/pwm-medical-minimum.yaml")
    assert "in 3 files" in done.stdout, done.stdout + done.stderr


def test_yaml_outside_the_policy_dirs_is_still_ignored(demo_repo):
    repo = _policy_repo(demo_repo)
    (repo / "notes").mkdir()
    (repo / "notes" / "team-rules.yaml").write_text("x: 1\n", encoding="utf-8")
    done = specguard(repo, "hook", "notes/team-rules.yaml")
    assert (done.returncode, done.stdout, done.stderr) == (0, "", "")


def test_config_option_names_the_policy_file(demo_repo):
    (demo_repo / "gate.yaml").write_text("format: 1\nfail_level: warning\n", encoding="utf-8")
    done = specguard(demo_repo, "hook", "--config", "gate.yaml", "gate.yaml")
    assert "in 3 files" in done.stdout, done.stdout + done.stderr
    # without --config the same file is just an unreferenced YAML file
    assert specguard(demo_repo, "hook", "gate.yaml").stdout == ""
