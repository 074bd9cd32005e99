"""End-to-end tests of ``regvet serve``: a real server process driven over stdio by pytest-lsp's client."""

from __future__ import annotations

import asyncio
import json
import socket
import subprocess
import textwrap
import time

import pytest
from lsprotocol import types as t
from pygls.uris import from_fs_path

from lsp_client import SERVER, capabilities, session
from regvet.engine import analyze

SCRIPT = textwrap.dedent(
    """\
    import pandas as pd
    import statsmodels.formula.api as smf

    crossings = pd.read_csv("crossings.csv")
    # Überfahrten je Woche: non-ASCII text before the fit
    fähre = "Möwe"; res = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()
    print(res.summary())
    """
)
CHECKS = "from statsmodels.stats.diagnostic import het_breuschpagan, linear_reset\nprint(linear_reset(res, power=3, use_f=True))\nprint(het_breuschpagan(res.resid, res.model.exog))\n"


@pytest.fixture
def project(tmp_path):
    (tmp_path / ".git").mkdir()
    return tmp_path


def codes(diags):
    return sorted(str(d.code) for d in diags)


async def test_open_publishes_versioned_diagnostics_with_utf16_positions(project):
    async with session(project) as c:
        uri = c.open(project / "model.py", SCRIPT)
        diags = await c.diagnostics_for(uri, 1)
        assert codes(diags) == ["no-form-test", "no-variance-test"]
        d = next(d for d in diags if d.code == "no-variance-test")
        line = SCRIPT.split("\n")[5]
        # the fit call starts after 'fähre = "Möwe"; res = ' : code points and UTF-16 units agree here,
        # but not bytes; check against the UTF-16 length of the prefix explicitly
        prefix = line[: line.index("smf.ols")]
        assert d.range.start == t.Position(5, len(prefix.encode("utf-16-le")) // 2)
        assert d.range.start.character == line.index("smf.ols") != len(prefix.encode("utf-8"))
        assert d.severity == t.DiagnosticSeverity.Warning and d.source == "regvet"
        assert d.code_description is not None and d.code_description.href.endswith("no-variance-test.md")
        assert [r.location.range.start.line for r in d.related_information] == [6]
        assert d.data["rule"] == "no-variance-test" and d.data["fix"]["result"] == "res"


async def test_astral_characters_count_two_utf16_units(project):
    text = SCRIPT.replace('fähre = "Möwe"', 'note = "⛴️🚢"')
    async with session(project) as c:
        uri = c.open(project / "model.py", text)
        diags = await c.diagnostics_for(uri, 1)
        line = text.split("\n")[5]
        prefix = line[: line.index("smf.ols")]
        d = diags[0]
        assert d.range.start.character == len(prefix.encode("utf-16-le")) // 2 == len(prefix) + 1


async def test_utf8_position_encoding_when_the_client_offers_only_that(project):
    async with session(project, capabilities(encodings=["utf-8"])) as c:
        assert c.server_capabilities.position_encoding == "utf-8"
        uri = c.open(project / "model.py", SCRIPT)
        diags = await c.diagnostics_for(uri, 1)
        line = SCRIPT.split("\n")[5]
        assert diags[0].range.start.character == len(line[: line.index("smf.ols")].encode("utf-8"))


async def test_change_save_and_close(project):
    async with session(project) as c:
        uri = c.open(project / "model.py", SCRIPT)
        assert len(await c.diagnostics_for(uri, 1)) == 2
        version = c.edit(uri, (7, 0), (7, 0), CHECKS)  # incremental change: add both tests at the end
        assert await c.diagnostics_for(uri, version) == []
        c.lsp.text_document_did_save(t.DidSaveTextDocumentParams(t.TextDocumentIdentifier(uri=uri)))
        count = len(c.published)
        await c.until(lambda: len(c.published) > count)
        assert len(c.published[-1].diagnostics) == 0 and c.published[-1].version == version
        c.lsp.text_document_did_close(t.DidCloseTextDocumentParams(t.TextDocumentIdentifier(uri=uri)))
        await c.until(lambda: c.published[-1].uri == uri and c.published[-1].version is None)


async def test_200_rapid_changes_end_with_exactly_the_final_texts_diagnostics(project):
    final = SCRIPT + "if res.rsquared > 0.5:\n    print(res.pvalues)\n"
    async with session(project, init_options={"regvet": {"debounceMs": 30}}) as c:
        uri = c.open(project / "model.py", SCRIPT)
        await c.diagnostics_for(uri, 1)
        for i in range(199):
            c.replace(uri, SCRIPT + f"# draft {i}\n" + (CHECKS if i % 2 else ""))
        version = c.replace(uri, final)
        diags = await c.diagnostics_for(uri, version)
        expected = analyze(final, str(project / "model.py"))
        assert sorted((d.code, d.range.start.line + 1, d.message) for d in diags) == sorted(
            (f.rule, f.span.line, f.message) for f in expected.findings
        )
        await asyncio.sleep(0.3)  # nothing older may arrive afterwards
        assert c.published[-1].version == version
        assert all(p.version in (1, version) for p in c.published if p.uri == uri)


async def test_unparsable_buffer_gets_one_parse_error_and_the_server_keeps_answering(project):
    async with session(project) as c:
        uri = c.open(project / "model.py", SCRIPT)
        await c.diagnostics_for(uri, 1)
        version = c.replace(uri, SCRIPT + "res2 = smf.ols('riders ~ fare', data=crossings).fit(\n")
        diags = await c.diagnostics_for(uri, version)
        assert codes(diags) == ["parse-error"]
        assert diags[0].range.start.line == 7 and diags[0].severity == t.DiagnosticSeverity.Error
        hover = await c.lsp.text_document_hover_async(
            t.HoverParams(t.TextDocumentIdentifier(uri=uri), diags[0].range.start)
        )
        assert hover is not None and "parse-error" in hover.contents.value
        version = c.replace(uri, SCRIPT)
        assert codes(await c.diagnostics_for(uri, version)) == ["no-form-test", "no-variance-test"]


async def test_pull_diagnostics_when_the_client_offers_them(project):
    async with session(project, capabilities(pull=True)) as c:
        assert c.server_capabilities.diagnostic_provider is not None
        uri = c.open(project / "model.py", SCRIPT)
        report = await c.lsp.text_document_diagnostic_async(
            t.DocumentDiagnosticParams(text_document=t.TextDocumentIdentifier(uri=uri))
        )
        assert codes(report.items) == ["no-form-test", "no-variance-test"]
        again = await c.lsp.text_document_diagnostic_async(
            t.DocumentDiagnosticParams(
                text_document=t.TextDocumentIdentifier(uri=uri), previous_result_id=report.result_id
            )
        )
        assert again.kind == "unchanged"
        c.edit(uri, (7, 0), (7, 0), CHECKS)
        report = await c.lsp.text_document_diagnostic_async(
            t.DocumentDiagnosticParams(text_document=t.TextDocumentIdentifier(uri=uri))
        )
        assert list(report.items) == []
        assert not [p for p in c.published if p.uri == uri]  # a pull client gets no pushes


def _notebook_cells(nb_path):
    cell = lambda i: f"vscode-notebook-cell:{nb_path.as_posix()}#W{i}sZmlsZQ%3D%3D"  # noqa: E731 (quoted URI)
    return cell


async def test_notebook_findings_are_published_on_their_cells(project):
    nb_path = project / "study.ipynb"
    nb_uri = from_fs_path(str(nb_path))
    cell = _notebook_cells(nb_path)
    async with session(project, capabilities(notebook=True)) as c:
        assert c.server_capabilities.notebook_document_sync is not None
        c.lsp.notebook_document_did_open(
            t.DidOpenNotebookDocumentParams(
                notebook_document=t.NotebookDocument(
                    uri=nb_uri,
                    notebook_type="jupyter-notebook",
                    version=0,
                    cells=[
                        t.NotebookCell(kind=t.NotebookCellKind.Markup, document=cell(0)),
                        t.NotebookCell(kind=t.NotebookCellKind.Code, document=cell(1)),
                        t.NotebookCell(kind=t.NotebookCellKind.Code, document=cell(2)),
                    ],
                ),
                cell_text_documents=[
                    t.TextDocumentItem(uri=cell(0), language_id="markdown", version=1, text="# Weekly riders\n"),
                    t.TextDocumentItem(
                        uri=cell(1),
                        language_id="python",
                        version=1,
                        text="%matplotlib inline\nimport statsmodels.formula.api as smf\n",
                    ),
                    t.TextDocumentItem(
                        uri=cell(2),
                        language_id="python",
                        version=1,
                        text="res = smf.ols('riders ~ fare', data=df).fit()\nres.summary()\n",
                    ),
                ],
            )
        )
        await c.until(lambda: c.lsp.diagnostics.get(cell(2)))
        diags = c.lsp.diagnostics[cell(2)]
        assert codes(diags) == ["no-form-test", "no-variance-test"]
        assert all(d.range.start.line == 0 and d.range.start.character == 6 for d in diags)
        assert len(c.lsp.diagnostics[cell(1)]) == 0
        assert diags[0].related_information[0].location.uri == cell(2)
        # a check added in a new last cell clears them
        c.lsp.notebook_document_did_change(
            t.DidChangeNotebookDocumentParams(
                notebook_document=t.VersionedNotebookDocumentIdentifier(version=1, uri=nb_uri),
                change=t.NotebookDocumentChangeEvent(
                    cells=t.NotebookDocumentCellChanges(
                        text_content=[
                            t.NotebookDocumentCellContentChanges(
                                document=t.VersionedTextDocumentIdentifier(uri=cell(2), version=2),
                                changes=[
                                    t.TextDocumentContentChangePartial(
                                        range=t.Range(t.Position(2, 0), t.Position(2, 0)),
                                        text="from statsmodels.stats.api import het_breuschpagan, linear_reset\n"
                                        "linear_reset(res, power=3, use_f=True)\nhet_breuschpagan(res.resid, res.model.exog)\n",
                                    )
                                ],
                            )
                        ]
                    )
                ),
            )
        )
        await c.until(lambda: c.published[-1].uri in (cell(1), cell(2)) and len(c.lsp.diagnostics[cell(2)]) == 0)
        hover = await c.lsp.text_document_hover_async(
            t.HoverParams(t.TextDocumentIdentifier(uri=cell(2)), t.Position(0, 8))
        )
        assert (
            "functional form: **done**" in hover.contents.value and "(cell 3, line 4)" in hover.contents.value
        )  # cells counted from 1 for people


async def test_hover_shows_the_status_of_each_check_family(project):
    text = SCRIPT + "print(linear_reset(res, power=3, use_f=True))  # regvet: waive no-variance-test because x\n"
    text = text.replace(
        "import pandas as pd\n", "import pandas as pd\nfrom statsmodels.stats.diagnostic import linear_reset\n"
    )
    text = text.replace(
        ".fit()\n", ".fit()  # regvet: waive no-variance-test because volumes are pooled over equal-size routes\n", 1
    )
    async with session(project) as c:
        uri = c.open(project / "model.py", text)
        await c.diagnostics_for(uri, 1)
        line = text.split("\n")[6]
        hover = await c.lsp.text_document_hover_async(
            t.HoverParams(t.TextDocumentIdentifier(uri=uri), t.Position(6, line.index("smf.ols") + 3))
        )
        value = hover.contents.value
        assert "`res` (OLS, formula `riders ~ fare + fuel_price`, nonrobust)" in value
        assert "- functional form: **done**: `linear_reset` (line 9)" in value
        assert "- variance: **waived**: volumes are pooled over equal-size routes" in value
        assert "- normality: **missing**" in value
        assert "- serial correlation: **not needed**" in value
        assert "- breaks: **not needed**" in value and "- comparisons: **not needed**" in value
        nothing = await c.lsp.text_document_hover_async(
            t.HoverParams(t.TextDocumentIdentifier(uri=uri), t.Position(0, 0))
        )
        assert nothing is None


async def test_hover_on_a_loop_lists_the_fits_of_the_line(project):
    text = textwrap.dedent(
        """\
        import pandas as pd
        import statsmodels.formula.api as smf

        crossings = pd.read_csv("crossings.csv")
        for formula in ["riders ~ fare", "riders ~ fare + fuel_price"]:
            res = smf.ols(formula, data=crossings).fit()
            print(res.summary())
        """
    )
    async with session(project) as c:
        uri = c.open(project / "loop.py", text)
        diags = await c.diagnostics_for(uri, 1)
        assert codes(diags) == ["no-form-test", "no-variance-test"]  # one per rule for the two fits
        d = next(d for d in diags if d.code == "no-variance-test")
        assert d.message.startswith("For both fits from this line, `riders ~ fare` and `riders ~ fare + fuel_price`: ")
        line = text.split("\n")[5]
        hover = await c.lsp.text_document_hover_async(
            t.HoverParams(t.TextDocumentIdentifier(uri=uri), t.Position(5, line.index("smf.ols") + 3))
        )
        value = hover.contents.value
        assert "**regvet** · 2 fits from this line: `riders ~ fare`, `riders ~ fare + fuel_price`" in value
        assert "`res` (OLS, formula `riders ~ fare`, nonrobust)" in value
        assert "`res` (OLS, formula `riders ~ fare + fuel_price`, nonrobust)" in value


async def test_client_settings_override_skip(project):
    async with session(project, settings={"skip": ["no-form-test"]}) as c:
        uri = c.open(project / "model.py", SCRIPT)
        assert codes(await c.diagnostics_for(uri, 1)) == ["no-variance-test"]
        c.lsp.set_configuration({"only": ["no-form-test"]}, section="regvet")
        c.lsp.workspace_did_change_configuration(t.DidChangeConfigurationParams(settings=None))
        await c.until(lambda: codes(c.lsp.diagnostics[uri]) == ["no-form-test"])


async def test_config_file_is_read_and_reloaded_when_it_changes(project):
    cfg = project / "regvet.toml"
    cfg.write_text('skip = ["no-variance-test"]\n')
    async with session(project) as c:
        await c.until(lambda: c.registrations)
        assert c.registrations[0].method == t.WORKSPACE_DID_CHANGE_WATCHED_FILES
        uri = c.open(project / "model.py", SCRIPT)
        assert codes(await c.diagnostics_for(uri, 1)) == ["no-form-test"]
        cfg.write_text('skip = ["no-form-test"]\n')
        count = len(c.published)
        c.lsp.workspace_did_change_watched_files(
            t.DidChangeWatchedFilesParams(
                changes=[t.FileEvent(uri=from_fs_path(str(cfg)), type=t.FileChangeType.Changed)]
            )
        )
        await c.until(lambda: len(c.published) > count and c.published[-1].uri == uri)
        assert codes(c.published[-1].diagnostics) == ["no-variance-test"]


async def test_broken_config_gets_one_diagnostic_and_the_server_uses_defaults(project):
    cfg = project / "pyproject.toml"
    cfg.write_text('[tool.regvet]\nskip = ["no-variance-test"]\nalpah = 0.05\n')
    cfg_uri = from_fs_path(str(cfg))
    async with session(project) as c:
        uri = c.open(project / "model.py", SCRIPT)
        assert codes(await c.diagnostics_for(uri, 1)) == ["no-form-test", "no-variance-test"]  # defaults
        await c.until(lambda: c.lsp.diagnostics.get(cfg_uri))
        [d] = c.lsp.diagnostics[cfg_uri]
        assert "alpah" in d.message and "did you mean `alpha`" in d.message and d.range.start.line == 2
        cfg.write_text('[tool.regvet]\nskip = ["no-variance-test"]\n')
        c.lsp.workspace_did_change_watched_files(
            t.DidChangeWatchedFilesParams(changes=[t.FileEvent(uri=cfg_uri, type=t.FileChangeType.Changed)])
        )
        await c.until(lambda: len(c.lsp.diagnostics.get(cfg_uri, ())) == 0)
        await c.until(lambda: codes(c.lsp.diagnostics[uri]) == ["no-form-test"])


async def test_editing_a_helper_module_reanalyses_the_scripts_that_use_it(project):
    helper = project / "ferry_checks.py"
    helper.write_text("def run_checks(res):\n    return res.params\n")
    main = SCRIPT.replace("import pandas as pd\n", "import pandas as pd\nfrom ferry_checks import run_checks\n")
    main += "run_checks(res)\n"
    async with session(project) as c:
        main_uri = c.open(project / "model.py", main)
        assert codes(await c.diagnostics_for(main_uri, 1)) == ["no-form-test", "no-variance-test"]
        helper_uri = c.open(helper, helper.read_text())
        count = len([p for p in c.published if p.uri == main_uri])
        new_helper = (
            "from statsmodels.stats.diagnostic import het_breuschpagan, linear_reset\n\n"
            "def run_checks(res):\n    linear_reset(res, power=3, use_f=True)\n"
            "    return het_breuschpagan(res.resid, res.model.exog)\n"
        )
        c.replace(helper_uri, new_helper)  # unsaved: the open buffer wins over the file on disk
        await c.until(lambda: len([p for p in c.published if p.uri == main_uri]) > count)
        assert codes(c.lsp.diagnostics[main_uri]) == []


async def test_tcp_transport_binds_loopback(project):
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        port = s.getsockname()[1]
    proc = subprocess.Popen([*SERVER, "--tcp", "--port", str(port)], stderr=subprocess.PIPE)
    try:
        from pygls.protocol import default_converter
        from pytest_lsp import LanguageClient
        from pytest_lsp.client import register_lsp_features

        deadline = time.monotonic() + 20
        while True:
            try:
                with socket.create_connection(("127.0.0.1", port), timeout=0.2):
                    pass
                break
            except OSError:
                if time.monotonic() > deadline:
                    raise
                await asyncio.sleep(0.05)
        # the TCP server serves one connection: the probe above was it, so start a second one
        proc.terminate()
        proc.wait(5)
        proc = subprocess.Popen([*SERVER, "--tcp", "--port", str(port)], stderr=subprocess.PIPE)
        client = LanguageClient(converter_factory=default_converter)
        register_lsp_features(client)
        for _ in range(200):
            try:
                await client.start_tcp("127.0.0.1", port)
                break
            except OSError:
                await asyncio.sleep(0.05)
        result = await client.initialize_session(t.InitializeParams(capabilities=capabilities()))
        assert result.server_info.name == "regvet"
        listening = subprocess.run(["ss", "-ltn"], capture_output=True, text=True).stdout
        assert f"127.0.0.1:{port}" in listening and f"0.0.0.0:{port}" not in listening
        await client.shutdown_session()
    finally:
        proc.terminate()
        proc.wait(5)


def test_serve_help_and_bad_arguments():
    proc = subprocess.run([*SERVER, "--help"], capture_output=True, text=True)
    assert proc.returncode == 0 and "--tcp" in proc.stdout
    proc = subprocess.run([*SERVER, "--port", "x"], capture_output=True, text=True)
    assert proc.returncode == 2 and "Traceback" not in proc.stderr


def test_diagnostic_data_is_plain_json():
    from regvet.lsp.convert import json_safe

    class Scalar:
        def item(self):
            return 3

    assert (
        json.dumps(json_safe({"a": float("nan"), "b": float("inf"), "c": Scalar(), "d": (1, 2.5)}), allow_nan=False)
        == '{"a": null, "b": null, "c": 3, "d": [1, 2.5]}'
    )


def apply_text_edit(text: str, edit: t.TextEdit) -> str:
    """Apply one LSP edit (UTF-16 columns) the way a client does."""
    from regvet.lsp.convert import Positions

    pos = Positions(text, "utf-16")
    lines = text.split("\n")

    def offset(p: t.Position) -> int:
        line, col = pos.from_client(p)
        return sum(len(x) + 1 for x in lines[: line - 1]) + col

    return text[: offset(edit.range.start)] + edit.new_text + text[offset(edit.range.end) :]


@pytest.mark.parametrize(
    "rule,title_start",
    [
        ("no-variance-test", "Use robust standard errors"),
        ("no-form-test", "Insert a RESET test"),
        ("no-variance-test", "Insert a Breusch-Pagan test"),
        ("no-form-test", "Waive no-form-test"),
        ("no-variance-test", "Waive no-variance-test"),
    ],
)
async def test_each_quick_fix_clears_the_finding_it_targets(project, rule, title_start):
    async with session(project) as c:
        uri = c.open(project / "model.py", SCRIPT)
        diags = await c.diagnostics_for(uri, 1)
        target = next(d for d in diags if d.code == rule)
        actions = await c.lsp.text_document_code_action_async(
            t.CodeActionParams(
                text_document=t.TextDocumentIdentifier(uri=uri),
                range=target.range,
                context=t.CodeActionContext(diagnostics=[target]),
            )
        )
        action = next(a for a in actions if a.title.startswith(title_start))
        assert action.kind == t.CodeActionKind.QuickFix and list(action.diagnostics) == [target]
        [change] = action.edit.document_changes
        assert change.text_document.uri == uri and change.text_document.version == 1
        [edit] = change.edits
        new = apply_text_edit(SCRIPT, edit)
        import ast

        ast.parse(new)
        # everything outside the edited range is byte-for-byte the same
        start = len("\n".join(SCRIPT.split("\n")[: edit.range.start.line]))
        assert new[:start] == SCRIPT[:start]
        tail = len(SCRIPT) - len("\n".join(SCRIPT.split("\n")[: edit.range.end.line + 1]))
        assert new.endswith(SCRIPT[len(SCRIPT) - tail :])
        version = c.replace(uri, new)
        after = await c.diagnostics_for(uri, version)
        assert rule not in codes(after)
        others = {"no-form-test", "no-variance-test"} - {rule}
        assert set(codes(after)) == others  # only the targeted finding went away
        if title_start.startswith("Waive"):
            assert f"# regvet: waive {rule} because REASON" in new


@pytest.mark.parametrize(
    "comment,title,written,waived",
    [
        (
            "# regvet: waive no-form-test -- fares are fixed by contract",
            "Rewrite the waiver as `# regvet: waive no-form-test because fares are fixed by contract`",
            "# regvet: waive no-form-test because fares are fixed by contract",
            "no-form-test",
        ),
        (
            "# regvet: waive no-frm-test because fares are fixed by contract",
            "Correct the waiver: `no-frm-test` to `no-form-test`",
            "# regvet: waive no-form-test because fares are fixed by contract",
            "no-form-test",
        ),
    ],
)
async def test_a_waiver_in_another_form_or_misspelt_is_rewritten_by_its_quick_fix(
    project, comment, title, written, waived
):
    text = SCRIPT.replace(".fit()\n", f".fit()  {comment}\n", 1)
    async with session(project) as c:
        uri = c.open(project / "model.py", text)
        diags = await c.diagnostics_for(uri, 1)
        target = next(d for d in diags if d.code in ("waiver-without-reason", "waiver-unknown-rule"))
        assert waived in codes(diags)  # the waiver does not take effect yet
        actions = await c.lsp.text_document_code_action_async(
            t.CodeActionParams(
                text_document=t.TextDocumentIdentifier(uri=uri),
                range=target.range,
                context=t.CodeActionContext(diagnostics=[target]),
            )
        )
        assert [a.title for a in actions] == [title]  # no waiver of a waiver finding is offered
        [change] = actions[0].edit.document_changes
        [edit] = change.edits
        new = apply_text_edit(text, edit)
        assert new == text.replace(comment, written)
        version = c.replace(uri, new)
        after = await c.diagnostics_for(uri, version)
        assert waived not in codes(after) and target.code not in codes(after)


async def test_quick_fixes_in_a_notebook_cell_edit_that_cell(project):
    nb_path = project / "study.ipynb"
    nb_uri = from_fs_path(str(nb_path))
    cell = _notebook_cells(nb_path)
    code1 = "import statsmodels.formula.api as smf\nfrom statsmodels.stats.diagnostic import linear_reset\n"
    code2 = "res = smf.ols('riders ~ fare', data=df).fit()\nres.summary()\n"
    async with session(project, capabilities(notebook=True)) as c:
        c.lsp.notebook_document_did_open(
            t.DidOpenNotebookDocumentParams(
                notebook_document=t.NotebookDocument(
                    uri=nb_uri,
                    notebook_type="jupyter-notebook",
                    version=0,
                    cells=[
                        t.NotebookCell(kind=t.NotebookCellKind.Code, document=cell(0)),
                        t.NotebookCell(kind=t.NotebookCellKind.Code, document=cell(1)),
                    ],
                ),
                cell_text_documents=[
                    t.TextDocumentItem(uri=cell(0), language_id="python", version=1, text=code1),
                    t.TextDocumentItem(uri=cell(1), language_id="python", version=1, text=code2),
                ],
            )
        )
        await c.until(lambda: c.lsp.diagnostics.get(cell(1)))
        target = next(d for d in c.lsp.diagnostics[cell(1)] if d.code == "no-form-test")
        actions = await c.lsp.text_document_code_action_async(
            t.CodeActionParams(
                text_document=t.TextDocumentIdentifier(uri=cell(1)),
                range=target.range,
                context=t.CodeActionContext(diagnostics=[target]),
            )
        )
        action = next(a for a in actions if a.title.startswith("Insert a RESET test"))
        [change] = action.edit.document_changes
        assert change.text_document.uri == cell(1)
        new = apply_text_edit(code2, change.edits[0])
        # linear_reset is already imported in cell 0: no second import in this cell
        assert new == code2.replace(".fit()\n", '.fit()\nprint("RESET:", linear_reset(res, power=3, use_f=True))\n', 1)


async def test_editor_skip_adds_to_the_projects_skip_and_empty_lists_change_nothing(project):
    (project / "regvet.toml").write_text('skip = ["no-form-test"]\n')
    async with session(project, settings={"skip": [], "only": []}) as c:
        uri = c.open(project / "model.py", SCRIPT)
        assert codes(await c.diagnostics_for(uri, 1)) == ["no-variance-test"]
        c.lsp.set_configuration({"skip": ["no-variance-test", "no-such-rule"]}, section="regvet")
        c.lsp.workspace_did_change_configuration(t.DidChangeConfigurationParams(settings=None))
        await c.until(lambda: len(c.lsp.diagnostics[uri]) == 0)
        await c.until(lambda: any("no-such-rule" in m.message for m in c.lsp.log_messages))


RUNNABLE = textwrap.dedent(
    """\
    import numpy as np
    import pandas as pd
    import statsmodels.formula.api as smf

    rng = np.random.default_rng(11)
    fare = rng.uniform(2.0, 9.0, 200)
    crossings = pd.DataFrame({"fare": fare, "riders": 400 - 12 * fare + rng.normal(0, 1, 200) * fare**2})
    res = smf.ols("riders ~ fare", data=crossings).fit()
    print(res.summary())
    """
)


async def test_run_fits_command_reports_progress_and_attaches_statistics(project, monkeypatch):
    monkeypatch.setenv("REGVET_CACHE_DIR", str(project / "cache"))
    async with session(project, capabilities(progress=True)) as c:
        assert "regvet.runFits" in c.server_capabilities.execute_command_provider.commands
        uri = c.open(project / "model.py", RUNNABLE)
        before = await c.diagnostics_for(uri, 1)
        assert codes(before) == ["no-form-test", "no-variance-test"]  # typing never runs the code
        count = len(c.published)
        answer = await c.lsp.workspace_execute_command_async(
            t.ExecuteCommandParams(command="regvet.runFits", arguments=[uri])
        )
        assert answer["ran"] is True and answer["fits"] == 1 and answer["failed"] is None
        await c.until(lambda: len(c.published) > count)
        diags = c.lsp.diagnostics[uri]
        assert codes(diags) == ["heteroskedastic-plain-se", "no-form-test", "no-variance-test"]
        hetero = next(d for d in diags if d.code == "heteroskedastic-plain-se")
        assert (
            "Breusch-Pagan in Koenker's form, LM =" in hetero.message
            and hetero.data["stats"]["fits"][0]["statistics"]["nobs"] == 200
        )
        variance = next(d for d in diags if d.code == "no-variance-test")
        assert "[run: n = 200, Breusch-Pagan p < 0.001" in variance.message
        [reports] = list(c.lsp.progress_reports.values())
        assert reports[0].kind == "begin" and reports[0].cancellable and reports[-1].kind == "end"
        hover = await c.lsp.text_document_hover_async(
            t.HoverParams(t.TextDocumentIdentifier(uri=uri), t.Position(7, 8))
        )
        assert "- last run: **statistics**: n = 200, Breusch-Pagan p < 0.001" in hover.contents.value
        # an edit makes the statistics stale: they are dropped until the next run
        version = c.edit(uri, (9, 0), (9, 0), "# edited\n")
        assert "heteroskedastic-plain-se" not in codes(await c.diagnostics_for(uri, version))


async def test_run_fits_can_be_cancelled(project, monkeypatch):
    monkeypatch.setenv("REGVET_CACHE_DIR", str(project / "cache"))
    slow = RUNNABLE + "import time\ntime.sleep(120)\n"
    async with session(project, capabilities(progress=True)) as c:
        uri = c.open(project / "model.py", slow)
        await c.diagnostics_for(uri, 1)
        request = asyncio.ensure_future(
            c.lsp.workspace_execute_command_async(t.ExecuteCommandParams(command="regvet.runFits", arguments=[uri]))
        )
        await c.until(lambda: c.lsp.progress_reports)
        [token] = list(c.lsp.progress_reports)
        started = time.monotonic()
        c.lsp.window_work_done_progress_cancel(t.WorkDoneProgressCancelParams(token=token))
        answer = await asyncio.wait_for(request, 30)
        assert answer == {"ran": False, "reason": "cancelled"} and time.monotonic() - started < 20
        assert c.lsp.progress_reports[token][-1].kind == "end"
        hover = await c.lsp.text_document_hover_async(
            t.HoverParams(t.TextDocumentIdentifier(uri=uri), t.Position(7, 8))
        )
        assert hover is not None  # the server still answers
