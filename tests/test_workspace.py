"""What the command line and the language server share (``regvet.workspace``): config cache, overrides, root."""

from __future__ import annotations

from pathlib import Path

from regvet.config import ConfigError
from regvet.model.settings import Settings
from regvet.workspace import ConfigCache, Overrides, project_root, split_rule_ids


def test_overrides_add_to_skip_replace_only_and_alpha_and_leave_empty_choices_alone():
    project = Settings(skip=frozenset({"no-form-test"}), only=frozenset({"no-form-test", "no-variance-test"}))
    assert Overrides().apply(project) is project
    assert Overrides(skip=frozenset(), only=frozenset()).apply(project) is project
    out = Overrides(skip=frozenset({"no-serial-test"}), only=frozenset({"no-variance-test"}), alpha=0.01).apply(project)
    assert out.skip == {"no-form-test", "no-serial-test"}  # the project's skip is kept
    assert out.only == {"no-variance-test"} and out.alpha == 0.01
    assert out.exclude == project.exclude and out.severity == project.severity


def test_split_rule_ids_keeps_the_order_of_what_is_not_a_rule():
    known, unknown = split_rule_ids(["no-form-test", "nope", 3, "no-variance-test", "also-nope"])
    assert known == {"no-form-test", "no-variance-test"}
    assert unknown == ["nope", 3, "also-nope"]
    assert split_rule_ids(x for x in ["no-form-test"]) == (frozenset({"no-form-test"}), [])


def test_config_cache_reads_each_file_once_and_keeps_errors(tmp_path: Path):
    (tmp_path / ".git").mkdir()
    good = tmp_path / "good"
    bad = tmp_path / "bad"
    for folder in (good, bad):
        folder.mkdir()
    (good / "regvet.toml").write_text('skip = ["no-form-test"]\n')
    (bad / "regvet.toml").write_text("alpah = 0.05\n")
    cache = ConfigCache()
    first = cache.for_file(good / "a.py")
    assert isinstance(first, Settings) and first.skip == {"no-form-test"}
    (good / "regvet.toml").write_text('skip = ["no-variance-test"]\n')
    assert cache.for_file(good / "b.py") is first  # cached per config file, not re-read
    err = cache.for_file(bad / "c.py")
    assert isinstance(err, ConfigError) and err.key == "alpah"
    assert cache.errors() == [err]
    assert cache.for_file(tmp_path / "d.py") == Settings()  # no config file: the defaults
    cache.clear()
    assert cache.errors() == [] and cache.for_file(good / "a.py").skip == {"no-variance-test"}


def test_project_root_is_the_deepest_folder_holding_the_file_else_the_fallback_else_its_folder(tmp_path: Path):
    outer, inner, other = tmp_path / "work", tmp_path / "work" / "ferry", tmp_path / "elsewhere"
    script = inner / "models" / "fares.py"
    assert project_root(script, [outer, inner, other]) == inner
    assert project_root(script, [other], fallback=outer) == outer
    assert project_root(script, [other], fallback=other) == script.parent
    assert project_root(script, []) == script.parent
