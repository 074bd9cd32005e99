"""Hostile file systems in folder scans: link loops, FIFOs, devices, unreadable files, names that are not
UTF-8, coding cookies Python refuses. Real files, real FIFOs (``os.mkfifo``), real symbolic links, and
real ``regvet`` processes where a hang is the failure (each under a timeout)."""

from __future__ import annotations

import json
import os
import subprocess
import sys
import textwrap
from pathlib import Path

import pytest

from regvet.discovery import discover, read_regular
from regvet.output.safe import printable, uri_path, valid_utf8
from regvet.sources.python import decode

pytestmark = pytest.mark.skipif(not hasattr(os, "mkfifo"), reason="POSIX file system features")

FIT = textwrap.dedent(
    """\
    import statsmodels.api as sm

    fares = [1.0, 2.0, 3.0, 4.0, 5.0, 6.0]
    riders = [3.1, 4.9, 7.2, 8.8, 11.1, 13.0]
    res = sm.OLS(riders, sm.add_constant(fares)).fit()
    print(res.params)
    """
)
#: A name that is not UTF-8: "harbour" with a Latin-1 e-acute (0xE9) in it.
RAW_NAME = b"harb\xe9our.py"


def _regvet(*args: str, cwd: Path, timeout: float = 60) -> subprocess.CompletedProcess[bytes]:
    """A real ``regvet`` process; a hang fails the test through the timeout instead of stalling it."""
    return subprocess.run(
        [sys.executable, "-m", "regvet", *args],
        cwd=cwd,
        capture_output=True,
        timeout=timeout,
        env={**os.environ, "PYTHONIOENCODING": "utf-8"},
    )


@pytest.fixture
def hostile(tmp_path: Path) -> Path:
    """A project folder with one good script and every kind of name a scan must not read."""
    (tmp_path / ".git").mkdir()
    src = tmp_path / "src"
    src.mkdir()
    (src / "ferries.py").write_text(FIT)
    os.mkfifo(src / "pipe.py")
    os.mkfifo(src / "pipe.ipynb")
    os.symlink("loop_b.py", src / "loop_a.py")
    os.symlink("loop_a.py", src / "loop_b.py")
    os.symlink("self.py", src / "self.py")
    os.symlink("missing.py", src / "broken.py")
    os.symlink("/dev/null", src / "null.py")
    os.symlink(".", src / "here")  # a folder link back to itself: never followed
    os.symlink(str(tmp_path), src / "up")  # and one to a parent
    return tmp_path


def test_discovery_keeps_the_regular_file_and_says_why_it_skips_the_rest(hostile):
    found = discover([str(hostile / "src")], ())
    assert [p.name for p in found.files] == ["ferries.py"]
    why = {s.path.name: s.why for s in found.skipped}
    assert why == {
        "broken.py": "a broken symbolic link",
        "loop_a.py": "a symbolic link loop",
        "loop_b.py": "a symbolic link loop",
        "null.py": "a character device",
        "pipe.ipynb": "a named pipe (FIFO)",
        "pipe.py": "a named pipe (FIFO)",
        "self.py": "a symbolic link loop",
    }


@pytest.mark.parametrize("fmt", ["text", "json", "sarif", "github"])
def test_a_scan_of_the_hostile_folder_finishes_with_notes_and_the_good_files_findings(hostile, fmt):
    proc = _regvet("check", "src", "--format", fmt, "--no-cache", cwd=hostile)
    err = proc.stderr.decode()
    assert "Traceback" not in err
    assert proc.returncode == 1, err  # the good file's findings, not a crash (3) or a usage error (2)
    for name, why in [
        ("pipe.py", "a named pipe (FIFO)"),
        ("loop_a.py", "a symbolic link loop"),
        ("null.py", "a character device"),
        ("broken.py", "a broken symbolic link"),
    ]:
        assert f"regvet: skipped src/{name}: {why}" in err
    assert b"ferries.py" in proc.stdout
    if fmt in ("json", "sarif"):
        json.loads(proc.stdout.decode("utf-8"))


def test_report_skips_the_same_names(hostile):
    proc = _regvet("report", "src", "-o", "audit.html", "--no-cache", cwd=hostile)
    assert proc.returncode == 0, proc.stderr
    assert "regvet: skipped src/pipe.py: a named pipe (FIFO)" in proc.stderr.decode()
    assert "ferries.py" in (hostile / "audit.html").read_text()


@pytest.mark.runtime
def test_run_skips_the_same_names_and_runs_the_good_file(hostile):
    proc = _regvet("run", "src", "--format", "json", "--no-cache", "--no-baseline", cwd=hostile, timeout=180)
    assert proc.returncode == 1, proc.stderr
    assert "regvet: skipped src/loop_a.py: a symbolic link loop" in proc.stderr.decode()
    findings = json.loads(proc.stdout)["findings"]
    assert {f["path"] for f in findings} == {"src/ferries.py"}
    assert any(f["stats"] for f in findings)


def test_a_fifo_named_on_the_command_line_is_skipped_not_opened(hostile):
    proc = _regvet("check", "src/pipe.py", "--no-cache", cwd=hostile, timeout=30)
    assert proc.returncode == 0, proc.stderr
    assert "regvet: skipped src/pipe.py: a named pipe (FIFO)" in proc.stderr.decode()


@pytest.mark.parametrize("name, why", [("pipe.toml", "a named pipe (FIFO)"), ("loop.toml", "a symbolic link loop")])
def test_a_config_that_is_not_a_regular_file_is_a_usage_error_that_says_what_it_is(hostile, name, why):
    if name == "pipe.toml":
        os.mkfifo(hostile / name)
    else:
        os.symlink(name, hostile / name)
    proc = _regvet("check", "src/ferries.py", "--config", name, "--no-cache", cwd=hostile, timeout=30)
    assert proc.returncode == 2
    assert f"regvet: error: --config: {name} is {why}" in proc.stderr.decode()


def test_a_missing_path_is_still_a_usage_error(hostile):
    proc = _regvet("check", "src/nowhere.py", cwd=hostile)
    assert proc.returncode == 2
    assert "no such file or folder: src/nowhere.py" in proc.stderr.decode()


def test_a_file_swapped_for_a_fifo_after_the_walk_is_a_finding_not_a_hang(hostile, monkeypatch):
    from regvet.cli import analyze_file
    from regvet.model.settings import Settings

    monkeypatch.chdir(hostile)
    target = hostile / "src" / "ferries.py"
    [found] = discover([str(target)], ()).files
    target.unlink()
    os.mkfifo(target)  # the name now stands for a FIFO with no writer: a plain open() would wait for ever
    report = analyze_file(found, Settings(), hostile, {}, {})
    [finding] = report.findings
    assert finding.rule == "parse-error"
    assert "cannot read the file: not a regular file: a named pipe (FIFO)" in finding.message
    with pytest.raises(OSError, match="named pipe"):
        read_regular(target)


def test_a_file_gone_after_the_walk_is_a_finding_for_that_file(hostile, monkeypatch):
    from regvet.cli import analyze_file
    from regvet.model.settings import Settings

    monkeypatch.chdir(hostile)
    target = hostile / "src" / "ferries.py"
    target.unlink()
    report = analyze_file(target, Settings(), hostile, {}, {})
    [finding] = report.findings
    assert finding.rule == "parse-error" and "cannot read the file" in finding.message


@pytest.mark.skipif(not Path("/proc/self/mem").exists(), reason="Linux's /proc")
def test_a_regular_file_whose_read_fails_is_a_finding_even_for_root(tmp_path):
    """/proc/self/mem is a regular file that any process, root too, fails to read at offset 0 (EIO)."""
    (tmp_path / ".git").mkdir()
    (tmp_path / "ferries.py").write_text(FIT)
    os.symlink("/proc/self/mem", tmp_path / "memory.py")
    proc = _regvet("check", ".", "--format", "json", "--no-cache", cwd=tmp_path)
    assert proc.returncode == 1, proc.stderr
    findings = json.loads(proc.stdout)["findings"]
    [err] = [f for f in findings if f["path"] == "memory.py"]
    assert err["rule"] == "parse-error" and "cannot read the file: Input/output error" in err["message"]
    assert any(f["path"] == "ferries.py" and f["rule"] != "parse-error" for f in findings)


@pytest.mark.skipif(hasattr(os, "geteuid") and os.geteuid() == 0, reason="root reads a file of mode 000")
def test_an_unreadable_file_is_a_clear_finding_and_the_scan_goes_on(tmp_path):
    (tmp_path / ".git").mkdir()
    (tmp_path / "ferries.py").write_text(FIT)
    locked = tmp_path / "locked.py"
    locked.write_text(FIT)
    locked.chmod(0)
    try:
        proc = _regvet("check", ".", "--format", "json", "--no-cache", cwd=tmp_path)
    finally:
        locked.chmod(0o644)
    findings = json.loads(proc.stdout)["findings"]
    [err] = [f for f in findings if f["path"] == "locked.py"]
    assert err["rule"] == "parse-error" and "cannot read the file: Permission denied" in err["message"]
    assert any(f["path"] == "ferries.py" for f in findings)


@pytest.mark.skipif(hasattr(os, "geteuid") and os.geteuid() == 0, reason="root lists a folder of mode 000")
def test_a_folder_that_cannot_be_listed_is_a_note(tmp_path):
    (tmp_path / ".git").mkdir()
    (tmp_path / "ferries.py").write_text(FIT)
    closed = tmp_path / "closed"
    closed.mkdir()
    (closed / "inner.py").write_text(FIT)
    closed.chmod(0)
    try:
        proc = _regvet("check", ".", "--no-cache", cwd=tmp_path)
    finally:
        closed.chmod(0o755)
    assert proc.returncode == 1
    assert "regvet: skipped closed: the folder cannot be listed: Permission denied" in proc.stderr.decode()


def test_a_project_module_that_is_a_fifo_is_not_opened(tmp_path):
    (tmp_path / ".git").mkdir()
    (tmp_path / "ferries.py").write_text("import helpers\n" + FIT)
    os.mkfifo(tmp_path / "helpers.py")  # an import resolves to it; reading it would block
    proc = _regvet("check", "ferries.py", "--no-cache", cwd=tmp_path, timeout=30)
    assert proc.returncode == 1, proc.stderr
    assert b"ferries.py:6:" in proc.stdout


# --- names that are not UTF-8 ----------------------------------------------------------------------
@pytest.fixture
def raw_named(tmp_path: Path) -> Path:
    (tmp_path / ".git").mkdir()
    try:
        with open(os.path.join(os.fsencode(tmp_path), RAW_NAME), "wb") as fh:
            fh.write(FIT.encode())
    except OSError as exc:  # a file system that insists on UTF-8 names (macOS)
        pytest.skip(f"cannot create a non-UTF-8 name here: {exc}")
    return tmp_path


def test_text_output_shows_the_undecodable_byte(raw_named):
    proc = _regvet("check", ".", "--no-cache", cwd=raw_named)
    assert proc.returncode == 1, proc.stderr
    assert b"harb\\xe9our.py:5:" in proc.stdout


def test_json_stays_valid_utf8_and_keeps_the_bytes_in_path_uri(raw_named):
    proc = _regvet("check", ".", "--format", "json", "--no-cache", cwd=raw_named)
    assert proc.returncode == 1, proc.stderr
    data = json.loads(proc.stdout.decode("utf-8"))  # strict: invalid UTF-8 would raise
    [f] = data["findings"]
    assert f["path"] == "harb\ufffdour.py"
    assert f["path_uri"] == "harb%E9our.py"
    from urllib.parse import unquote_to_bytes

    assert (raw_named / os.fsdecode(unquote_to_bytes(f["path_uri"]))).read_text() == FIT


def test_sarif_percent_encodes_the_name(raw_named):
    proc = _regvet("check", ".", "--format", "sarif", "--no-cache", cwd=raw_named)
    assert proc.returncode == 1, proc.stderr
    data = json.loads(proc.stdout.decode("utf-8"))
    [result] = data["runs"][0]["results"]
    uri = result["locations"][0]["physicalLocation"]["artifactLocation"]["uri"]
    assert uri == "harb%E9our.py"  # RFC 3986: the name's own bytes


def test_github_and_report_outputs_do_not_break_on_the_name(raw_named):
    proc = _regvet("check", ".", "--format", "github", "--no-cache", cwd=raw_named)
    assert proc.returncode == 1 and b"file=harb\\xe9our.py" in proc.stdout
    for out in ("audit.html", "audit.md"):
        proc = _regvet("report", ".", "-o", out, "--no-cache", cwd=raw_named)
        assert proc.returncode == 0, proc.stderr
        text = (raw_named / out).read_bytes().decode("utf-8")
        assert "harb\ufffdour.py" in text


def test_the_baseline_keeps_a_non_utf8_name_and_matches_it_again(raw_named):
    proc = _regvet("baseline", ".", cwd=raw_named)
    assert proc.returncode == 0, proc.stderr
    text = (raw_named / "regvet-baseline.json").read_bytes().decode("utf-8")  # valid UTF-8
    assert '"harb\\udce9our.py"' in text  # the name's byte as a JSON escape: it reads back exactly
    proc = _regvet("check", ".", "--no-cache", cwd=raw_named)
    assert proc.returncode == 0, (proc.stdout, proc.stderr)
    assert b"1 known finding not shown" in proc.stdout


@pytest.mark.runtime
def test_a_run_of_a_file_with_a_non_utf8_name(raw_named):
    proc = _regvet("run", ".", "--format", "json", "--no-baseline", cwd=raw_named, timeout=180)
    assert proc.returncode == 1, proc.stderr
    [f] = json.loads(proc.stdout.decode("utf-8"))["findings"]
    assert f["path_uri"] == "harb%E9our.py" and f["stats"]["fits"][0]["statistics"]["nobs"] == 6


def test_the_safe_text_helpers():
    name = os.fsdecode(RAW_NAME)
    assert printable(name) == "harb\\xe9our.py"
    assert valid_utf8(name) == "harb\ufffdour.py"
    assert valid_utf8("cell \ud800 text") == "cell \ufffd text"  # a lone surrogate from a notebook's JSON
    assert printable("cell \ud800") == "cell \\ud800"
    assert uri_path("ports/" + name) == "ports/harb%E9our.py"
    assert uri_path("ports/Å ferry.py") == "ports/%C3%85%20ferry.py"  # UTF-8 names as before


# --- coding cookies --------------------------------------------------------------------------------
#: Encodings Python's own compiler refuses in a coding line, each checked against compile() below.
REFUSED = ["rot13", "base64", "punycode", "undefined", "cp037", "utf-16-le", "no-such-codec"]


@pytest.mark.parametrize("encoding", REFUSED)
def test_a_cookie_python_refuses_is_a_parse_error(encoding, tmp_path, monkeypatch):
    data = f"# -*- coding: {encoding} -*-\n".encode("ascii") + FIT.encode("ascii")
    with pytest.raises(SyntaxError):
        compile(data, "ferries.py", "exec", dont_inherit=True)  # the reference: CPython refuses it too
    assert not isinstance(decode(data), str)
    monkeypatch.chdir(tmp_path)
    (tmp_path / "ferries.py").write_bytes(data)
    from regvet.cli import analyze_file
    from regvet.model.settings import Settings

    report = analyze_file(tmp_path / "ferries.py", Settings(), tmp_path, {}, {})
    assert [f.rule for f in report.findings] == ["parse-error"]


def test_every_codec_python_knows_is_judged_as_compile_judges_it():
    import encodings.aliases

    names = sorted(set(encodings.aliases.aliases) | set(encodings.aliases.aliases.values()))
    disagree = []
    for name in names:
        data = f"# -*- coding: {name} -*-\nx = 1\n".encode("ascii")
        try:
            compile(data, "f.py", "exec", dont_inherit=True)
            accepted = True
        except (SyntaxError, ValueError):
            accepted = False
        if accepted != isinstance(decode(data), str):
            disagree.append(name)
    assert disagree == []


def test_a_cookie_python_accepts_still_decodes():
    data = "# -*- coding: latin-1 -*-\nport = 'Ålesund'\n".encode("latin-1")
    assert decode(data) == "# -*- coding: latin-1 -*-\nport = 'Ålesund'\n"


def test_the_pre_commit_hook_skips_a_fifo_it_is_handed(hostile, monkeypatch, capsys):
    from regvet.precommit import main as hook

    monkeypatch.chdir(hostile)
    code = hook(["--no-baseline", "src/pipe.py", "src/loop_a.py", "src/ferries.py"])
    err = capsys.readouterr().err
    assert code == 1  # the staged script's finding
    assert "regvet: skipped src/pipe.py: a named pipe (FIFO)" in err
    assert "regvet: skipped src/loop_a.py: a symbolic link loop" in err


@pytest.mark.parametrize("fmt", ["text", "github", "json", "sarif"])
def test_an_ascii_locale_does_not_break_any_format(tmp_path, fmt):
    (tmp_path / ".git").mkdir()
    (tmp_path / "Ålesund.py").write_text(FIT)
    proc = subprocess.run(
        [sys.executable, "-m", "regvet", "check", ".", "--format", fmt, "--no-cache"],
        cwd=tmp_path,
        capture_output=True,
        timeout=60,
        env={**os.environ, "PYTHONIOENCODING": "ascii"},
    )
    assert proc.returncode == 1, proc.stderr
    if fmt in ("json", "sarif"):  # UTF-8 by definition, whatever the locale
        json.loads(proc.stdout.decode("utf-8"))
        assert ("Ålesund.py" if fmt == "json" else "%C3%85lesund.py") in proc.stdout.decode("utf-8")
    else:  # the terminal's encoding, with what it lacks escaped
        assert proc.stdout.isascii() and b"\\xc5lesund.py" in proc.stdout
