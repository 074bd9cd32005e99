"""The bundled demo: regvet reports exactly the findings its README documents, and the demo is real code.

The data are invented (a fixed-seed simulation), so these checks are about regvet's
behaviour on a realistic analysis folder, not about any published number.
"""

from __future__ import annotations

import json
import re
import subprocess
import sys

import pytest

from conftest import FIXTURES

DEMO = FIXTURES / "demo"
_ROW = re.compile(r"^\|\s*`([^`]+)`\s*\|\s*(?:cell (\d+), )?line (\d+)\s*\|\s*`([a-z0-9-]+)`\s*\|\s*$")


def documented(section: str) -> list[tuple[str, int | None, int, str]]:
    text = (DEMO / "README.md").read_text()
    body = text.split(f"## {section}", 1)[1].split("\n## ", 1)[0]
    rows = []
    for line in body.splitlines():
        m = _ROW.match(line.strip())
        if m:
            rows.append(
                (m.group(1), int(m.group(2)) - 1 if m.group(2) else None, int(m.group(3)), m.group(4))
            )  # JSON's cell counts from 0
    assert rows, f"no rows in the README's {section} table"
    return sorted(rows, key=str)


def test_demo_findings_match_the_readme(run_cli, monkeypatch):
    monkeypatch.chdir(DEMO)
    code, out, err = run_cli("check", ".", "--format", "json")
    assert code == 1 and err == ""
    findings = json.loads(out)["findings"]
    got = sorted(((f["path"], f["cell"], f["line"], f["rule"]) for f in findings if not f["waived"]), key=str)
    waived = sorted(((f["path"], f["cell"], f["line"], f["rule"]) for f in findings if f["waived"]), key=str)
    assert got == documented("Expected findings")
    assert waived == documented("Waived findings")
    assert all(f["reason"] for f in findings if f["waived"])


def test_every_static_rule_except_parse_error_appears_in_the_demo():
    from regvet.rules import ALL_RULES

    shown = {row[3] for row in documented("Expected findings") + documented("Waived findings")}
    # parse-error and incomplete-analysis are about input regvet cannot read or finish: no demo has them
    assert {r.id for r in ALL_RULES if not r.needs_run} - shown == {"parse-error", "incomplete-analysis"}


def test_demo_run_gives_the_documented_findings_from_the_numbers(run_cli, monkeypatch, tmp_path):
    """``regvet run`` on the demo: it executes the scripts and the notebook for real."""
    from regvet.rules import RULES_BY_ID

    monkeypatch.chdir(DEMO)
    monkeypatch.setenv("REGVET_CACHE_DIR", str(tmp_path / "cache"))
    code, out, err = run_cli("run", ".", "--format", "json")
    assert code == 1 and err == ""
    findings = json.loads(out)["findings"]
    from_numbers = sorted(
        (
            (f["path"], f["cell"], f["line"], f["rule"])
            for f in findings
            if RULES_BY_ID[f["rule"]].needs_run and not f["waived"]
        ),
        key=str,
    )
    assert from_numbers == documented("Findings with --run")
    static = sorted(
        (
            (f["path"], f["cell"], f["line"], f["rule"])
            for f in findings
            if not RULES_BY_ID[f["rule"]].needs_run and not f["waived"]
        ),
        key=str,
    )
    assert static == documented("Expected findings")  # running adds findings, it never loses one
    assert all(f["stats"] for f in findings if f["rule"] in ("no-form-test", "no-variance-test"))


def test_demo_data_regenerates_byte_for_byte(tmp_path):
    out = tmp_path / "crossings.csv"
    subprocess.run([sys.executable, str(DEMO / "make_data.py"), str(out)], check=True, capture_output=True)
    assert out.read_bytes() == (DEMO / "data" / "crossings.csv").read_bytes()


@pytest.mark.parametrize("script", sorted(p.name for p in DEMO.glob("0*.py")))
def test_demo_scripts_run(script):
    proc = subprocess.run(
        [sys.executable, script],
        cwd=DEMO,
        capture_output=True,
        text=True,
        timeout=300,
        env={"MPLBACKEND": "Agg", "PATH": "/usr/bin:/bin"},
    )
    assert proc.returncode == 0, proc.stderr[-2000:]


def test_demo_notebook_cells_run_in_order():
    from regvet.sources.notebook import neutralize

    nb = json.loads((DEMO / "04_timetable_change.ipynb").read_text())
    code = "\n".join(neutralize("".join(c["source"])) for c in nb["cells"] if c["cell_type"] == "code")
    proc = subprocess.run([sys.executable, "-c", code], cwd=DEMO, capture_output=True, text=True, timeout=300)
    assert proc.returncode == 0, proc.stderr[-2000:]
