"""read_limited and open_reference (docs/reliability.md H01-H11, I01, 7.2)."""

from __future__ import annotations

import os
import socket
import threading

import pytest

from specguard.source import (
    InputError,
    Limits,
    ReferenceProblem,
    _reading,
    open_reference,
    read_limited,
)


@pytest.fixture
def repo(tmp_path):
    root = tmp_path / "repo"
    (root / "axes").mkdir(parents=True)
    (root / "lib" / "motors").mkdir(parents=True)
    (root / "lib" / "motors" / "m1.yaml").write_text("motor: {pole_pairs: 4}\n")
    (root / "axes" / "x1.yaml").write_text("motor_ref: ../lib/motors/m1.yaml\n")
    (root / ".git").mkdir()
    (root / ".git" / "config").write_text("[core]\n")
    (tmp_path / "outside.yaml").write_text("secret: do-not-leak\n")
    return root


@pytest.fixture
def opened(monkeypatch):
    """Records every os.open of the reader module."""
    calls = []
    real_open = os.open

    def recording_open(path, flags, *args, **kwargs):
        calls.append(os.fspath(path))
        return real_open(path, flags, *args, **kwargs)

    monkeypatch.setattr(_reading.os, "open", recording_open)
    return calls


def test_reference_resolves_and_reads(repo, opened):
    path, data, size = open_reference(repo, repo / "axes" / "x1.yaml", "../lib/motors/m1.yaml")
    assert path == (repo / "lib" / "motors" / "m1.yaml").resolve()
    assert data == b"motor: {pole_pairs: 4}\n" and size == len(data)
    assert opened == [str(path)]


def test_reference_reads_at_most_cap_plus_one(repo):
    (repo / "lib" / "big.yaml").write_bytes(b"#" * 5000)
    _, data, size = open_reference(repo, repo / "axes" / "x1.yaml", "../lib/big.yaml", Limits(max_bytes=100))
    assert len(data) == 101 and size == 5000


@pytest.mark.parametrize(
    "ref, pattern",
    [
        ("/etc/passwd", "absolute path"),  # docs/reliability.md H01
        ("C:\\x.yaml", "names a drive"),
        ("C:x.yaml", "names a drive"),
        ("\\\\host\\share\\x.yaml", "network"),
        ("//host/share/x.yaml", "network"),
        ("~/x.yaml", "home directories are not expanded"),
        ("$HOME/x.yaml", "environment variables are not expanded"),
        ("${HOME}/x.yaml", "environment variables are not expanded"),
        ("lib/%USERPROFILE%/x.yaml", "environment variables are not expanded"),
        ("https://example.com/m.yaml", "is a URL"),  # docs/reliability.md H04
        ("file:///etc/passwd", "is a URL"),
        ("git://host/repo.yaml", "is a URL"),
        ("lib/m1.yaml\x00.txt", "NUL, line break or control"),  # docs/reliability.md H10
        ("lib/m1.yaml\nother", "NUL, line break or control"),
        ("lib\\motors\\m1.yaml", "backslash"),
        ("../../outside.yaml", "leads outside the repository root"),  # docs/reliability.md H02
        ("../../../../../../etc/passwd", "leads outside the repository root"),
        ("../lib/../../../outside.yaml", "leads outside the repository root"),
        ("..", "leads outside the repository root"),
        ("../.git/config", "into .git/"),  # docs/reliability.md H11
        ("", "is empty"),
    ],
)
def test_rejected_before_any_open(repo, opened, ref, pattern):
    with pytest.raises(ReferenceProblem, match=pattern) as info:
        open_reference(repo, repo / "axes" / "x1.yaml", ref)
    assert opened == []
    assert "do-not-leak" not in str(info.value)
    assert "\n" not in str(info.value) and "\x00" not in str(info.value)


def test_message_quotes_the_requested_path(repo):
    with pytest.raises(ReferenceProblem) as info:
        open_reference(repo, repo / "axes" / "x1.yaml", "../../outside.yaml")
    assert "'../../outside.yaml'" in str(info.value)


def test_symlink_escape(repo, tmp_path, opened):
    (repo / "lib" / "link.yaml").symlink_to(tmp_path / "outside.yaml")
    (repo / "lib" / "dirlink").symlink_to(tmp_path)
    for ref in ("../lib/link.yaml", "../lib/dirlink/outside.yaml"):
        with pytest.raises(ReferenceProblem, match="through a symbolic link") as info:
            open_reference(repo, repo / "axes" / "x1.yaml", ref)
        assert "do-not-leak" not in str(info.value)
    assert opened == []


def test_symlink_inside_root_is_followed(repo):
    (repo / "lib" / "alias.yaml").symlink_to(repo / "lib" / "motors" / "m1.yaml")
    path, data, _ = open_reference(repo, repo / "axes" / "x1.yaml", "../lib/alias.yaml")
    assert path.name == "m1.yaml" and data.startswith(b"motor:")


def test_directory_target(repo, opened):
    with pytest.raises(ReferenceProblem, match="'lib/motors', which is a directory"):
        open_reference(repo, repo / "axes" / "x1.yaml", "../lib/motors")
    assert opened == []


def test_fifo_target_does_not_block(repo, opened):
    """docs/reliability.md H08: a plain open of a FIFO blocks forever."""
    fifo = repo / "lib" / "pipe.yaml"
    os.mkfifo(fifo)
    outcome = []

    def run():
        try:
            open_reference(repo, repo / "axes" / "x1.yaml", "../lib/pipe.yaml")
        except ReferenceProblem as exc:
            outcome.append(str(exc))

    t = threading.Thread(target=run, daemon=True)
    t.start()
    t.join(5)
    assert not t.is_alive(), "open_reference blocked on a FIFO"
    assert outcome and "which is a FIFO, not a regular file" in outcome[0]
    assert opened == []


def test_socket_target(repo, opened):
    sock_path = repo / "lib" / "s.yaml"
    s = socket.socket(socket.AF_UNIX)
    try:
        s.bind(str(sock_path))
        with pytest.raises(ReferenceProblem, match="which is a socket"):
            open_reference(repo, repo / "axes" / "x1.yaml", "../lib/s.yaml")
    finally:
        s.close()
    assert opened == []


def test_git_target_via_symlink(repo, opened):
    (repo / "lib" / "cfg.yaml").symlink_to(repo / ".git" / "config")
    with pytest.raises(ReferenceProblem, match="into .git/"):
        open_reference(repo, repo / "axes" / "x1.yaml", "../lib/cfg.yaml")
    assert opened == []


def test_denied_paths(repo, opened):
    (repo / "baseline.json").write_text("{}")
    with pytest.raises(ReferenceProblem, match="'baseline.json', which specs may not reference"):
        open_reference(repo, repo / "axes" / "x1.yaml", "../baseline.json", denied=[repo / "baseline.json"])
    assert opened == []


def test_missing_target(repo, opened):
    """docs/reliability.md H05: names the resolved repo-relative path."""
    with pytest.raises(ReferenceProblem, match="'lib/motors/nope.yaml', which does not exist"):
        open_reference(repo, repo / "axes" / "x1.yaml", "../lib/motors/nope.yaml")
    assert opened == []


def test_swap_race_is_caught_by_nofollow(repo, tmp_path, monkeypatch):
    """If the target is swapped for a symlink after the lstat check, O_NOFOLLOW
    refuses to open it (docs/reliability.md §7.2, the swap race)."""
    target = repo / "lib" / "motors" / "m1.yaml"
    real_open = os.open

    def swap_then_open(path, flags, *a, **k):
        os.replace(target, repo / "lib" / "moved.yaml")
        os.symlink(tmp_path / "outside.yaml", target)
        return real_open(path, flags, *a, **k)

    monkeypatch.setattr(_reading.os, "open", swap_then_open)
    with pytest.raises(ReferenceProblem, match="cannot be opened") as info:
        open_reference(repo, repo / "axes" / "x1.yaml", "../lib/motors/m1.yaml")
    assert "do-not-leak" not in str(info.value)


# ---------------------------------------------------------------- read_limited


def test_read_limited_regular(tmp_path):
    p = tmp_path / "a.yaml"
    p.write_bytes(b"x" * 1000)
    assert read_limited(p, Limits(max_bytes=10)) == (b"x" * 11, 1000)
    assert read_limited(str(p)) == (b"x" * 1000, 1000)


def test_read_limited_missing(tmp_path):
    with pytest.raises(InputError, match="no such file"):
        read_limited(tmp_path / "nope.yaml")


def test_read_limited_directory(tmp_path):
    with pytest.raises(InputError, match="a directory, not a regular file"):
        read_limited(tmp_path)


def test_read_limited_fifo_does_not_block(tmp_path):
    fifo = tmp_path / "f.yaml"
    os.mkfifo(fifo)
    outcome = []
    t = threading.Thread(target=lambda: outcome.append(pytest.raises(InputError, read_limited, fifo)), daemon=True)
    t.start()
    t.join(5)
    assert not t.is_alive(), "read_limited blocked on a FIFO"
    assert "a FIFO, not a regular file" in str(outcome[0].value)


def test_read_limited_device():
    with pytest.raises(InputError, match="a device, not a regular file"):
        read_limited("/dev/null")


def test_read_limited_unreadable(tmp_path, monkeypatch):
    """docs/reliability.md I02: as root chmod does nothing, so inject EACCES."""
    p = tmp_path / "a.yaml"
    p.write_text("a: 1\n")

    def denied(*a, **k):
        raise PermissionError(13, "Permission denied")

    monkeypatch.setattr(_reading.os, "open", denied)
    with pytest.raises(InputError, match="permission denied"):
        read_limited(p)


def test_read_limited_nul_in_path():
    with pytest.raises(InputError, match="not a usable path"):
        read_limited("a\x00b.yaml")


# ---------------------------------------------------------------- letter case (H09)


@pytest.mark.parametrize(
    "ref, spelled",
    [
        ("../lib/Motors/m1.yaml", "../lib/motors/m1.yaml"),
        ("../LIB/motors/M1.yaml", "../lib/motors/m1.yaml"),
        ("./../lib/./motors/M1.YAML", "../lib/motors/m1.yaml"),
        ("../lib/motors/../motors/M1.yaml", "../lib/motors/m1.yaml"),
    ],
)
def test_reference_case_differs_from_disk(repo, opened, ref, spelled):
    """docs/reliability.md H09: every component is compared with its directory
    listing, so the answer does not depend on the disk being case-sensitive."""
    with pytest.raises(ReferenceProblem) as info:
        open_reference(repo, repo / "axes" / "x1.yaml", ref)
    assert f"the file on disk is spelled '{spelled}'" in str(info.value)
    assert opened == []


def test_reference_case_on_a_case_insensitive_disk(repo, opened, monkeypatch):
    """On a case-insensitive disk the miscased path opens; the listing comparison
    still refuses it, before anything is opened."""
    real_lstat, real_realpath = os.lstat, os.path.realpath

    def fold(path):
        return os.fspath(path).replace("Motors", "motors")

    monkeypatch.setattr(_reading.os, "lstat", lambda p: real_lstat(fold(p)))
    monkeypatch.setattr(_reading.os.path, "realpath", lambda p: real_realpath(fold(p)))
    with pytest.raises(ReferenceProblem, match="spelled '../lib/motors/m1.yaml'"):
        open_reference(repo, repo / "axes" / "x1.yaml", "../lib/Motors/m1.yaml")
    assert opened == []


def test_reference_exact_case_beside_other_case(repo):
    """Two files that differ only in case (possible on Linux): the exact one is fine."""
    (repo / "lib" / "motors" / "M1.yaml").write_text("motor: {pole_pairs: 8}\n")
    path, data, _ = open_reference(repo, repo / "axes" / "x1.yaml", "../lib/motors/M1.yaml")
    assert path.name == "M1.yaml" and b"8" in data


def test_reference_missing_in_any_case(repo):
    with pytest.raises(ReferenceProblem, match="'lib/motors/m2.yaml', which does not exist"):
        open_reference(repo, repo / "axes" / "x1.yaml", "../lib/Motors/m2.yaml".replace("Motors", "motors"))
    with pytest.raises(ReferenceProblem, match="which does not exist"):
        open_reference(repo, repo / "axes" / "x1.yaml", "../lib/Motors/m2.yaml")


def test_reference_normal_forms_are_one_name(repo):
    """A disk may store a name decomposed (NFD); the NFC spelling is the same file."""
    import unicodedata

    name = unicodedata.normalize("NFD", "moteur-\u00e9.yaml")
    (repo / "lib" / name).write_text("motor: {}\n")
    nfc = unicodedata.normalize("NFC", "../lib/moteur-\u00e9.yaml")
    try:
        open_reference(repo, repo / "axes" / "x1.yaml", nfc)
    except ReferenceProblem as exc:  # Linux: the NFC name is not the file
        assert "does not exist" in str(exc) and "spelled" not in str(exc)


@pytest.mark.parametrize("hidden", ["\u202e", "\u200b", "\u2066", "\u061c", "\ufeff"])
def test_reference_with_hidden_character(repo, opened, hidden):
    with pytest.raises(ReferenceProblem, match="bidirectional control or an invisible character") as info:
        open_reference(repo, repo / "axes" / "x1.yaml", f"../lib/motors/m{hidden}1.yaml")
    assert hidden not in str(info.value)
    assert opened == []


def test_reference_into_git_in_other_case(repo, opened):
    with pytest.raises(ReferenceProblem, match="into .git/"):
        open_reference(repo, repo / "axes" / "x1.yaml", "../.GIT/config")
    assert opened == []
