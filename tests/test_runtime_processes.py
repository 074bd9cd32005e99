"""The runtime mode and the user's processes: what a script starts is ended when its run ends (not only
on a timeout), what leaves the process group is not, and a run that a signal ended is told apart from
one that ran out of memory. Real child processes running real statsmodels fits; process states read
from Linux's /proc."""

from __future__ import annotations

import os
import signal
import sys
import textwrap
import time
from pathlib import Path

import pytest

from regvet.engine import analyze
from regvet.model.settings import Settings
from regvet.runtime.runner import RunResult, memory_ceiling_mb
from regvet.runtime.session import OOM_SHARE, killed_by, run_and_judge

pytestmark = [
    pytest.mark.runtime,
    pytest.mark.skipif(not Path("/proc/self/stat").exists(), reason="reads process states from Linux's /proc"),
]

FIT = textwrap.dedent(
    """\
    import os
    import signal
    import subprocess
    import sys
    import statsmodels.api as sm

    harbour = [1.0, 2.0, 3.0, 4.0, 5.0, 6.0, 7.0, 8.0]
    moorings = [2.9, 5.1, 7.2, 8.8, 11.1, 13.0, 15.2, 16.9]
    res = sm.OLS(moorings, sm.add_constant(harbour)).fit()
    print(res.params)
    """
)
SLEEPER = "[sys.executable, '-c', 'import time; time.sleep(300)']"


def _state(pid: int) -> str | None:
    """The process's state letter (R, S, Z, ...), None when it is gone."""
    try:
        return Path(f"/proc/{pid}/stat").read_text().rsplit(")", 1)[1].split()[0]
    except (FileNotFoundError, ProcessLookupError, IndexError):
        return None


def _alive(pid: int) -> bool:
    return _state(pid) not in (None, "Z", "X")


def _gone_soon(pid: int, within: float = 5.0) -> bool:
    """Dead (gone or a zombie nobody reaped yet) within ``within`` seconds: SIGKILL is delivered at once,
    but the kernel may take a moment to tear the process down."""
    deadline = time.monotonic() + within
    while time.monotonic() < deadline:
        if not _alive(pid):
            return True
        time.sleep(0.05)
    return False


def _reap(pids: list[int]) -> None:
    """Kill what a failing test left behind (only the test's own processes, by id)."""
    for pid in pids:
        if _alive(pid):
            os.kill(pid, signal.SIGKILL)


def judge(tmp_path: Path, code: str, timeout: float = 60):
    path = tmp_path / "moorings.py"
    path.write_text(code)
    settings = Settings(run_timeout=timeout)
    report = analyze(code, str(path), settings, strict=True)
    return run_and_judge(report, path, settings, cache=None)


def _pids(path: Path) -> list[int]:
    return [int(p) for p in path.read_text().split()]


def test_children_the_script_left_running_are_ended_when_it_finishes(tmp_path):
    code = FIT + textwrap.dedent(
        f"""\
        child = subprocess.Popen({SLEEPER})
        pids = [child.pid]
        # a grandchild through a double fork: still in the run's process group
        r, w = os.pipe()
        if os.fork() == 0:
            grand = subprocess.Popen({SLEEPER})
            os.write(w, str(grand.pid).encode())
            os._exit(0)
        pids.append(int(os.read(r, 32)))
        with open("pids.txt", "w") as fh:
            fh.write(" ".join(map(str, pids)))
        print("leaving", pids)
        """
    )
    report, result = judge(tmp_path, code)
    assert result is not None and result.completed, result
    assert not [f for f in report.findings if f.rule == "run-failed"]
    pids = _pids(tmp_path / "pids.txt")
    assert len(pids) == 2
    try:
        assert all(_gone_soon(pid) for pid in pids), [(pid, _state(pid)) for pid in pids]
    finally:
        _reap(pids)


def test_a_process_that_starts_its_own_session_escapes(tmp_path):
    """What the README says cannot be caught without cgroups: a new session leaves the group."""
    code = FIT + textwrap.dedent(
        f"""\
        daemon = subprocess.Popen({SLEEPER}, start_new_session=True)
        with open("pids.txt", "w") as fh:
            fh.write(str(daemon.pid))
        """
    )
    _, result = judge(tmp_path, code)
    assert result is not None and result.completed
    [pid] = _pids(tmp_path / "pids.txt")
    try:
        assert _alive(pid)
    finally:
        os.kill(pid, signal.SIGKILL)
    assert _gone_soon(pid)


def test_children_are_ended_on_a_timeout_too(tmp_path):
    code = FIT + textwrap.dedent(
        f"""\
        child = subprocess.Popen({SLEEPER})
        with open("pids.txt", "w") as fh:
            fh.write(str(child.pid))
        import time
        time.sleep(120)
        """
    )
    report, result = judge(tmp_path, code, timeout=15)  # importing statsmodels alone takes seconds here
    assert result is not None and result.timed_out
    [failed] = [f for f in report.findings if f.rule == "run-failed"]
    assert "more than 15 s (`run_timeout`)" in failed.message
    [pid] = _pids(tmp_path / "pids.txt")
    try:
        assert _gone_soon(pid)
    finally:
        _reap([pid])


@pytest.mark.parametrize(
    "how, sig",
    [
        ("os.kill(os.getpid(), signal.SIGKILL)", signal.SIGKILL),
        ("os.kill(os.getpid(), signal.SIGTERM)", signal.SIGTERM),
        ("os.killpg(0, signal.SIGKILL)", signal.SIGKILL),
        ("signal.raise_signal(signal.SIGTERM)", signal.SIGTERM),
    ],
)
def test_a_run_the_script_killed_itself_is_not_out_of_memory(tmp_path, how, sig):
    report, result = judge(tmp_path, FIT + how + "\n")
    assert result is not None and result.signal == sig and result.self_signal == sig
    [failed] = [f for f in report.findings if f.rule == "run-failed"]
    assert f"the script ended itself with signal {sig.value} ({sig.name})" in failed.message
    assert "memory" not in failed.message


def test_a_sigkill_from_another_process_is_not_called_out_of_memory(tmp_path):
    # Another process (kill(1)) sends the signal: the probe sees no self-signal, and the child's peak
    # resident memory, read by wait4, is far below what the machine can give.
    code = FIT + "subprocess.run(['kill', '-9', str(os.getpid())])\nimport time\ntime.sleep(30)\n"
    report, result = judge(tmp_path, code)
    assert result is not None and result.signal == signal.SIGKILL and result.self_signal is None
    assert result.peak_mb is not None and 10 < result.peak_mb < 4000  # Python + numpy + statsmodels
    [failed] = [f for f in report.findings if f.rule == "run-failed"]
    assert "killed (signal 9, SIGKILL) from outside" in failed.message
    assert "not for memory, as far as regvet can tell" in failed.message


def test_the_peak_memory_is_measured():
    """``peak_mb`` comes from wait4's ru_maxrss: a child that touches 300 MB reports at least that."""
    import subprocess

    from regvet.runtime.runner import _end_group, _exited

    proc = subprocess.Popen([sys.executable, "-c", "b = bytearray(300 * 1024 * 1024)"], start_new_session=True)
    assert _exited(proc, 60)
    peak = _end_group(proc)
    assert proc.returncode == 0
    assert peak is not None and peak >= 300


def test_a_large_sigkilled_run_is_put_down_to_the_out_of_memory_killer():
    # The decision on its own: the kernel's OOM killer cannot be triggered safely on a shared machine.
    ceiling = memory_ceiling_mb()
    assert ceiling is not None and ceiling > 0
    big = RunResult(signal=signal.SIGKILL, peak_mb=round(ceiling * (OOM_SHARE + 0.1), 1))
    assert "most likely by the system's out-of-memory killer" in killed_by(big)
    small = RunResult(signal=signal.SIGKILL, peak_mb=50.0)
    assert "not for memory" in killed_by(small)
    unknown = RunResult(signal=signal.SIGKILL)
    assert "cannot tell whether it was for memory" in killed_by(unknown)
    assert killed_by(RunResult(signal=signal.SIGSEGV, peak_mb=80.0)) == (
        "the process was ended by signal 11 (SIGSEGV) with a peak of 80 MB resident before the end"
    )
    assert "near the `run_memory_mb` limit of 1000 MB" in killed_by(
        RunResult(signal=signal.SIGABRT, peak_mb=700.0), 1000
    )
    assert "near" not in killed_by(RunResult(signal=signal.SIGABRT, peak_mb=100.0), 1000)
    assert "memory" not in killed_by(RunResult(signal=signal.SIGTERM, self_signal=signal.SIGTERM, peak_mb=900.0), 1000)


@pytest.mark.parametrize("pidfd", [True, False], ids=["pidfd", "waitid-polling"])
def test_waiting_leaves_the_child_unreaped_until_its_group_is_ended(monkeypatch, pidfd):
    """Both ways of waiting (pidfd on Linux 5.3+, else polling waitid with WNOWAIT) see the exit without
    reaping: the child is a zombie, its group id still taken, until _end_group kills the group and reaps."""
    import subprocess

    from regvet.runtime.runner import _end_group, _exited

    if not pidfd:
        monkeypatch.delattr(os, "pidfd_open", raising=False)
    elif not hasattr(os, "pidfd_open"):
        pytest.skip("no pidfd_open here")
    code = f"import subprocess, sys; p = subprocess.Popen({SLEEPER}); print(p.pid, flush=True)"
    proc = subprocess.Popen([sys.executable, "-c", code], stdout=subprocess.PIPE, start_new_session=True)
    assert proc.stdout is not None
    left = int(proc.stdout.readline())
    try:
        assert not _exited(proc, 0.05) or _state(proc.pid) == "Z"
        assert _exited(proc, 30)
        assert _state(proc.pid) == "Z"  # exited, not reaped
        assert _alive(left)  # the sleeper it left is still running, in the same group
        assert os.getpgid(left) == proc.pid
        _end_group(proc)
        assert proc.returncode == 0 and _state(proc.pid) is None
        assert _gone_soon(left)
    finally:
        _reap([left])
        proc.stdout.close()


@pytest.mark.parametrize(("sig", "status"), [(signal.SIGTERM, 143), (signal.SIGINT, 130)])
def test_stopping_regvet_ends_the_scripts_it_runs(tmp_path, sig, status):
    """Seen while measuring on real code: `regvet run` killed with SIGTERM left its child script running,
    with no time limit left to end it. Now a stopped regvet ends each running child's group, says so
    without a traceback, and caches nothing for the runs it cut short."""
    import subprocess

    pids = tmp_path / "pids.txt"
    script = FIT + textwrap.dedent(
        f"""\
        helper = subprocess.Popen({SLEEPER})
        with open({str(pids)!r}, "w") as fh:
            fh.write(f"{{os.getpid()}} {{helper.pid}}\\n")
        import time
        time.sleep(300)
        """
    )
    for name in ("a_berths.py", "b_quays.py"):  # two files at once (two jobs): both children must end
        (tmp_path / name).write_text(script.replace("pids.txt", f"pids_{name}.txt"))
    cache = tmp_path / "cache"
    env = {**os.environ, "REGVET_CACHE_DIR": str(cache)}
    proc = subprocess.Popen(
        [sys.executable, "-m", "regvet", "run", "--no-config", "--jobs", "2", "--format", "json", "."],
        cwd=tmp_path,
        env=env,
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        text=True,
    )
    files = [tmp_path / f"pids_{n}.txt" for n in ("a_berths.py", "b_quays.py")]
    deadline = time.monotonic() + 60
    while not all(f.exists() and f.read_text().endswith("\n") for f in files):
        assert time.monotonic() < deadline and proc.poll() is None, proc.communicate()
        time.sleep(0.1)
    started = [int(p) for f in files for p in f.read_text().split()]
    assert all(_alive(pid) for pid in started)
    proc.send_signal(sig)
    out, err = proc.communicate(timeout=20)
    assert proc.returncode == status, err
    assert "Traceback" not in err and err.startswith("regvet: "), err
    assert "were ended" in err, err
    for pid in started:  # the scripts and what they started
        assert _gone_soon(pid), (pid, _state(pid))
    assert not list(cache.glob("**/*.json")), "a run cut short was cached"
