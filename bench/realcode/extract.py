"""Export the corpus files of one fetched repository into a work folder outside this repository.

Usage::

    python bench/realcode/extract.py GIT_DIR [--out ../corpus] [--labels bench/realcode/labels.json]

GIT_DIR is the bare git directory the ``fetch`` tool gave (``<mirror>/owner+name/repo`` or
``.../repo/.git``). The repository's name is read from that path (``owner+name``); the files
listed for it in labels.json are written with ``git --git-dir=GIT_DIR show HEAD:path`` to
``OUT/owner+name/path``. Nothing is downloaded here and nothing is written inside this repository:
fetched code is for measuring only and is never committed.
"""

from __future__ import annotations

import argparse
import json
import subprocess
import sys
from pathlib import Path

HERE = Path(__file__).resolve().parent
REPO_ROOT = HERE.parent.parent


def repo_key(git_dir: Path) -> str:
    """``owner+name`` from a mirror path such as <mirror>/owner+name/repo[/.git]."""
    for part in reversed(git_dir.resolve().parts):
        if "+" in part:
            return part
    raise SystemExit(f"extract: {git_dir}: no 'owner+name' folder in the path (expected <mirror>/owner+name/...)")


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("git_dir", type=Path, help="the bare git directory the fetch tool gave")
    parser.add_argument(
        "--out",
        type=Path,
        default=Path(__file__).resolve().parents[3] / "corpus",
        help="work folder (outside the repository)",
    )
    parser.add_argument("--labels", type=Path, default=HERE / "labels.json")
    args = parser.parse_args(argv)

    out = args.out.resolve()
    if out == REPO_ROOT or REPO_ROOT in out.parents:
        print(f"extract: {out}: inside the regvet repository; fetched code must stay outside it", file=sys.stderr)
        return 2
    key = repo_key(args.git_dir)
    try:
        labels = json.loads(args.labels.read_text(encoding="utf-8"))
    except (OSError, json.JSONDecodeError) as exc:
        print(f"extract: {args.labels}: cannot read the labels ({exc})", file=sys.stderr)
        return 2
    try:
        paths = sorted({f["path"] for f in labels["files"] if f["mirror"] == key})
    except (KeyError, TypeError) as exc:
        print(f"extract: {args.labels}: not a labels file (missing {exc})", file=sys.stderr)
        return 2
    if not paths:
        print(f"extract: {key}: no files listed for this repository in {args.labels}", file=sys.stderr)
        return 1
    failed = 0
    for path in paths:
        proc = subprocess.run(
            ["git", f"--git-dir={args.git_dir}", "show", f"HEAD:{path}"], capture_output=True, check=False
        )
        if proc.returncode != 0:
            print(f"extract: {key}:{path}: {proc.stderr.decode(errors='replace').strip()}", file=sys.stderr)
            failed += 1
            continue
        target = out / key / path
        target.parent.mkdir(parents=True, exist_ok=True)
        target.write_bytes(proc.stdout)
    print(f"{key}: {len(paths) - failed} of {len(paths)} files written under {out / key}")
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main())
