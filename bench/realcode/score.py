"""Score regvet's static findings against the hand labels of the real-code corpus (issue 8).

Usage::

    python bench/realcode/score.py [--corpus ../corpus] [--labels bench/realcode/labels.json]
                                   [--regvet .venv/bin/regvet] [--out bench/results/realcode.json]

Runs ``regvet check --format json --no-baseline --no-cache`` once over every labelled file found
under CORPUS (``CORPUS/owner+name/path``, as bench/realcode/extract.py writes them), then matches
findings to labelled fit sites:

* a finding matches a site when it has the same file, the same notebook cell (0-based, ``null``
  outside notebooks) and its line (the start of its span) is the site's ``fit_line`` (the line of
  the ``.fit()`` call when that is a separate statement from the model call; one model fitted
  twice gives two sites) or, without one, its ``line`` (where the model call starts), or one of
  its ``call_lines`` (where a fit made inside a helper function surfaces at the helper's call);
* a site "fires" for a rule when at least one non-waived finding of that rule (any severity,
  info included) matches it; further findings of the same rule at the same site (a loop making
  several fits at one call) are counted as ``extra_findings_at_one_site``, not as false positives;
* a finding of a scored rule that matches no labelled site of its file is counted as a false
  positive (every fit site of a labelled file is labelled) and listed under ``unmatched``;
  sites whose label for a rule is ``null`` are left out of that rule's counts.

Prints TP/FP/FN/TN, precision and recall per rule (for ``no-serial-test`` also the recall over
the positives whose time order the code shows as static evidence) and writes them, with every
false positive and false negative, to OUT.
"""

from __future__ import annotations

import argparse
import json
import os
import subprocess
import sys
from collections import defaultdict
from datetime import datetime, timezone
from pathlib import Path
from typing import Any

HERE = Path(__file__).resolve().parent
ROOT = HERE.parent.parent


def _ratio(num: int, den: int) -> float | None:
    return round(num / den, 3) if den else None


def run_regvet(regvet: list[str], corpus: Path, files: list[str]) -> list[dict[str, Any]]:
    proc = subprocess.run(
        [*regvet, "check", "--format", "json", "--no-baseline", "--no-cache", *files],
        cwd=corpus,
        capture_output=True,
        text=True,
        check=False,
    )
    try:
        findings: list[dict[str, Any]] = json.loads(proc.stdout)["findings"]
    except (ValueError, KeyError):
        raise SystemExit(f"score: regvet gave no JSON (exit {proc.returncode}): {proc.stderr.strip()[:2000]}") from None
    return findings


def score(labels: dict[str, Any], findings: list[dict[str, Any]], present: set[str]) -> dict[str, Any]:
    rules: list[str] = labels["rules"]
    by_place: dict[tuple[str, str, int | None, int], list[dict[str, Any]]] = defaultdict(list)
    for f in findings:
        if f["rule"] in rules and not f.get("waived"):
            by_place[(f["rule"], f["path"], f.get("cell"), f["line"])].append(f)
    used: set[int] = set()
    stats: dict[str, dict[str, Any]] = {
        r: {"tp": 0, "fp": 0, "fn": 0, "tn": 0, "false_positives": [], "false_negatives": []} for r in rules
    }
    static_pos = {"tp": 0, "fn": 0}
    serial_fp_untimed = 0
    kind_of = {r["mirror"]: r.get("kind", "") for r in labels.get("repos", [])}
    by_kind: dict[str, dict[str, int]] = defaultdict(lambda: {"tp": 0, "fp": 0, "fn": 0, "tn": 0})
    extra: dict[str, int] = {r: 0 for r in rules}
    for entry in labels["files"]:
        path = f"{entry['mirror']}/{entry['path']}"
        if path not in present:
            continue
        for site in entry["sites"]:
            lines = {site.get("fit_line", site["line"]), *site.get("call_lines", [])}
            place = (
                f"{path}" + (f", cell {site['cell']}" if site["cell"] is not None else "") + f", line {site['line']}"
            )
            for rule in rules:
                hits = [f for ln in lines for f in by_place.get((rule, path, site["cell"], ln), [])]
                used.update(id(f) for f in hits)
                extra[rule] += max(0, len(hits) - 1)
                truth = site["labels"][rule]["fire"]
                if truth is None:
                    continue
                fired = bool(hits)
                s = stats[rule]
                key = ("tp" if truth else "fp") if fired else ("fn" if truth else "tn")
                s[key] += 1
                if rule == "no-serial-test":
                    by_kind[kind_of.get(entry["mirror"], "")][key] += 1
                if key == "fp" and rule == "no-serial-test" and not site.get("time_ordered"):
                    serial_fp_untimed += 1
                if key == "fp":
                    s["false_positives"].append(
                        {"site": place, "why_not": site["labels"][rule]["why"], "message": hits[0]["message"][:300]}
                    )
                elif key == "fn":
                    s["false_negatives"].append({"site": place, "why": site["labels"][rule]["why"]})
                if rule == "no-serial-test" and truth and site.get("ts_evidence") == "static":
                    static_pos["tp" if fired else "fn"] += 1
    unmatched: list[dict[str, Any]] = []
    for f in findings:
        if f["rule"] in rules and not f.get("waived") and id(f) not in used and f["path"] in present:
            stats[f["rule"]]["fp"] += 1
            unmatched.append(
                {
                    "rule": f["rule"],
                    "path": f["path"],
                    "cell": f.get("cell"),
                    "line": f["line"],
                    "message": f["message"][:300],
                }
            )
    for rule, s in stats.items():
        s["extra_findings_at_one_site"] = extra[rule]
        s["precision"] = _ratio(s["tp"], s["tp"] + s["fp"])
        s["recall"] = _ratio(s["tp"], s["tp"] + s["fn"])
    stats["no-serial-test"]["recall_static_evidence"] = _ratio(static_pos["tp"], static_pos["tp"] + static_pos["fn"])
    stats["no-serial-test"]["static_evidence_positives"] = static_pos["tp"] + static_pos["fn"]
    stats["no-serial-test"]["false_positives_on_untimed_data"] = serial_fp_untimed
    stats["no-serial-test"]["by_repository_kind"] = {
        kind: {**c, "precision": _ratio(c["tp"], c["tp"] + c["fp"]), "recall": _ratio(c["tp"], c["tp"] + c["fn"])}
        for kind, c in sorted(by_kind.items())
    }
    return {"rules": stats, "unmatched": unmatched}


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--corpus", type=Path, default=Path(__file__).resolve().parents[3] / "corpus")
    parser.add_argument("--labels", type=Path, default=HERE / "labels.json")
    parser.add_argument("--regvet", default=str(ROOT / ".venv" / "bin" / "regvet"))
    parser.add_argument("--out", type=Path, default=ROOT / "bench" / "results" / "realcode.json")
    args = parser.parse_args(argv)
    try:
        labels = json.loads(args.labels.read_text(encoding="utf-8"))
    except (OSError, ValueError) as exc:
        print(f"score: {args.labels}: cannot read the labels ({exc})", file=sys.stderr)
        return 2
    try:
        wanted = [f"{e['mirror']}/{e['path']}" for e in labels["files"]]
        for e in labels["files"]:
            for site in e["sites"]:
                for rule in labels["rules"]:
                    site["labels"][rule]["fire"]  # every site labels every rule
    except (KeyError, TypeError) as exc:
        print(f"score: {args.labels}: not a labels file (missing {exc})", file=sys.stderr)
        return 2
    present = {p for p in wanted if (args.corpus / p).is_file()}
    missing = sorted(set(wanted) - present)
    if missing:
        print(
            f"score: {len(missing)} labelled files are not under {args.corpus} (run extract.py); left out:",
            file=sys.stderr,
        )
        for p in missing:
            print(f"  {p}", file=sys.stderr)
    if not present:
        return 2
    command = args.regvet.split()
    if "/" in command[0]:  # a path to the program: resolve it here, as regvet runs from the corpus folder
        command[0] = os.path.abspath(command[0])
    findings = run_regvet(command, args.corpus, sorted(present))
    result = score(labels, findings, present)
    scored = [s for e in labels["files"] if f"{e['mirror']}/{e['path']}" in present for s in e["sites"]]
    sites = len(scored)
    timed = sum(1 for s in scored if s.get("time_ordered"))
    commit = subprocess.run(
        ["git", "-C", str(ROOT), "rev-parse", "--short", "HEAD"], capture_output=True, text=True, check=False
    ).stdout.strip()
    dirty = subprocess.run(["git", "-C", str(ROOT), "diff", "--quiet", "HEAD", "--", "src"], check=False).returncode
    commit += "+uncommitted src changes" if dirty else ""
    report = {
        "date": datetime.now(timezone.utc).strftime("%Y-%m-%dT%H:%MZ"),
        "regvet_commit": commit,
        "files": len(present),
        "sites": sites,
        "time_ordered_sites": timed,
        "missing_files": missing,
        **result,
    }
    print(f"{len(present)} files, {sites} labelled fit sites ({timed} on time-ordered data), regvet at {commit}")
    print(f"{'rule':18} {'TP':>4} {'FP':>4} {'FN':>4} {'TN':>4} {'prec':>6} {'recall':>6}")
    for rule, s in result["rules"].items():
        prec = "-" if s["precision"] is None else f"{s['precision']:.3f}"
        rec = "-" if s["recall"] is None else f"{s['recall']:.3f}"
        print(f"{rule:18} {s['tp']:4} {s['fp']:4} {s['fn']:4} {s['tn']:4} {prec:>6} {rec:>6}")
    serial = result["rules"]["no-serial-test"]
    print(
        f"no-serial-test recall over the {serial['static_evidence_positives']} positives with static evidence: "
        f"{serial['recall_static_evidence']}; false positives on data without time order: "
        f"{serial['false_positives_on_untimed_data']}"
    )
    for kind, c in serial["by_repository_kind"].items():
        print(
            f"  no-serial-test in {kind or '?'} repositories: TP {c['tp']} FP {c['fp']} FN {c['fn']} TN {c['tn']}, "
            f"precision {c['precision']}, recall {c['recall']}"
        )
    args.out.parent.mkdir(parents=True, exist_ok=True)
    args.out.write_text(json.dumps(report, indent=1) + "\n", encoding="utf-8")
    print(f"written {args.out}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
