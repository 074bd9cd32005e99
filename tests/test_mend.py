"""``regvet mend``: the editor's quick fixes applied in bulk, on the demo, on notebooks and on copies of
the installed statsmodels package's own files that contain fits.

Every test runs real analyses and writes real files; the atomicity tests kill a real ``regvet mend``
process with SIGKILL while it writes.
"""

from __future__ import annotations

import ast
import difflib
import json
import os
import random
import re
import shutil
import signal
import stat
import subprocess
import sys
import time
from pathlib import Path

import nbformat
import pytest

from conftest import FIXTURES
from regvet.engine import analyze

DEMO = FIXTURES / "demo"
STATSMODELS = Path(__import__("statsmodels").__file__).parent
#: Files of the installed statsmodels with unchecked fits (found with
#: `regvet check --format json --only no-form-test,no-variance-test` on the package).
STATSMODELS_FILES = ["regression/tests/test_cov.py", "iolib/tests/test_summary.py", "stats/tests/test_contrast.py"]
FIX_RULES = ("no-form-test", "no-variance-test")


def lines_of(text: str) -> list[str]:
    return re.findall(r"[^\n]*\n|[^\n]+$", text)


def changed_runs(old: str, new: str) -> list[tuple[str, str]]:
    """(removed, added) text of every run of changed lines."""
    a, b = lines_of(old), lines_of(new)
    ops = difflib.SequenceMatcher(None, a, b, autojunk=False).get_opcodes()
    return [("".join(a[i1:i2]), "".join(b[j1:j2])) for tag, i1, i2, j1, j2 in ops if tag != "equal"]


def assert_only_fixes(old: str, new: str) -> None:
    """Every change is an inserted check or import, or a fit call given a robust covariance."""
    inserted = re.compile(r"\s*(print\(\"(RESET|Breusch-Pagan):\"|from statsmodels\.stats\.diagnostic import )")
    for removed, added in changed_runs(old, new):
        rest = "".join(line for line in lines_of(added) if not inserted.match(line))
        if removed:  # a changed call: the same text with `cov_type="HC3"` added
            assert 'cov_type="HC3"' in rest, (removed, added)
            assert re.sub(r',?\s*cov_type="HC3"', "", rest).replace(" ", "") == removed.replace(" ", ""), (
                removed,
                added,
            )
        else:
            assert rest == "", added


def findings(path: Path, rules=FIX_RULES):
    return [
        f for f in analyze(path.read_text(encoding="utf-8"), path.name).findings if f.rule in rules and not f.waived
    ]


@pytest.fixture
def demo(tmp_path, monkeypatch) -> Path:
    folder = tmp_path / "demo"
    shutil.copytree(DEMO, folder, ignore=shutil.ignore_patterns("__pycache__"))
    monkeypatch.chdir(folder)
    return folder


def snapshot(folder: Path) -> dict[str, bytes]:
    return {p.relative_to(folder).as_posix(): p.read_bytes() for p in sorted(folder.rglob("*")) if p.is_file()}


def test_mend_on_the_demo_fixes_what_it_can_keeps_every_other_byte_and_is_idempotent(run_cli, demo):
    before = snapshot(demo)
    code, out, err = run_cli("mend", ".")
    assert code == 0, err
    after = snapshot(demo)
    changed = sorted(k for k in before if before[k] != after[k])
    assert changed == ["02_weather_effects.py", "03_model_choice.py", "04_timetable_change.ipynb"]
    assert set(after) == set(before)  # no stray temporary files
    for name in ("02_weather_effects.py", "03_model_choice.py"):
        assert_only_fixes(before[name].decode(), after[name].decode())
        ast.parse(after[name].decode())
    assert (
        'rain_res = smf.ols("riders ~ fare + rain_mm", data=crossings).fit(cov_type="HC3")'
        in after["02_weather_effects.py"].decode()
    )
    # the fit is called `quick` and linear_reset is already imported: no new import, its own name
    assert 'print("RESET:", linear_reset(quick, power=3, use_f=True))' in after["03_model_choice.py"].decode()
    assert after["03_model_choice.py"].decode().count("import") == before["03_model_choice.py"].decode().count("import")
    assert "made 3 edits in 3 of 6 files" in out
    # the helper-made fit cannot be edited in this file: said so, not silently skipped
    assert re.search(r"02_weather_effects\.py, line 28: no-form-test: not fixed: ", out)
    # what is left of the fixable rules is exactly what mend said it could not fix
    code, out_json, _ = run_cli("check", ".", "--format", "json", "--only", ",".join(FIX_RULES))
    left = [(f["path"], f["line"]) for f in json.loads(out_json)["findings"] if not f["waived"]]
    assert left == [("02_weather_effects.py", 28)]
    # a second run changes nothing
    code, out, err = run_cli("mend", ".")
    assert code == 0 and "made 0 edits in 0 of 6 files" in out
    assert snapshot(demo) == after


def test_mended_notebook_is_valid_and_keeps_outputs_metadata_and_layout(run_cli, demo):
    path = demo / "04_timetable_change.ipynb"
    nb = json.loads(path.read_text(encoding="utf-8"))  # sources as lists of lines, as nbformat writes them
    target = next(i for i, c in enumerate(nb["cells"]) if "elasticities[route]" in "".join(c["source"]))
    nb["cells"][target]["outputs"] = [{"output_type": "stream", "name": "stdout", "text": ["gull_isle  -0.41\n"]}]
    nb["cells"][target]["execution_count"] = 7
    nb["cells"][target]["metadata"]["tags"] = ["elasticities"]
    nb["metadata"]["regvet_test"] = {"kept": True}
    for indent in (1, 2):
        text = json.dumps(nb, indent=indent, ensure_ascii=False) + "\n"
        path.write_text(text, encoding="utf-8")
        code, out, err = run_cli("mend", path.name)
        assert code == 0, err
        new = path.read_text(encoding="utf-8")
        nbformat.validate(nbformat.reads(new, as_version=4))
        mended = json.loads(new)
        old = json.loads(text)
        for i, (a, b) in enumerate(zip(old["cells"], mended["cells"], strict=False)):
            if i != target:
                assert a == b
            else:
                assert {k: v for k, v in a.items() if k != "source"} == {k: v for k, v in b.items() if k != "source"}
                assert "".join(b["source"]).count("linear_reset(res, power=3, use_f=True)") == 1
        assert mended["metadata"] == old["metadata"]
        # only the edited cell's source changed in the file's text: one run of changed lines, inserted
        [(removed, inserted)] = changed_runs(text, new)
        assert removed == "" and inserted.strip().startswith('"    print(\\"RESET:\\"')
        assert inserted.startswith(" " * (indent * 4))  # the source list's own indentation
        code, out, err = run_cli("mend", path.name)
        assert path.read_text(encoding="utf-8") == new and "made 0 edits" in out


def test_preview_prints_the_diff_and_writes_nothing(run_cli, demo):
    before = snapshot(demo)
    code, out, err = run_cli("mend", ".", "--preview")
    assert code == 0 and snapshot(demo) == before
    assert out.startswith("--- a/02_weather_effects.py\n+++ b/02_weather_effects.py\n")
    assert "+++ b/04_timetable_change.ipynb (cell 8)" in out
    assert "would make 3 edits in 3 of 6 files" in err
    previewed = [line[1:] for line in out.splitlines() if line.startswith("+") and not line.startswith("+++")]
    run_cli("mend", ".")
    after = snapshot(demo)
    written = [
        line
        for name in before
        for _, added in changed_runs(before[name].decode(), after[name].decode())
        for line in added.splitlines()
    ]
    assert len(previewed) == len(written) == 3


def test_only_selects_rules_and_refuses_a_rule_without_a_fix(run_cli, demo):
    code, out, err = run_cli("mend", ".", "--only", "compare-across-outcomes")
    assert code == 2 and "has no mechanical fix" in err and "no-form-test" in err
    before = snapshot(demo)
    code, out, err = run_cli("mend", ".", "--only", "no-variance-test")
    assert code == 0 and "made 1 edit in 1 of 6 files" in out
    changed = [k for k in before if before[k] != snapshot(demo)[k]]
    assert changed == ["02_weather_effects.py"]


def test_mend_never_writes_or_rewrites_a_waiver(run_cli, demo):
    """A waiver records a person's decision: mend leaves the demo's misspelt waiver and a ` -- ` one as they are,
    and refuses the waiver rules (the editor offers their rewrite)."""
    (demo / "05_old_waiver.py").write_text(
        "import pandas as pd\nimport statsmodels.formula.api as smf\n\ncrossings = pd.read_csv('c.csv')\n"
        "res = smf.ols('riders ~ fare', data=crossings).fit()  # regvet: waive no-form-test -- fares are fixed\n"
        "print(res.params)\n"
    )
    before = snapshot(demo)
    code, out, err = run_cli("mend", ".")
    assert code == 0, err
    after = snapshot(demo)
    assert "# regvet: waive no-form-test -- fares are fixed" in after["05_old_waiver.py"].decode()
    assert "# regvet: waive no-brake-test because" in after["03_model_choice.py"].decode()
    assert "regvet: waive no-form-test because" not in after["05_old_waiver.py"].decode()
    assert after["05_old_waiver.py"].decode().count("regvet:") == before["05_old_waiver.py"].decode().count("regvet:")
    for rule in ("waiver-without-reason", "waiver-unknown-rule"):
        code, out, err = run_cli("mend", ".", "--only", rule)
        assert code == 2 and "has no mechanical fix" in err


@pytest.mark.parametrize("name", STATSMODELS_FILES)
def test_mend_on_copies_of_statsmodels_files(run_cli, tmp_path, monkeypatch, name):
    original = (STATSMODELS / name).read_bytes()
    copy = tmp_path / Path(name).name
    copy.write_bytes(original)
    monkeypatch.chdir(tmp_path)
    assert findings(copy), f"{name} no longer has an unchecked fit; pick another file"
    code, out, err = run_cli("mend", "--no-config", copy.name)
    assert code == 0, err
    new = copy.read_bytes()
    assert new != original
    assert_only_fixes(original.decode(), new.decode())
    compile(new, name, "exec")
    not_fixed = len(re.findall(r": not fixed: ", out))
    assert len(findings(copy)) == not_fixed
    code, out, err = run_cli("mend", "--no-config", copy.name)
    assert copy.read_bytes() == new and "made 0 edits" in out


def test_encodings_byte_order_marks_line_endings_and_permissions_are_kept(run_cli, tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    body = (
        "import statsmodels.formula.api as smf\n\n"
        'crossings = load("crossings.csv")  # Überfahrten\n'
        'res = smf.ols("riders ~ fare", data=crossings).fit()\n'
        "print(res.summary())\n"
    )
    cases = {
        "latin.py": b"# -*- coding: latin-1 -*-\n" + body.encode("latin-1"),
        "bom.py": b"\xef\xbb\xbf" + body.encode("utf-8"),
        "crlf.py": body.replace("\n", "\r\n").encode("utf-8"),
    }
    for name, data in cases.items():
        (tmp_path / name).write_bytes(data)
        os.chmod(tmp_path / name, 0o640)
    code, out, err = run_cli("mend", "--no-config", ".")
    assert code == 0, err
    latin = (tmp_path / "latin.py").read_bytes()
    assert "Überfahrten".encode("latin-1") in latin and b"cov_type" in latin
    assert (tmp_path / "bom.py").read_bytes().startswith(b"\xef\xbb\xbf")
    crlf = (tmp_path / "crlf.py").read_bytes()
    assert crlf.count(b"\n") == crlf.count(b"\r\n") and b"linear_reset(res" in crlf
    for name, data in cases.items():
        assert stat.S_IMODE((tmp_path / name).stat().st_mode) == 0o640
        new = (tmp_path / name).read_bytes()
        enc = "latin-1" if name == "latin.py" else "utf-8-sig"
        assert_only_fixes(data.decode(enc).replace("\r\n", "\n"), new.decode(enc).replace("\r\n", "\n"))


# --- atomicity: a real process killed while it writes -------------------------------------------
def big_script(path: Path) -> bytes:
    """A large file: a copy of one of statsmodels' own files with fits, then about 4 MB of embedded data."""
    head = (STATSMODELS / STATSMODELS_FILES[0]).read_text(encoding="utf-8")
    rows = "".join(f"{i},{(i * 7919) % 1000},{(i * 104729) % 997}," + "x" * 200 + "\n" for i in range(18000))
    data = (head + '\nROUTE_WEEKS = """\\\n' + rows + '"""\n').encode()
    path.write_bytes(data)
    return data


def mend_process(folder: Path, name: str, pause: float | None = None) -> subprocess.Popen:
    env = dict(os.environ)
    env.pop("REGVET_TEST_WRITE_PAUSE", None)
    if pause is not None:
        env["REGVET_TEST_WRITE_PAUSE"] = str(pause)
    return subprocess.Popen(
        [sys.executable, "-m", "regvet", "mend", "--no-config", "--only", "no-variance-test", name],
        cwd=folder,
        env=env,
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
    )


def temporaries(folder: Path) -> list[Path]:
    return [p for p in folder.iterdir() if p.name.endswith(".regvet-tmp")]


@pytest.fixture(scope="module")
def big(tmp_path_factory) -> tuple[bytes, bytes]:
    """The big file and what a complete mend makes of it (from an uninterrupted run)."""
    folder = tmp_path_factory.mktemp("big")
    original = big_script(folder / "ridership.py")
    proc = mend_process(folder, "ridership.py")
    out, err = proc.communicate(timeout=300)
    assert proc.returncode == 0, err
    mended = (folder / "ridership.py").read_bytes()
    assert mended != original and len(mended) > 3_000_000
    return original, mended


def test_killed_mid_write_the_file_is_intact_or_wholly_replaced(tmp_path, big):
    """SIGKILL at random moments while the temporary file is being written (the test hook
    REGVET_TEST_WRITE_PAUSE holds the write open half-way and again before the rename)."""
    original, mended = big
    rng = random.Random(20261202)
    mid_write = 0
    for attempt in range(6):
        folder = tmp_path / f"try{attempt}"
        folder.mkdir()
        (folder / "ridership.py").write_bytes(original)
        proc = mend_process(folder, "ridership.py", pause=0.6)
        deadline = time.monotonic() + 120
        while not temporaries(folder) and proc.poll() is None and time.monotonic() < deadline:
            time.sleep(0.005)
        assert temporaries(folder), proc.communicate()[1]
        time.sleep(rng.uniform(0.0, 1.0))  # somewhere in the half-written or the written-not-renamed window
        partial = [p.stat().st_size for p in temporaries(folder)]
        proc.send_signal(signal.SIGKILL)
        proc.wait(30)
        now = (folder / "ridership.py").read_bytes()
        assert now in (original, mended), f"attempt {attempt}: a partial file of {len(now)} bytes"
        if now == original and partial and 0 < partial[0] < len(mended):
            mid_write += 1
    assert mid_write >= 1, "no kill landed while the temporary file was half written"


def test_killed_at_random_moments_without_any_hook(tmp_path, big):
    original, mended = big
    rng = random.Random(7)
    outcomes = set()
    for attempt in range(5):
        folder = tmp_path / f"try{attempt}"
        folder.mkdir()
        (folder / "ridership.py").write_bytes(original)
        proc = mend_process(folder, "ridership.py")
        time.sleep(rng.uniform(0.05, 1.5))
        proc.send_signal(signal.SIGKILL)
        proc.wait(30)
        now = (folder / "ridership.py").read_bytes()
        assert now in (original, mended), f"attempt {attempt}: a partial file of {len(now)} bytes"
        outcomes.add(now == mended)
    assert outcomes  # at least one try ran; the file was never partial


def test_a_file_changed_while_mend_works_is_left_alone(tmp_path, big):
    original, _ = big
    path = tmp_path / "ridership.py"
    path.write_bytes(original)
    proc = mend_process(tmp_path, "ridership.py", pause=1.0)
    deadline = time.monotonic() + 120
    while not temporaries(tmp_path) and proc.poll() is None and time.monotonic() < deadline:
        time.sleep(0.005)
    with open(path, "ab") as fh:
        fh.write(b"# the analyst's own edit\n")
    out, err = proc.communicate(timeout=120)
    assert proc.returncode == 3
    assert "changed since regvet read it" in err.decode()
    assert path.read_bytes() == original + b"# the analyst's own edit\n"
    assert not temporaries(tmp_path)
