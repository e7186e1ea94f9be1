"""Resource limits, broken and narrow streams, a spec that changes under the run
(docs/reliability.md FI15, FI16, FI17, FI18, FI24)."""

from __future__ import annotations

import hashlib
import json
import resource
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

from ._helpers import (
    REPO,
    assert_no_traceback,
    cli,
    env,
    jobs,
    make_repo,
    no_cache,
    out,
    sitecustomize,
    temps,
)


def _limit(kind: int, value: int):
    def apply() -> None:
        resource.setrlimit(kind, (value, value))

    return apply


# ------------------------------------------------------------------------ FI15
@pytest.mark.parametrize("n_jobs", [1, 2])
def test_fi15_few_file_handles_many_inputs(tmp_path, n_jobs):
    repo = make_repo(tmp_path / "repo", copies=66)  # 201 specs
    report = tmp_path / "report.json"
    proc = cli(
        "check",
        "axes",
        "--format",
        "json",
        "--output",
        str(report),
        *jobs(n_jobs),
        cwd=repo,
        cache=tmp_path / "cache",
        preexec_fn=_limit(resource.RLIMIT_NOFILE, 32),
    )
    stdout, stderr = out(proc)
    assert_no_traceback(stderr)
    assert proc.returncode == 1, (stdout, stderr)  # findings, not a crash or a skipped file
    summary = json.loads(report.read_bytes())["summary"]
    assert summary["files"] == 201 and summary["unreadable"] == 0, summary
    assert temps(tmp_path) == []


# ------------------------------------------------------------------------ FI16
CORPUS_FILES = (
    "limits/A01-alias-bomb.yaml",
    "limits/A08-open-brackets-1000.yaml",
    "limits/L05-merge-key-bomb.yaml",
    "limits/A11-depth-250.yaml",
)


@pytest.mark.parametrize("command", ["check", "report"])
def test_fi16_address_space_512_mib(tmp_path, command):
    repo = make_repo(tmp_path / "repo", broken=True)
    corpus = repo / "corpus"
    corpus.mkdir()
    for rel in CORPUS_FILES:
        src = REPO / "tests" / "corpus" / rel
        if not src.exists():
            pytest.skip(f"corpus file {rel} is missing")
        shutil.copy(src, corpus / (src.stem + ".axis.yaml"))
    args = [
        "check",
        "axes",
        "broken",
        "corpus",
        "--format",
        "json",
        "--output",
        str(tmp_path / "r.json"),
    ]
    if command == "report":
        args = ["report", "axes", "broken", "corpus", "--html", str(tmp_path / "r.html")]
    proc = cli(
        *args,
        cwd=repo,
        cache=tmp_path / "cache",
        preexec_fn=_limit(resource.RLIMIT_AS, 512 * 1024 * 1024),
    )
    stdout, stderr = out(proc)
    assert "MemoryError" not in stdout + stderr
    assert_no_traceback(stderr)
    assert proc.returncode == 1, (stdout, stderr)
    if command == "check":
        summary = json.loads((tmp_path / "r.json").read_bytes())["summary"]
        assert summary["files"] == 5 + len(CORPUS_FILES) and summary["unreadable"] == 0
    else:
        assert (tmp_path / "r.html").read_text(encoding="utf-8").rstrip().endswith("</html>")


# ------------------------------------------------------------------------ FI17
@pytest.fixture(scope="module")
def many(tmp_path_factory) -> Path:
    return make_repo(tmp_path_factory.mktemp("pipe") / "repo", copies=40)  # text output ~1 MB


def test_fi17_head_closes_the_pipe(many, tmp_path):
    """`specguard check ... | head -1` in a shell: no traceback, status kept."""
    script = (
        f'{sys.executable} -m specguard check axes 2>{tmp_path / "err"} | head -1; echo "status=${{PIPESTATUS[0]}}"'
    )
    done = subprocess.run(
        ["bash", "-c", script],
        cwd=many,
        env=env(cache=tmp_path / "cache"),
        capture_output=True,
        timeout=120,
    )
    lines = done.stdout.decode().splitlines()
    assert len(lines) == 2 and lines[0].startswith("axes/"), lines
    assert lines[1] == "status=1", lines  # findings: never 0, never a crash
    assert_no_traceback((tmp_path / "err").read_text())
    assert (tmp_path / "err").read_text() == ""


def test_fi17_reader_gone_before_any_output(many, tmp_path):
    """The pipe is closed before the run writes; the report file is still complete."""
    report = tmp_path / "report.sarif"
    proc = subprocess.Popen(
        [
            sys.executable,
            "-m",
            "specguard",
            "check",
            "axes",
            "--format",
            "sarif",
            "--output",
            str(report),
        ],
        cwd=many,
        env=env(cache=tmp_path / "cache"),
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
    )
    proc.stdout.close()
    stderr = proc.stderr.read()
    proc.stderr.close()
    assert proc.wait(timeout=120) == 1
    assert_no_traceback(stderr)
    assert b"BrokenPipe" not in stderr and b"Exception ignored" not in stderr, stderr
    log = json.loads(report.read_bytes())
    assert len(log["runs"][0]["results"]) > 100
    assert temps(tmp_path) == []


def test_fi17_pipe_closed_midway_text(many, tmp_path):
    proc = subprocess.Popen(
        [sys.executable, "-m", "specguard", "check", "axes"],
        cwd=many,
        env=env(cache=tmp_path / "cache"),
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
    )
    first = proc.stdout.read(4096)
    proc.stdout.close()
    stderr = proc.stderr.read()
    proc.stderr.close()
    assert proc.wait(timeout=120) == 1
    assert first.startswith(b"axes/")
    assert stderr == b"", stderr


# ------------------------------------------------------------------------ FI18
def _unicode_repo(where: Path) -> Path:
    repo = make_repo(where)
    text = (repo / "axes" / "sample-lift.axis.yaml").read_text(encoding="utf-8")
    text = text.replace("  name: sample-lift\n", "  name: Hübner-µ-lift\n")
    text = text.replace("{ name: hold,", "{ name: Lüfter-µ,")
    text = text.replace(
        "  description: Vertical lift of the tube gripper",
        "  description: Hub für Röhrchen, 5 µm Auflösung",
    )
    (repo / "axes" / "prüf-µ.axis.yaml").write_text(text, encoding="utf-8")
    return repo


@pytest.mark.parametrize("fmt", ["text", "json", "sarif"])
def test_fi18_stdout_that_cannot_encode(tmp_path, fmt):
    repo = _unicode_repo(tmp_path / "repo")
    proc = cli(
        "check",
        "axes",
        "--format",
        fmt,
        cwd=repo,
        cache=tmp_path / "cache",
        extra_env={"PYTHONIOENCODING": "ascii:strict"},
    )
    stdout, stderr = out(proc)
    assert "UnicodeEncodeError" not in stderr
    assert_no_traceback(stderr)
    assert proc.returncode == 1, (stdout, stderr)
    proc.stdout.decode("ascii")  # nothing but ASCII reached the stream
    if fmt == "sarif":
        assert "pr%C3%BCf-%C2%B5.axis.yaml" in stdout  # a URI: percent-encoded UTF-8
    else:
        assert "pr\\u00fcf-\\u00b5.axis.yaml" in stdout  # the file name, escaped
    assert "L\\u00fcfter-\\u00b5" in stdout or "H\\u00fcbner-\\u00b5-lift" in stdout
    if fmt != "text":
        # still valid JSON, with the same values as an UTF-8 run
        utf8 = cli(
            "check",
            "axes",
            "--format",
            fmt,
            cwd=repo,
            cache=tmp_path / "cache",
            extra_env={"PYTHONIOENCODING": "utf-8"},
        )
        assert json.loads(stdout) == json.loads(utf8.stdout.decode("utf-8"))


def test_fi18_messages_on_stderr(tmp_path):
    repo = _unicode_repo(tmp_path / "repo")
    proc = cli(
        "check",
        "axes",
        "--format",
        "json",
        "--output",
        str(tmp_path / "nö" / "r.json"),
        cwd=repo,
        extra_env={"PYTHONIOENCODING": "ascii:strict"},
    )
    stdout, stderr = out(proc)
    assert proc.returncode == 2
    proc.stderr.decode("ascii")
    assert "UnicodeEncodeError" not in stderr and "r.json" in stderr


# ------------------------------------------------------------------------ FI24
_REWRITE = """\
import os
TARGET = {target!r}
NEW = {new!r}
WHEN = {when!r}
def _rewrite():
    with open(TARGET, "wb") as f:
        f.write(NEW)
try:
    if WHEN == "after-read":
        import specguard.source as _s
        _read = _s.read_limited
        def read_limited(path, *args, **kwargs):
            result = _read(path, *args, **kwargs)
            if os.path.realpath(path) == TARGET:
                _rewrite()  # the file changes right after its bytes were read
            return result
        _s.read_limited = read_limited
    else:
        import specguard.pipeline as _p
        name = "_discover" if hasattr(_p, "_discover") else "discover"
        _found = getattr(_p, name)
        def found(*args, **kwargs):
            result = _found(*args, **kwargs)
            _rewrite()  # the file changes between discovery and read
            return result
        setattr(_p, name, found)
except Exception as exc:  # make a broken injection visible
    print("injection failed:", exc)
"""


def _entry(report: dict, rel: str) -> dict:
    return next(f for f in report["files"] if f["file"] == rel)


def _findings(entry: dict) -> list:
    return [(f["rule"], f["location"]["line"], f["location"]["column"], f["message"]) for f in entry["findings"]]


@pytest.mark.parametrize("n_jobs", [1, 2])
@pytest.mark.parametrize("when", ["after-read", "after-discovery"])
def test_fi24_spec_rewritten_during_the_run(tmp_path, when, n_jobs):
    repo = make_repo(tmp_path / "repo", copies=1)
    rel = "axes/sample-lift.axis.yaml"
    spec = repo / rel
    first = spec.read_bytes()
    second = first.replace(b"    voltage: 24 V\n", b"    voltage: 24\n")  # a unit-invalid finding
    assert second != first
    # what each version gives on its own
    expected = {}
    for name, content in (("first", first), ("second", second)):
        spec.write_bytes(content)
        done = cli("check", "axes", "--format", "json", *no_cache(), cwd=repo)
        expected[name] = _findings(_entry(json.loads(done.stdout), rel))
    assert expected["first"] != expected["second"]
    assert any(f[0] == "unit-invalid" for f in expected["second"])
    spec.write_bytes(first)
    extra = sitecustomize(tmp_path / "inject", _REWRITE.format(target=str(spec.resolve()), new=second, when=when))
    done = cli(
        "check",
        "axes",
        "--format",
        "json",
        *jobs(n_jobs),
        cwd=repo,
        cache=tmp_path / "cache",
        extra_env=extra,
    )
    stdout, stderr = out(done)
    assert "injection failed" not in stdout, stdout
    assert spec.read_bytes() == second  # the rewrite did happen during the run
    entry = _entry(json.loads(done.stdout), rel)
    read = first if when == "after-read" else second
    assert _findings(entry) == expected["first" if when == "after-read" else "second"]
    # the hash in the report is of the very bytes that were parsed
    closure = {c["file"]: c["sha256"] for c in entry["closure"]}
    assert closure[rel] == hashlib.sha256(read).hexdigest()
