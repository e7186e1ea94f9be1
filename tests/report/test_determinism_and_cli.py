"""Byte-identical outputs across hash seeds; the report command; matplotlib off the check path."""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

from .figset import REPO

RENDER = """
import sys
sys.path.insert(0, {repo!r})
from tests.report.figset import demo_report
from specguard.report import html, markdown
report = demo_report()
open(sys.argv[1], "w", encoding="utf-8").write(html.render(report))
open(sys.argv[2], "w", encoding="utf-8").write(markdown.render(report))
"""


def _env(seed: str) -> dict:
    env = {k: v for k, v in os.environ.items() if k != "SOURCE_DATE_EPOCH"}
    env["PYTHONHASHSEED"] = seed
    return env


def test_html_and_markdown_byte_identical_across_hash_seeds(tmp_path: Path):
    outputs = []
    for seed in ("0", "4242"):
        h, m = tmp_path / f"r{seed}.html", tmp_path / f"r{seed}.md"
        subprocess.run(
            [sys.executable, "-c", RENDER.format(repo=str(REPO)), str(h), str(m)],
            check=True,
            env=_env(seed),
            cwd=REPO,
            timeout=120,
        )
        outputs.append((h.read_bytes(), m.read_bytes()))
    assert outputs[0][0] == outputs[1][0]
    assert outputs[0][1] == outputs[1][1]
    assert outputs[0][0].count(b"<svg") >= 6  # the plots are part of what is compared


def test_cli_report_identical_across_seeds_and_equal_to_check_status(tmp_path: Path):
    codes, files = [], []
    for seed in ("1", "77"):
        h, m = tmp_path / f"c{seed}.html", tmp_path / f"c{seed}.md"
        done = subprocess.run(
            [sys.executable, "-m", "specguard", "report", "examples/robot", "--html", str(h), "--markdown", str(m)],
            capture_output=True,
            env=_env(seed),
            cwd=REPO,
            timeout=120,
        )
        codes.append(done.returncode)
        files.append((h.read_bytes(), m.read_bytes()))
    check = subprocess.run(
        [sys.executable, "-m", "specguard", "check", "examples/robot"],
        capture_output=True,
        env=_env("0"),
        cwd=REPO,
        timeout=120,
    )
    assert codes[0] == codes[1] == check.returncode
    assert files[0] == files[1]
    html_text = files[0][0].decode("utf-8")
    assert "examples/robot/axes/sample-lift.axis.yaml" in html_text
    assert str(REPO) not in html_text and str(REPO) not in files[0][1].decode("utf-8")  # repo-relative only
    assert "Generated" not in html_text  # no clock time without SOURCE_DATE_EPOCH
    assert not list(tmp_path.glob(".specguard-*"))  # no temp files left by the atomic writes


def test_source_date_epoch_is_the_only_date(tmp_path: Path):
    env = _env("0")
    env["SOURCE_DATE_EPOCH"] = "1700000000"
    out = tmp_path / "r.html"
    subprocess.run(
        [sys.executable, "-m", "specguard", "report", "examples/robot/axes/pipette-x.axis.yaml", "--html", str(out)],
        capture_output=True,
        env=env,
        cwd=REPO,
        timeout=120,
    )
    assert "Generated 2023-11-14 22:13 UTC." in out.read_text(encoding="utf-8")


def test_report_needs_an_output_and_a_writable_target(tmp_path: Path):
    base = [sys.executable, "-m", "specguard", "report", "examples/robot"]
    none = subprocess.run(base, capture_output=True, cwd=REPO, timeout=60, env=_env("0"))
    assert none.returncode == 2 and b"--html" in none.stderr
    missing = tmp_path / "no" / "such" / "r.html"
    bad = subprocess.run(base + ["--html", str(missing)], capture_output=True, cwd=REPO, timeout=60, env=_env("0"))
    assert bad.returncode == 2 and b"output-error" in bad.stderr
    assert not missing.parent.exists()


def test_check_does_not_import_matplotlib():
    code = (
        "import sys, specguard.cli\n"
        "rc = specguard.cli.main(['check', 'examples/robot'])\n"
        "assert 'matplotlib' not in sys.modules, 'matplotlib imported on the check path'\n"
        "import specguard.report.html, specguard.report.markdown, specguard.figures.curves\n"
        "assert 'matplotlib' not in sys.modules, 'importing the reporters imported matplotlib'\n"
        "print('ok', rc)\n"
    )
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, cwd=REPO, timeout=60, env=_env("0"))
    assert done.returncode == 0, done.stderr.decode()
    assert done.stdout.decode().rstrip().split("\n")[-1].startswith("ok ")


def test_demo_html_report_is_written(tmp_path: Path):
    # The 3 s budget of this command is measured by benchmarks/bench_scale.py.
    subprocess.run(
        [sys.executable, "-m", "specguard", "report", "examples", "--html", str(tmp_path / "d.html")],
        capture_output=True,
        cwd=REPO,
        timeout=120,
        env=_env("0"),
    )
    assert (tmp_path / "d.html").stat().st_size > 50_000


def test_feasibility_map_svg_is_byte_identical_across_renders():
    import re

    from specguard.report import html as html_report

    from .figset import demo_report

    def maps() -> list[str]:
        page = html_report.render(demo_report(), jobs=1)
        return re.findall(r'<figure class="plot plot-map">(.*?)</figure>', page, re.S)

    first, second = maps(), maps()
    assert first and first == second
