"""The command line's options and edges: --quiet, --counts, --show-waived, a script on standard input,
options before the command, help texts, runtime-only rules without --run, an empty folder."""

from __future__ import annotations

import argparse
import json
import os
import subprocess
import sys
from collections import Counter

import pytest

from conftest import FIXTURES
from test_text_output import TWO_FITS

DEMO = FIXTURES / "demo"


@pytest.fixture
def demo(monkeypatch):
    monkeypatch.chdir(DEMO)
    monkeypatch.delenv("COLUMNS", raising=False)
    return DEMO


def _json(run_cli, *args: str) -> list[dict]:
    code, out, _ = run_cli("check", *args, "--format", "json")
    return json.loads(out)["findings"]


def test_quiet_prints_the_summary_only(demo, run_cli):
    code, full, _ = run_cli("check", ".")
    code_q, quiet, err = run_cli("check", ".", "--quiet")
    assert code_q == code == 1 and err == ""
    assert quiet.splitlines() == [full.splitlines()[-1]]
    shown = [f for f in _json(run_cli, ".") if not f["waived"]]
    by = Counter(f["severity"] for f in shown)
    assert quiet.startswith(
        f"regvet: {len(shown)} findings ({by['error']} errors, {by['warning']} warnings, "
        f"{by['info']} info) in 4 of 6 files"
    )
    code, lines_q, _ = run_cli("check", ".", "-q", "--format", "lines")
    assert lines_q == quiet


def test_counts_per_rule_agree_with_the_json(demo, run_cli):
    expected = Counter(f["rule"] for f in _json(run_cli, ".") if not f["waived"])
    code, out, _ = run_cli("check", ".", "--counts", "--quiet")
    lines = out.splitlines()
    assert lines[0] == "findings per rule:" and lines[-1].startswith(f"regvet: {sum(expected.values())} findings")
    got = {line.split()[0]: int(line.split()[1]) for line in lines[1:-1]}
    assert got == dict(expected)
    assert [int(line.split()[1]) for line in lines[1:-1]] == sorted(expected.values(), reverse=True)


def test_show_waived_lists_each_waived_finding_with_its_reason(demo, run_cli):
    waived = [f for f in _json(run_cli, ".") if f["waived"]]
    assert len(waived) == 3
    code, hidden, _ = run_cli("check", ".")
    code, shown, _ = run_cli("check", ".", "--show-waived")
    assert all(f"waived: {f['reason'][:30]}" not in hidden for f in waived)
    flat = " ".join(shown.split())
    assert all(f"waived: {' '.join(f['reason'].split())}" in flat for f in waived)
    assert shown.splitlines()[-1] == hidden.splitlines()[-1]  # the counts are the same: waived ones do not count
    code, lines, _ = run_cli("check", ".", "--show-waived", "--format", "lines")
    assert sum(" (waived: " in line for line in lines.splitlines()) == 3


def test_text_options_are_refused_with_a_machine_format(demo, run_cli):
    for flag in ("--quiet", "--counts", "--show-waived"):
        code, out, err = run_cli("check", ".", flag, "--format", "json")
        assert code == 2 and out == "" and f"{flag} shapes the text and lines formats" in err


def _regvet(*args: str, stdin: str | None = None, cwd) -> subprocess.CompletedProcess:
    env = {k: v for k, v in os.environ.items() if k != "COLUMNS"}
    env["REGVET_CACHE_DIR"] = str(cwd / ".cache")
    return subprocess.run(
        [sys.executable, "-m", "regvet", *args],
        input=stdin,
        capture_output=True,
        text=True,
        cwd=cwd,
        env=env,
        timeout=300,
    )


def test_a_script_on_standard_input(tmp_path):
    (tmp_path / ".git").mkdir()
    (tmp_path / "two.py").write_text(TWO_FITS)
    piped = _regvet("-", "--format", "json", stdin=TWO_FITS, cwd=tmp_path)
    named = _regvet("two.py", "--format", "json", cwd=tmp_path)
    assert piped.returncode == named.returncode == 1, piped.stderr
    findings = json.loads(piped.stdout)["findings"]
    assert {f["path"] for f in findings} == {"<stdin>"}
    assert [(f["rule"], f["line"], f["message"]) for f in findings] == [
        (f["rule"], f["line"], f["message"]) for f in json.loads(named.stdout)["findings"]
    ]
    text = _regvet("check", "-", stdin=TWO_FITS, cwd=tmp_path)
    assert text.stdout.startswith("<stdin>:5:6: m1 (riders ~ fare)\n")
    refused = _regvet("check", "--run", "-", stdin=TWO_FITS, cwd=tmp_path)
    assert refused.returncode == 2 and "standard input" in refused.stderr and refused.stdout == ""


def test_options_before_the_command(demo, run_cli):
    code, expected, _ = run_cli("check", ".", "--format", "json")
    assert run_cli("--format", "json", ".")[1] == expected  # no command: check
    assert run_cli("--format", "json", "check", ".")[1] == expected  # moved after the command
    assert (
        run_cli("--only", "no-form-test", "--format", "json")[1]
        == run_cli("check", "--only", "no-form-test", "--format", "json")[1]
    )
    code, out, err = run_cli("--output", "audit.html", ".")  # an option of another command
    assert code == 2 and "the command comes first" in err and "regvet check --format json fixtures/demo" in err


def _actions(parser: argparse.ArgumentParser, name: str = "regvet"):
    for action in parser._actions:
        if isinstance(action, argparse._SubParsersAction):
            for sub_name, sub in action.choices.items():
                yield from _actions(sub, f"regvet {sub_name}")
        elif not isinstance(action, argparse._HelpAction):
            yield name, action


def test_every_option_has_help_text(capsys):
    from regvet.cli import _parser

    missing = [
        f"{name} {action.option_strings or action.dest}"
        for name, action in _actions(_parser())
        if not action.help or action.help == argparse.SUPPRESS
    ]
    assert missing == []
    from regvet.cli.info import _serve

    assert _serve(["--help"]) == 0
    out = capsys.readouterr().out
    for option in ("--tcp", "--port", "--log-file"):
        line = next(line for line in out.splitlines() if line.strip().startswith(option))
        rest = line.strip()[len(option) :].split(None, 1)
        assert rest and any(word.isalpha() and word.islower() for word in " ".join(rest).split()), line


def test_run_help_does_not_offer_run(run_cli):
    code, out, _ = run_cli("run", "--help")
    assert code == 0 and "EXECUTES" in out and "--run" not in out
    code, out, _ = run_cli("check", "--help")
    assert code == 0 and "--run" in out


def test_only_runtime_rules_without_run_says_nothing_will_be_checked(demo, run_cli):
    from regvet.rules import ALL_RULES

    runtime = [r.id for r in ALL_RULES if r.needs_run]
    static = next(r.id for r in ALL_RULES if not r.needs_run)
    assert runtime
    code, out, err = run_cli("check", ".", "--only", ",".join(runtime[:2]))
    assert code == 2 and out == "" and "without --run nothing will be checked" in err
    assert run_cli("check", ".", "--only", f"{runtime[0]},{static}", "--quiet")[0] in (0, 1)  # one static rule: fine


def test_an_empty_folder_says_no_files_were_found(tmp_path, run_cli, monkeypatch):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "empty").mkdir()
    (tmp_path / "notes").mkdir()
    (tmp_path / "notes" / "readme.txt").write_text("no code here\n")
    for folder in ("empty", "notes"):
        code, out, err = run_cli("check", folder)
        assert code == 0 and err == ""
        assert out == f"regvet: no files were found to check in {folder} (regvet reads .py and .ipynb files)\n"
    code, out, err = run_cli("check", "empty", "--format", "json")
    assert code == 0 and json.loads(out)["findings"] == [] and "no files were found" in err
