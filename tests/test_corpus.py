"""The bad-input corpus (docs/reliability.md §4 and §8), run end to end through the CLI.

Every case is ``tests/corpus/<family>/<id>-<slug>.expect.json`` with its input
beside it: ``<id>-<slug>.yaml``, or a folder ``<id>-<slug>/`` for cases of several
files (library references, CLI inputs). The expectation holds:

``source``   the docs/reliability.md row, or "own case ..."
``exit``     the exact exit status
``findings`` findings that must all appear: rule, severity, line, column (null:
             not checked) and a message regex; ``file`` is relative to the case
             folder (or to the family folder for a single-file case)
``count``    optional: the exact number of findings printed
``targets``  folder cases: the paths given to ``specguard check`` (relative to
             the folder; default the spec itself)
``setup``    optional hook run at test time (``name`` or ``name:arg``): large
             generated inputs, FIFOs, sockets, devices, symlinks, unreadable files
``alone``    the case is measured with no other run in parallel
``max_wall`` / ``max_rss_delta`` (MiB) / ``max_read`` (bytes): tighter bounds
``canary``   paths (relative to the repository root) that must not exist after the run
``forbid_output`` strings that must not appear on stdout or stderr
``args``     extra CLI options before the targets (``{dir}``: the case folder)
``output_file`` read the findings from this file (``--output``) instead of stdout
``mode``     ``crlf_identical``: a CRLF copy must give byte-identical text and SARIF

Each case runs ``python -m specguard check --no-color`` in a subprocess, cwd =
a temporary copy of the corpus with a ``.git`` folder marking the root, under
``RLIMIT_AS`` (baseline + 512 MiB) and a hard timeout; wall time (<= 4 s),
peak RSS (<= baseline + 64 MiB, from ``os.wait4``) and bytes read (``rchar`` of
``/proc/<pid>/io``, read before the child is reaped) are measured per run. The
baseline is a run on the clean base spec. Runs are scheduled from this one
thread, two at a time (``alone`` cases by themselves), so ``preexec_fn`` is safe.

The one-line summary is printed by the last test (visible with ``-s``) and
written to a file in the temporary directory, whose path is printed too.
"""

from __future__ import annotations

import json
import os
import re
import resource
import shutil
import socket
import stat
import subprocess
import sys
import tempfile
import time
from dataclasses import dataclass, field
from pathlib import Path

import pytest

CORPUS = Path(__file__).parent / "corpus"
FAMILIES = (
    "structure",
    "limits",
    "tags",
    "keys",
    "text",
    "numbers",
    "units",
    "references",
    "inputs",
)
BASE_SPEC = "_base/base.axis.yaml"

DEFAULT_WALL = 4.0  # seconds (docs/reliability.md G3)
DEFAULT_RSS_DELTA = 64  # MiB above the baseline run
AS_HEADROOM = 512 * 1024 * 1024  # RLIMIT_AS: baseline address space + 512 MiB
HARD_TIMEOUT = 20.0  # a run still going after this is killed (and fails)
PARALLEL = 2  # runs at a time (2-core machine)
BATCH = 8  # batchable cases of one family per CLI run

TRACEBACK = "Traceback (most recent call last)"
_FINDING = re.compile(
    r"^(?P<file>.+?):(?P<line>\d+):(?P<column>\d+): (?P<severity>error|warning|info): "
    r"(?P<message>.*) \[(?P<rule>[a-z0-9-]+)\](?: \((?:waived|baselined)\))?$"
)
_INPUT_ERROR = re.compile(
    r"^(?P<file>.+?): (?P<severity>error): (?P<message>cannot read input: .*) "
    r"\[(?P<rule>input-unreadable)\]$"
)
_SUMMARY = re.compile(r"^specguard: \d+ errors?, \d+ warnings?, \d+ info in \d+ files?")

CATALOGUE = (
    "A01 A03 A04 A06 A07 A08 A09 A10 A11 A12 A13 A14 A15 A16 "
    "B01 B02 B03 B04 B05 B07 B09 B10 C01 C02 C04 C05 C06 D01 D02 D03 D05 D08 "
    "E01 E02 E03 E04 E06 E07 E10 F01 F02 F04 F05 F06 F07 F08 F09 F10 F11 F13 F14 "
    "G01 G02 G03 G04 G06 H01 H02 H04 H05 H06 H07 H08 H09 H10 H11 I01 I02 I04"
).split()


# ------------------------------------------------------------------ the cases
@dataclass
class Case:
    family: str
    stem: str
    expect: dict

    @property
    def id(self) -> str:
        return f"{self.family}/{self.stem}"

    @property
    def folder_case(self) -> bool:
        return "targets" in self.expect

    @property
    def batchable(self) -> bool:
        """A committed single file with nothing but findings and an exit status to
        check can share a CLI run with others (see ``execute``)."""
        special = {
            "setup",
            "alone",
            "mode",
            "canary",
            "forbid_output",
            "max_wall",
            "max_rss_delta",
            "max_read",
        }
        return not self.folder_case and not special & set(self.expect)

    def rel_dir(self) -> str:
        """Folder (relative to the root) that ``file`` and ``targets`` are relative to."""
        return f"{self.family}/{self.stem}" if self.folder_case else self.family

    def targets(self) -> list[str]:
        if self.folder_case:
            return [f"{self.rel_dir()}/{t}" if t != "." else self.rel_dir() for t in self.expect["targets"]]
        return [f"{self.family}/{self.stem}.yaml"]


def load_cases() -> list[Case]:
    cases = []
    for family in FAMILIES:
        for path in sorted((CORPUS / family).glob("*.expect.json")):
            stem = path.name[: -len(".expect.json")]
            cases.append(Case(family, stem, json.loads(path.read_text(encoding="utf-8"))))
    return cases


CASES = load_cases()


# ------------------------------------------------------------------ set-up hooks
BASE_TEXT = (CORPUS / BASE_SPEC).read_text(encoding="utf-8")


def _write(path: Path, data: bytes | str) -> None:
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_bytes(data.encode() if isinstance(data, str) else data)


def _point(i: int) -> str:
    return f"  - {{ name: p{i:06d}, speed: {i % 4000} rpm, torque: 0.25 N*m, ambient: 35 degC }}\n"


def _realistic_10mb(target: Path, root: Path, arg: str) -> None:
    parts = [BASE_TEXT]
    size = len(BASE_TEXT)
    i = 0
    while size < 10_200_000:
        line = _point(i)
        parts.append(line)
        size += len(line)
        i += 1
    _write(target, "".join(parts))


def _padded(total: int) -> str:
    pad = total - len(BASE_TEXT.encode()) - len("#\n")
    return BASE_TEXT + "#" + "x" * pad + "\n"


def _closure_4mib(target: Path, root: Path, arg: str) -> None:
    """17+ library files of 255 KiB: a motor chain of 8, a stage chain of 8, chokes."""
    folder = target.parent
    base = CORPUS / "_base/library"
    motor = (base / "motors/pm-motor.yaml").read_text()
    stage = (base / "stages/inverter.yaml").read_text()
    chokes = "format: 1\nchokes:\n  inductance: 100 uH\n  placement: per-phase\n  count: 3\n"

    def padded(text: str) -> str:
        return text + "#" + "p" * (255 * 1024 - len(text) - 2) + "\n"

    for name, section, full in (
        ("m", "motor", motor),
        ("s", "stage", stage),
        ("c", "chokes", chokes),
    ):
        n = 8 if name != "c" else 2
        for i in range(1, n + 1):
            text = full if i == n else f"format: 1\n{section}:\n  from: {name}{i + 1}.yaml\n"
            _write(folder / "lib" / f"{name}{i}.yaml", padded(text))
    spec = (
        "format: 1\naxis:\n  name: closure\n"
        "motor:\n  from: lib/m1.yaml\nstage:\n  from: lib/s1.yaml\n"
        "chokes:\n  from: lib/c1.yaml\n"
        "operating_points:\n"
        "  - { name: index, speed: 600 rpm, torque: 0.25 N*m, ambient: 35 degC }\n"
    )
    _write(target, spec)


def _fifo(target: Path, root: Path, arg: str) -> None:
    p = target.parent / arg
    p.parent.mkdir(parents=True, exist_ok=True)
    os.mkfifo(p)


def _socket(target: Path, root: Path, arg: str) -> None:
    p = target.parent / arg
    p.parent.mkdir(parents=True, exist_ok=True)
    here = os.getcwd()
    os.chdir(p.parent)  # bind by a short relative name (AF_UNIX paths are short)
    try:
        s = socket.socket(socket.AF_UNIX, socket.SOCK_STREAM)
        s.bind(p.name)
        s.close()  # the socket file stays
    finally:
        os.chdir(here)


def _device(target: Path, root: Path, arg: str) -> None:
    if os.geteuid() != 0:
        pytest.skip("creating a character device needs root (mknod)")
    p = target.parent / arg
    p.parent.mkdir(parents=True, exist_ok=True)
    os.mknod(p, 0o600 | stat.S_IFCHR, os.makedev(1, 3))  # same numbers as /dev/null


def _symlink(target: Path, root: Path, arg: str) -> None:
    name, dest = arg.split("=", 1)
    p = target.parent / name
    p.parent.mkdir(parents=True, exist_ok=True)
    os.symlink(dest, p)


def _mkdir(target: Path, root: Path, arg: str) -> None:
    (target.parent / arg).mkdir(parents=True)


def _unreadable(target: Path, root: Path, arg: str) -> None:
    os.chmod(target.parent / arg, 0)


def _substitute_root(target: Path, root: Path, arg: str) -> None:
    target.write_text(target.read_text().replace("@ROOT@", str(root)))


def _newline_name(target: Path, root: Path, arg: str) -> None:
    _write(
        target.parent / "bad\nname.axis.yaml",
        BASE_TEXT.replace("    voltage: 48 V\n", "    voltage: 48\n"),
    )


_SITECUSTOMIZE = """\
import os
TARGET = {target!r}
try:
    import specguard.pipeline as _p
    _discover = _p._discover  # what check_paths calls (discover() wraps it)
    def discover(*args, **kwargs):
        found = _discover(*args, **kwargs)
        os.unlink(TARGET)  # the file goes away between discovery and read
        return found
    _p._discover = discover
except Exception as exc:  # make a broken injection visible
    print("corpus injection failed:", exc)
"""


def _delete_after_discovery(target: Path, root: Path, arg: str) -> dict:
    inject = root.parent / ("inject-" + target.parent.name)
    inject.mkdir()
    (inject / "sitecustomize.py").write_text(_SITECUSTOMIZE.format(target=str(target.parent / arg)))
    return {"PYTHONPATH": str(inject)}


SETUPS = {
    "deep_flow_100k": lambda t, r, a: _write(t, "[" * 100_000),
    "realistic_10mb": _realistic_10mb,
    "flow_list_10mb": lambda t, r, a: _write(t, "notes: [" + "1," * 5_100_000 + "1]\n"),
    "flow_list_256k": lambda t, r, a: _write(t, "[" + ",".join(["1"] * 131_071) + "]"),
    "keys_100k": lambda t, r, a: _write(t, "".join(f"k{i:06d}: 1\n" for i in range(100_000))),
    "notes_10mb": lambda t, r, a: _write(t, BASE_TEXT + "notes: " + "x" * 10_000_000 + "\n"),
    "notes_70k": lambda t, r, a: _write(t, BASE_TEXT + "notes: " + "x" * 70_000 + "\n"),
    "at_cap": lambda t, r, a: _write(t, _padded(256 * 1024)),
    "over_cap": lambda t, r, a: _write(t, _padded(256 * 1024 + 1)),
    "closure_4mib": _closure_4mib,
    "fifo": _fifo,
    "socket": _socket,
    "device": _device,
    "symlink": _symlink,
    "mkdir": _mkdir,
    "unreadable": _unreadable,
    "substitute_root": _substitute_root,
    "newline_name": _newline_name,
    "delete_after_discovery": _delete_after_discovery,
}


# ------------------------------------------------------------------ running
@dataclass
class Run:
    args: list[str]
    cwd: Path
    env: dict = field(default_factory=dict)
    drop_dac: bool = False
    alone: bool = False
    # results
    exit: int | None = None
    stdout: str = ""
    stderr: str = ""
    wall: float = 0.0
    rss_kib: int = 0
    rchar: int | None = None
    killed: bool = False
    batch: list = field(default_factory=list)  # case ids sharing this run (empty: one case)
    cmd: list | None = None  # None: python -m specguard ARGS (other commands test the runner)


def _drop_dac_capabilities() -> None:
    """Root ignores file modes; without CAP_DAC_OVERRIDE and CAP_DAC_READ_SEARCH in
    the bounding set, the exec'd child gets EACCES like any user."""
    import ctypes

    libc = ctypes.CDLL(None, use_errno=True)
    for cap in (1, 2):  # CAP_DAC_OVERRIDE, CAP_DAC_READ_SEARCH
        if libc.prctl(24, cap, 0, 0, 0) != 0:  # PR_CAPBSET_DROP
            raise OSError(ctypes.get_errno(), "prctl(PR_CAPBSET_DROP)")


def _preexec(as_limit: int | None, drop_dac: bool):
    import ctypes  # noqa: F401  (loaded before fork)

    def pre() -> None:
        resource.setrlimit(resource.RLIMIT_CORE, (0, 0))
        if as_limit is not None:
            resource.setrlimit(resource.RLIMIT_AS, (as_limit, as_limit))
        if drop_dac:
            _drop_dac_capabilities()

    return pre


def _environment(extra: dict) -> dict:
    env = {k: v for k, v in os.environ.items() if not k.startswith(("PYTEST", "COV_"))}
    env.pop("PYTHONPATH", None)
    env.update({"NO_COLOR": "1", "PYTHONDONTWRITEBYTECODE": "1", "LC_ALL": "C.UTF-8", "COLUMNS": "200"})
    env.update(extra)
    return env


class _Live:
    def __init__(self, run: Run, as_limit: int | None) -> None:
        self.run = run
        self.out = tempfile.TemporaryFile()
        self.err = tempfile.TemporaryFile()
        cmd = run.cmd or [sys.executable, "-m", "specguard", *run.args]
        self.t0 = time.monotonic()
        self.proc = subprocess.Popen(
            cmd,
            cwd=run.cwd,
            stdin=subprocess.DEVNULL,
            stdout=self.out,
            stderr=self.err,
            env=_environment(run.env),
            preexec_fn=_preexec(as_limit, run.drop_dac),
        )

    def poll(self) -> bool:
        """True once the child has exited and was reaped (results filled in)."""
        pid = self.proc.pid
        info = os.waitid(os.P_PID, pid, os.WEXITED | os.WNOWAIT | os.WNOHANG)
        if info is None:
            if time.monotonic() - self.t0 > HARD_TIMEOUT:
                self.run.killed = True
                self.proc.kill()
            return False
        run = self.run
        run.wall = time.monotonic() - self.t0
        try:  # the zombie's I/O counters are still there until it is reaped
            io = Path(f"/proc/{pid}/io").read_text()
            run.rchar = int(re.search(r"rchar: (\d+)", io).group(1))
        except (OSError, AttributeError):
            run.rchar = None
        _, status, usage = os.wait4(pid, 0)
        self.proc.returncode = run.exit = os.waitstatus_to_exitcode(status)
        run.rss_kib = usage.ru_maxrss
        for stream, name in ((self.out, "stdout"), (self.err, "stderr")):
            stream.seek(0)
            setattr(run, name, stream.read().decode("utf-8", "backslashreplace"))
            stream.close()
        return True


def execute(runs: list[Run], as_limit: int | None) -> None:
    """Run everything from this thread: ``alone`` runs one by one, then the rest
    ``PARALLEL`` at a time."""
    queue = [r for r in runs if r.alone] + [r for r in runs if not r.alone]
    live: list[_Live] = []
    while queue or live:
        while queue and len(live) < PARALLEL:
            if queue[0].alone and live:
                break
            nxt = queue.pop(0)
            live.append(_Live(nxt, as_limit))
            if nxt.alone:
                break
        live = [lv for lv in live if not lv.poll()]
        if live:
            time.sleep(0.005)


def _vm_peak_of_baseline(root: Path) -> int:
    """Peak address space of a CLI run on the base spec (bytes)."""
    code = (
        "import runpy, sys\n"
        f"sys.argv = ['specguard', 'check', '--no-color', {BASE_SPEC!r}]\n"
        "try:\n    runpy.run_module('specguard', run_name='__main__')\n"
        "except SystemExit:\n    pass\n"
        "peak = [l for l in open('/proc/self/status') if l.startswith('VmPeak:')][0]\n"
        "sys.stderr.write('VMPEAK ' + peak.split()[1] + '\\n')\n"
    )
    res = subprocess.run(
        [sys.executable, "-c", code],
        cwd=root,
        capture_output=True,
        text=True,
        env=_environment({}),
        timeout=60,
    )
    m = re.search(r"VMPEAK (\d+)", res.stderr)
    assert m, res.stderr
    return int(m.group(1)) * 1024


# ------------------------------------------------------------------ session
@dataclass
class Session:
    root: Path
    baseline: Run
    as_limit: int
    runs: dict = field(default_factory=dict)  # case id -> list[Run]
    skipped: dict = field(default_factory=dict)  # case id -> reason


def _prepare(case: Case, root: Path, tmp: Path) -> list[Run]:
    exp = case.expect
    env: dict = {}
    drop_dac = False
    target = root / case.targets()[0]
    if case.folder_case:
        folder = root / case.rel_dir()
        folder.mkdir(parents=True, exist_ok=True)
        first = exp["targets"][0]
        # hooks work beside ``target``: for a folder case that is the folder itself
        target = folder / (first if first != "." else "spec.axis.yaml")
    setup = exp.get("setup")
    if setup:
        name, _, arg = setup.partition(":")
        extra = SETUPS[name](target, root, arg)
        if isinstance(extra, dict):
            env.update(extra)
        if name == "unreadable" and os.geteuid() == 0:
            drop_dac = True
    alone = bool(exp.get("alone"))
    extra = [a.replace("{dir}", case.rel_dir()) for a in exp.get("args", ())]
    args = ["check", "--no-color", *extra, *case.targets()]
    runs = [Run(args, root, env, drop_dac, alone)]
    if exp.get("mode") == "crlf_identical":
        # a second repository with the same file in CRLF form, same relative path
        other = tmp / "crlf-root"
        (other / ".git").mkdir(parents=True)
        rel = case.targets()[0]
        data = (root / rel).read_bytes()
        assert b"\r" not in data
        _write(other / rel, data.replace(b"\n", b"\r\n"))
        sarif = ["check", "--no-color", "--format", "sarif", rel]
        runs += [Run(sarif, root, env), Run(args, other, env), Run(sarif, other, env)]
    return runs


@pytest.fixture(scope="session")
def corpus_session(request, tmp_path_factory) -> Session:
    tmp = tmp_path_factory.mktemp("corpus")
    root = tmp / "repo"
    shutil.copytree(CORPUS, root, symlinks=True)
    (root / ".git").mkdir()
    (root / ".git" / "config").write_text("[core]\n\tsecret = never-read-by-specguard\n")
    selected = {
        item.callspec.params["case"].id
        for item in request.session.items
        if item.originalname == "test_corpus_case" and hasattr(item, "callspec")
    }
    as_limit = _vm_peak_of_baseline(root) + AS_HEADROOM
    baseline = Run(["check", "--no-color", BASE_SPEC], root, alone=True)
    execute([baseline], as_limit)
    assert baseline.exit == 0, baseline.stdout + baseline.stderr
    session = Session(root, baseline, as_limit)
    runs = []
    pending: dict[str, list[Case]] = {}
    for case in CASES:
        if case.id not in selected:
            continue
        if case.batchable:
            pending.setdefault(case.family, []).append(case)
            continue
        try:
            session.runs[case.id] = _prepare(case, root, tmp)
        except pytest.skip.Exception as exc:
            session.skipped[case.id] = str(exc)
            continue
        runs += session.runs[case.id]
    for group in pending.values():
        for i in range(0, len(group), BATCH):
            chunk = group[i : i + BATCH]
            run = Run(["check", "--no-color", *[c.targets()[0] for c in chunk]], root)
            run.batch = [c.id for c in chunk]
            for c in chunk:
                session.runs[c.id] = [run]
            runs.append(run)
    t0 = time.monotonic()
    execute(runs, as_limit)
    session.total = time.monotonic() - t0
    return session


# ------------------------------------------------------------------ assertions
def _parse(stdout: str) -> list[dict]:
    out = []
    for line in stdout.splitlines():
        m = _FINDING.match(line) or _INPUT_ERROR.match(line)
        if m:
            d = m.groupdict()
            d.setdefault("line", None)
            d.setdefault("column", None)
            out.append(d)
    return out


def _one_of(value) -> list:
    """An expectation field: one value, or a list of the values the two parser
    paths (C and pure; SPECGUARD_PURE_YAML=1) may give."""
    return value if isinstance(value, list) else [value]


def _matches(expected: dict, got: dict, path: str) -> bool:
    if got["file"] != path or got["rule"] not in _one_of(expected["rule"]):
        return False
    if expected.get("severity", "error") != got["severity"]:
        return False
    for key in ("line", "column"):
        if expected.get(key) is not None and int(got[key] or 0) not in _one_of(expected[key]):
            return False
    return re.search(expected["message"], got["message"]) is not None


def _expected_path(case: Case, expected: dict) -> str:
    if "file" in expected:
        return os.path.normpath(os.path.join(case.rel_dir(), expected["file"])).replace(os.sep, "/")
    return case.targets()[0]


@pytest.mark.skipif(
    not sys.platform.startswith("linux"),
    reason="the corpus runner measures with Linux /proc and rlimits",
)
@pytest.mark.parametrize("case", CASES, ids=lambda c: c.id)
def test_corpus_case(case: Case, corpus_session: Session) -> None:
    if case.id in corpus_session.skipped:
        pytest.skip(corpus_session.skipped[case.id])
    exp = case.expect
    runs = corpus_session.runs[case.id]
    run = runs[0]
    base = corpus_session.baseline
    shown = f"\n--- stdout\n{run.stdout}\n--- stderr\n{run.stderr}"
    assert not run.killed, f"still running after {HARD_TIMEOUT} s" + shown
    for r in runs:
        assert TRACEBACK not in r.stdout and TRACEBACK not in r.stderr, shown
        assert r.exit != 3, "exit 3 (internal error)" + shown
    got = _parse(run.stdout)
    if exp.get("output_file"):  # the findings went to --output FILE
        report = corpus_session.root / exp["output_file"].replace("{dir}", case.rel_dir())
        got = _parse(report.read_text(encoding="utf-8"))
    if run.batch:
        # Several cases in one run: the run's exit is the highest of the cases'
        # (error contract), and this case's own exit is read from its findings
        # (1 exactly when it has an error; the fail level is the default, error).
        mine = [g for g in got if g["file"] == case.targets()[0]]
        own_exit = 1 if any(g["severity"] == "error" for g in mine) else 0
        batch_exit = max(c.expect["exit"] for c in CASES if c.id in run.batch)
        assert run.exit == batch_exit, f"batch exit {run.exit}, expected {batch_exit}" + shown
        assert own_exit == exp["exit"], f"exit {own_exit} (from its findings), expected {exp['exit']}" + shown
        got = mine
    else:
        assert run.exit == exp["exit"], f"exit {run.exit}, expected {exp['exit']}" + shown
    assert any(_SUMMARY.match(line) for line in run.stdout.splitlines()[-3:]), "no summary line" + shown
    for expected in exp["findings"]:
        path = _expected_path(case, expected)
        assert any(_matches(expected, g, path) for g in got), f"missing {path}: {expected}" + shown
    if exp.get("count") is not None:
        assert len(got) == exp["count"], f"{len(got)} findings, expected {exp['count']}" + shown
    max_wall = exp.get("max_wall", DEFAULT_WALL)
    assert run.wall <= max_wall, f"wall {run.wall:.2f} s > {max_wall} s"
    max_rss = exp.get("max_rss_delta", DEFAULT_RSS_DELTA)
    delta = (run.rss_kib - base.rss_kib) / 1024
    assert delta <= max_rss, f"peak RSS {run.rss_kib} KiB is {delta:.1f} MiB above the baseline (limit {max_rss})"
    if exp.get("max_read") is not None:
        assert run.rchar is not None and base.rchar is not None, "no /proc/<pid>/io"
        assert run.rchar <= base.rchar + exp["max_read"], f"read {run.rchar} bytes (baseline {base.rchar})"
    for canary in exp.get("canary", ()):
        assert not (corpus_session.root / canary).exists(), f"{canary} was created: the input executed something"
    for s in exp.get("forbid_output", ()):
        assert s not in run.stdout and s not in run.stderr, f"{s!r} reached the output"
    if exp.get("mode") == "crlf_identical":
        lf_text, lf_sarif, crlf_text, crlf_sarif = runs
        assert crlf_text.exit == lf_text.exit
        assert crlf_text.stdout == lf_text.stdout, "CRLF findings differ from LF"
        assert crlf_sarif.stdout == lf_sarif.stdout, "CRLF SARIF (fingerprints) differs from LF"
        assert "partialFingerprints" in lf_sarif.stdout


# ------------------------------------------------------------------ the runner itself
@pytest.mark.skipif(not sys.platform.startswith("linux"), reason="Linux rlimits and /proc")
def test_runner_measures_and_limits(tmp_path) -> None:
    """The bounds the corpus relies on can fail: RSS is measured, RLIMIT_AS bites,
    and bytes read are counted."""
    hog = "b = bytearray(200 << 20); open('/dev/zero', 'rb').read(8 << 20); print(len(b))"
    free, capped = Run([], tmp_path), Run([], tmp_path)
    free.cmd = capped.cmd = [sys.executable, "-c", hog]
    execute([free], None)
    execute([capped], 150 << 20)
    assert free.exit == 0 and free.rss_kib >= 190 * 1024, (free.exit, free.rss_kib)
    assert free.rchar is not None and free.rchar >= 8 << 20
    assert capped.exit != 0 and "MemoryError" in capped.stderr, (capped.exit, capped.stderr)


# ------------------------------------------------------------------ the corpus itself
def test_corpus_is_well_formed() -> None:
    """Every expectation names its source and has its input; every input has an
    expectation; rule ids are known; the catalogue rows are all covered."""
    from specguard.engine.evaluate import load_pack
    from specguard.findings import BUILTIN_IDS

    known = set(BUILTIN_IDS) | {r.id for r in load_pack().rules}
    stems = set()
    for case in CASES:
        exp = case.expect
        assert exp.get("source"), case.id
        assert exp["exit"] in (0, 1, 2), case.id
        assert exp["findings"] or exp["exit"] == 0, f"{case.id}: asserts no finding yet fails"
        if exp["exit"] == 0 and not exp["findings"]:
            assert exp.get("count") == 0, f"{case.id}: a clean case must pin count 0"
        for f in exp["findings"]:
            assert set(_one_of(f["rule"])) <= known, (case.id, f["rule"])
            re.compile(f["message"])
        if exp.get("setup"):
            assert exp["setup"].partition(":")[0] in SETUPS, case.id
        folder = CORPUS / case.rel_dir()
        if not case.folder_case and not exp.get("setup"):
            assert (CORPUS / case.targets()[0]).is_file(), case.id
        if case.folder_case:
            assert folder.is_dir(), case.id
        stems.add((case.family, case.stem))
    for family in FAMILIES:
        for p in (CORPUS / family).glob("*.yaml"):
            assert (family, p.stem) in stems, f"{p} has no expectation"
    covered = {m.group() for c in CASES for m in re.finditer(r"\b[A-I]\d\d\b", c.expect["source"])}
    assert set(CATALOGUE) <= covered, sorted(set(CATALOGUE) - covered)
    for family in FAMILIES:
        own = [c for c in CASES if c.family == family and c.expect["source"].startswith("own case")]
        assert len(own) >= 2, f"{family}: fewer than 2 own cases"


def test_corpus_summary(corpus_session: Session) -> None:
    """Runs last (file order): the one-line summary, and the totals gated."""
    unique: dict[int, tuple[str, Run]] = {}
    for cid, rs in corpus_session.runs.items():
        for r in rs:
            label = f"batch[{', '.join(r.batch)}]" if r.batch else cid
            unique.setdefault(id(r), (label, r))
    runs = list(unique.values())
    if not runs:
        pytest.skip("no corpus case selected")
    base = corpus_session.baseline
    tracebacks = sum(TRACEBACK in r.stdout or TRACEBACK in r.stderr for _, r in runs)
    exit3 = sum(r.exit == 3 for _, r in runs)
    slow_id, slow = max(runs, key=lambda x: x[1].wall)
    big_id, big = max(runs, key=lambda x: x[1].rss_kib)
    line = (
        f"specguard corpus: {len(corpus_session.runs)} cases ({len(runs)} CLI runs, "
        f"{len(corpus_session.skipped)} skipped), tracebacks {tracebacks}, exit-3 results {exit3}, "
        f"slowest {slow_id} {slow.wall:.2f} s, "
        f"largest RSS delta {(big.rss_kib - base.rss_kib) / 1024:+.1f} MiB ({big_id}; "
        f"baseline {base.rss_kib / 1024:.1f} MiB, "
        f"RLIMIT_AS {corpus_session.as_limit / 2**20:.0f} MiB), "
        f"total {corpus_session.total:.1f} s"
    )
    out = Path(tempfile.gettempdir()) / "specguard-corpus-summary.txt"
    out.write_text(line + "\n", encoding="utf-8")
    print("\n" + line + f"\n(summary written to {out})")
    assert tracebacks == 0 and exit3 == 0, line
