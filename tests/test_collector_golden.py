"""The collector's speed work changes no finding: a scan of the installed statsmodels (sources and tests)
gives exactly the findings recorded, before the optimisations, in ``tests/data/statsmodels_findings.json``.

Each finding is kept as its rule, place, waiver state, related places and a hash of its message. A
deliberate change of what regvet reports on statsmodels refreshes the record with
``REGVET_UPDATE_GOLDEN=1 .venv/bin/python -m pytest tests/test_collector_golden.py`` (say why in the
commit); the test skips on another statsmodels version than the recorded one.
"""

from __future__ import annotations

import hashlib
import json
import os
import subprocess
import sys
from pathlib import Path

import pytest

RECORD = Path(__file__).parent / "data" / "statsmodels_findings.json"


def _row(f: dict, root: str) -> list:
    def rel(p: str) -> str:
        return Path(p).resolve().relative_to(root).as_posix()

    related = [[rel(r["path"]), r["line"], r["column"], r["message"]] for r in f["related"]]
    digest = hashlib.sha256(json.dumps([f["message"], related]).encode()).hexdigest()[:20]
    return [rel(f["path"]), f["line"], f["column"], f["end_line"], f["end_column"], f["rule"], f["severity"],
            f["waived"], digest]  # fmt: skip


def test_statsmodels_findings_are_unchanged():
    import statsmodels

    root = Path(statsmodels.__file__).parent.resolve()
    proc = subprocess.run([sys.executable, "-m", "regvet", "check", str(root), "--format", "json", "--no-config",
                           "--no-cache"], capture_output=True, text=True, timeout=900)  # fmt: skip
    assert proc.returncode in (0, 1), proc.stderr
    rows = [_row(f, str(root)) for f in json.loads(proc.stdout)["findings"]]
    if os.environ.get("REGVET_UPDATE_GOLDEN") == "1":
        RECORD.write_text('{"statsmodels": "%s", "findings": [\n' % statsmodels.__version__
                          + ",\n".join(json.dumps(r) for r in rows) + "\n]}\n")  # fmt: skip
    record = json.loads(RECORD.read_text())
    if record["statsmodels"] != statsmodels.__version__:
        pytest.skip(f"recorded on statsmodels {record['statsmodels']}, installed {statsmodels.__version__}")
    assert len(rows) > 300
    missing = [r for r in record["findings"] if r not in rows]
    extra = [r for r in rows if r not in record["findings"]]
    assert (missing, extra) == ([], []), f"{len(missing)} findings gone, {len(extra)} new"
