"""The README stays true: its rule table and configuration table match the catalogue and the option table."""

from __future__ import annotations

import re

from conftest import ROOT
from regvet.model.settings import OPTIONS
from regvet.rules import ALL_RULES

README = (ROOT / "README.md").read_text()


def _table(section: str) -> list[list[str]]:
    body = README.split(f"## {section}\n", 1)[1].split("\n## ", 1)[0]
    rows = [line for line in body.splitlines() if line.startswith("| `")]
    return [[c.strip() for c in row.strip("|").split("|")] for row in rows]


def test_rule_table_matches_the_catalogue():
    rows = _table("Rules")
    assert [(r[0].strip("`"), r[1], r[2]) for r in rows] == [(r.id, r.severity.label, r.summary) for r in ALL_RULES]


def test_configuration_table_lists_every_option():
    rows = _table("Configuration")
    assert [r[0].strip("`") for r in rows] == [o.name for o in OPTIONS]


def test_readme_shows_the_set_up_commands_and_the_caution():
    assert "make demo" in README and "make test" in README
    assert "Passing regvet does not make a model right" in README
    assert re.search(r"qualified\s+statistician or econometrician", README)


def test_readme_performance_figures_come_from_the_benchmark_file():
    import json

    scan = json.loads((ROOT / "bench" / "results" / "latest.json").read_text())["scan"]
    tree = next(v for k, v in scan["trees"].items() if k.startswith("statsmodels"))
    for key in ("pyflakes", "regvet_cold_1", "regvet_cold_2"):
        assert f"({tree['ratio_to_ast_parse'][key]}×)" in README, key
    assert f"{scan['one_file']['median_ms']['regvet_no_cache']} ms" in README
    server = json.loads((ROOT / "bench" / "results" / "latest.json").read_text())["language_server"]
    for row in server["analysis"] + server["latency"]:
        assert f"{row['median_ms']} ms" in README
    runtime = json.loads((ROOT / "bench" / "results" / "latest.json").read_text())["runtime"]
    assert f"ratio of {runtime['statistics_over_fit']}" in README
