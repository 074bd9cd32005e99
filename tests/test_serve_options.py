"""`regvet serve` options and the editor configurations' own names.

TCP mode has no default port of its own: without `--port` it picks a free one and prints it, and
the language server answers there (a real client over a real socket). The VS Code extension's
setting for the executable is `regvet.executable`, the same key in the manifest and the code.
"""

from __future__ import annotations

import asyncio
import json
import re
import shutil
import subprocess
from pathlib import Path

import pytest
from lsprotocol import types as t

from lsp_client import SERVER, capabilities

pytestmark = pytest.mark.server

CONFIGS = Path(__file__).resolve().parents[1] / "editor_configs"


async def test_tcp_without_a_port_picks_a_free_one_and_prints_it():
    from pygls.protocol import default_converter
    from pytest_lsp import LanguageClient
    from pytest_lsp.client import register_lsp_features

    proc = subprocess.Popen([*SERVER, "--tcp"], stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    try:
        line = await asyncio.wait_for(asyncio.to_thread(proc.stdout.readline), 30)
        match = re.fullmatch(r"regvet language server: listening on 127\.0\.0\.1:(\d+)\n", line)
        assert match, line
        port = int(match.group(1))
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
        await client.shutdown_session()
    finally:
        proc.terminate()
        proc.wait(5)


@pytest.mark.parametrize(
    "argv, message",
    [
        (["--port", "4100"], "--port needs --tcp"),
        (["--tcp", "--port", "0"], "--port must be between 1 and 65535"),
        (["--tcp", "--port", "70000"], "--port must be between 1 and 65535"),
    ],
)
def test_bad_port_options_are_refused_with_a_message(argv, message):
    proc = subprocess.run([*SERVER, *argv], capture_output=True, text=True, timeout=60)
    assert proc.returncode == 2
    assert message in proc.stderr and "Traceback" not in proc.stderr


def test_serve_help_names_no_default_port():
    proc = subprocess.run([*SERVER, "--help"], capture_output=True, text=True, timeout=60)
    assert proc.returncode == 0 and "picks a free" in " ".join(proc.stdout.split()) and "2087" not in proc.stdout


def test_vscode_setting_for_the_executable_is_ours_in_manifest_and_code():
    manifest = json.loads((CONFIGS / "vscode" / "package.json").read_text())
    properties = manifest["contributes"]["configuration"]["properties"]
    assert "regvet.executable" in properties
    assert not [key for key in properties if key.endswith(".server.path")]
    assert manifest["capabilities"]["untrustedWorkspaces"]["restrictedConfigurations"] == ["regvet.executable"]
    code = (CONFIGS / "vscode" / "extension.js").read_text()
    assert '.get("executable")' in code and 'affectsConfiguration("regvet.executable")' in code
    assert "server.path" not in code


def test_vscode_extension_is_valid_javascript():
    node = shutil.which("node")
    if node is None:
        pytest.skip("node is not installed")
    proc = subprocess.run([node, "--check", str(CONFIGS / "vscode" / "extension.js")], capture_output=True, text=True)
    assert proc.returncode == 0, proc.stderr


def test_zed_extension_names_a_repository_address_the_readme_explains():
    toml = (CONFIGS / "zed" / "extension.toml").read_text()
    (address,) = re.findall(r'^repository = "([^"]+)"', toml, flags=re.M)
    assert address.startswith("https://github.com/") and ".invalid" not in address
    assert address in (CONFIGS / "README.md").read_text()
