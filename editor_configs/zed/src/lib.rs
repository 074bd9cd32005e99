//! Zed extension that starts regvet's language server (`regvet serve`, stdio).
//!
//! The `regvet` executable is looked up on the worktree's PATH (install it with
//! `pip install regvet` in the project's environment, or `pipx install regvet`).
//! `lsp.regvet.binary` in Zed's settings overrides the path and arguments.

use zed_extension_api::{self as zed, serde_json, settings::LspSettings, LanguageServerId, Result};

struct RegvetExtension;

/// The `regvet` section the server asks for: user settings given either flat
/// (`{"debounceMs": 300}`) or already nested (`{"regvet": {...}}`).
fn regvet_section(value: Option<serde_json::Value>) -> Option<serde_json::Value> {
    let value = value?;
    if value.get("regvet").is_some() {
        Some(value)
    } else {
        Some(serde_json::json!({ "regvet": value }))
    }
}

impl zed::Extension for RegvetExtension {
    fn new() -> Self {
        RegvetExtension
    }

    fn language_server_command(
        &mut self,
        server_id: &LanguageServerId,
        worktree: &zed::Worktree,
    ) -> Result<zed::Command> {
        let binary = LspSettings::for_worktree(server_id.as_ref(), worktree)
            .ok()
            .and_then(|s| s.binary);
        let path = binary.as_ref().and_then(|b| b.path.clone());
        let args = binary
            .as_ref()
            .and_then(|b| b.arguments.clone())
            .unwrap_or_else(|| vec!["serve".to_string()]);
        let command = match path {
            Some(path) => path,
            None => worktree.which("regvet").ok_or_else(|| {
                "regvet was not found on PATH: install it (pip install regvet) \
                 or set lsp.regvet.binary.path"
                    .to_string()
            })?,
        };
        Ok(zed::Command {
            command,
            args,
            env: worktree.shell_env(),
        })
    }

    fn language_server_initialization_options(
        &mut self,
        server_id: &LanguageServerId,
        worktree: &zed::Worktree,
    ) -> Result<Option<serde_json::Value>> {
        let s = LspSettings::for_worktree(server_id.as_ref(), worktree).unwrap_or_default();
        Ok(regvet_section(s.initialization_options.or(s.settings)))
    }

    fn language_server_workspace_configuration(
        &mut self,
        server_id: &LanguageServerId,
        worktree: &zed::Worktree,
    ) -> Result<Option<serde_json::Value>> {
        let s = LspSettings::for_worktree(server_id.as_ref(), worktree).unwrap_or_default();
        Ok(regvet_section(s.settings))
    }
}

zed::register_extension!(RegvetExtension);
