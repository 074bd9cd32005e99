"""The real-code measuring instrument of issue 8 (bench/realcode): labels well-formed, matching, export.

The corpus itself (public repositories) is not here; these tests check the instrument on invented
files (a harbour's ferry timetable) and on the committed labels file, with real git processes.
"""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import pytest

from conftest import load_realcode

ROOT = Path(__file__).resolve().parents[1]
REALCODE = ROOT / "bench" / "realcode"
RULES = ["no-serial-test", "no-break-test", "no-form-test", "no-variance-test"]


def _labels(*sites: dict) -> dict:
    return {
        "rules": RULES,
        "files": [{"repo": "harbour/ferries", "mirror": "harbour+ferries", "path": "fares.py", "sites": list(sites)}],
    }


def _site(line: int, fires: dict[str, bool | None], **extra: object) -> dict:
    return {
        "cell": None,
        "line": line,
        **extra,
        "time_ordered": True,
        "ts_evidence": "static",
        "labels": {r: {"fire": fires.get(r, False), "why": "invented"} for r in RULES},
    }


def _finding(rule: str, line: int, path: str = "harbour+ferries/fares.py") -> dict:
    return {"rule": rule, "path": path, "cell": None, "line": line, "message": f"{rule} at {line}", "waived": False}


def test_committed_labels_are_well_formed():
    labels = json.loads((REALCODE / "labels.json").read_text(encoding="utf-8"))
    assert labels["rules"] == RULES
    repos = {r["mirror"] for r in labels["repos"]}
    places = set()
    for entry in labels["files"]:
        assert entry["mirror"] in repos, entry["mirror"]
        assert entry["repo"].replace("/", "+", 1) == entry["mirror"]
        for site in entry["sites"]:
            place = (entry["mirror"], entry["path"], site["cell"], site.get("fit_line", site["line"]))
            assert place not in places, place
            places.add(place)
            assert site["ts_evidence"] in ("static", "none")
            for rule in RULES:
                label = site["labels"][rule]
                assert label["fire"] in (True, False, None)
                assert label["why"].strip()
    assert len(places) >= 100


def test_matching_uses_the_fit_line_call_lines_and_counts_unmatched_findings_as_false_positives():
    score = load_realcode("score").score
    labels = _labels(
        _site(3, {"no-serial-test": True}, fit_line=4),  # model on line 3, .fit() on line 4
        _site(3, {"no-serial-test": False}, fit_line=9),  # the same model fitted again on line 9
        _site(20, {"no-form-test": True}, call_lines=[31]),  # a helper's fit surfacing at its call
        _site(40, {"no-variance-test": None}),  # not labelled for that rule
    )
    findings = [
        _finding("no-serial-test", 4),
        _finding("no-form-test", 31),
        _finding("no-variance-test", 40),
        _finding("no-break-test", 50),  # at no labelled site: a false positive
        _finding("no-serial-test", 4, path="elsewhere/other.py"),  # a file not scored: ignored
    ]
    result = score(labels, findings, {"harbour+ferries/fares.py"})["rules"]
    assert (result["no-serial-test"]["tp"], result["no-serial-test"]["fp"], result["no-serial-test"]["tn"]) == (1, 0, 3)
    assert result["no-form-test"]["tp"] == 1
    assert result["no-variance-test"]["fp"] == 0 and result["no-variance-test"]["tn"] == 3
    assert result["no-break-test"]["fp"] == 1 and result["no-break-test"]["precision"] == 0.0
    assert result["no-serial-test"]["recall_static_evidence"] == 1.0


def test_missed_sites_are_false_negatives_and_repeated_findings_at_one_site_are_counted_apart():
    score = load_realcode("score").score
    labels = _labels(_site(5, {"no-form-test": True}), _site(8, {"no-form-test": True}))
    findings = [
        _finding("no-form-test", 5),
        _finding("no-form-test", 5),
        {**_finding("no-form-test", 8), "waived": True},
    ]
    form = score(labels, findings, {"harbour+ferries/fares.py"})["rules"]["no-form-test"]
    assert (form["tp"], form["fn"], form["fp"]) == (1, 1, 0)
    assert form["extra_findings_at_one_site"] == 1
    assert form["recall"] == 0.5
    assert form["false_negatives"][0]["site"].endswith("line 8")


def _git(*args: str, cwd: Path) -> None:
    subprocess.run(["git", *args], cwd=cwd, check=True, capture_output=True)


def test_extract_writes_the_listed_files_from_a_bare_mirror_and_refuses_the_repository(tmp_path):
    source = tmp_path / "src"
    source.mkdir()
    (source / "fares.py").write_text("import statsmodels.formula.api as smf\n", encoding="utf-8")
    (source / "unlisted.py").write_text("x = 1\n", encoding="utf-8")
    _git("init", "-q", cwd=source)
    _git("add", ".", cwd=source)
    _git("-c", "user.name=t", "-c", "user.email=t@example.org", "commit", "-q", "-m", "ferries", cwd=source)
    mirror = tmp_path / "mirror" / "harbour+ferries" / "repo"
    subprocess.run(["git", "clone", "-q", "--bare", str(source), str(mirror)], check=True, capture_output=True)
    labels = tmp_path / "labels.json"
    labels.write_text(json.dumps(_labels(_site(1, {}))), encoding="utf-8")
    out = tmp_path / "corpus"
    extract = [sys.executable, str(REALCODE / "extract.py"), str(mirror), "--labels", str(labels)]
    done = subprocess.run([*extract, "--out", str(out)], capture_output=True, text=True, check=False)
    assert done.returncode == 0, done.stderr
    assert (out / "harbour+ferries" / "fares.py").read_text(encoding="utf-8").startswith("import statsmodels")
    assert not (out / "harbour+ferries" / "unlisted.py").exists()
    refused = subprocess.run(
        [*extract, "--out", str(ROOT / "bench" / "corpus")], capture_output=True, text=True, check=False
    )
    assert refused.returncode == 2 and "inside the regvet repository" in refused.stderr
    assert not (ROOT / "bench" / "corpus").exists()


@pytest.mark.parametrize("text", ["{not json", json.dumps({"files": []})])
def test_extract_names_the_labels_file_when_it_is_unusable(tmp_path, text):
    labels = tmp_path / "labels.json"
    labels.write_text(text, encoding="utf-8")
    done = subprocess.run(
        [
            sys.executable,
            str(REALCODE / "extract.py"),
            str(tmp_path / "a+b" / "repo"),
            "--labels",
            str(labels),
            "--out",
            str(tmp_path / "out"),
        ],
        capture_output=True,
        text=True,
        check=False,
    )
    assert done.returncode in (1, 2)
    assert "Traceback" not in done.stderr
    assert str(labels) in done.stderr or "no files listed" in done.stderr
