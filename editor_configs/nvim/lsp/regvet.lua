-- regvet language server for Neovim 0.11+ (the `lsp/<name>.lua` convention).
-- Put the directory holding this `lsp/` folder on 'runtimepath' (or copy this file to
-- ~/.config/nvim/lsp/regvet.lua), then call vim.lsp.enable("regvet") from init.lua.
-- regvet runs next to your other Python servers; it does not replace them.
---@type vim.lsp.Config
return {
  cmd = { "regvet", "serve" },
  filetypes = { "python" },
  root_markers = { "regvet.toml", "pyproject.toml", ".git" },
  -- Answered when the server asks for workspace/configuration section "regvet".
  -- `skip` adds to the project's [tool.regvet] skip list; a non-empty `only` narrows the report.
  settings = {
    regvet = {
      debounceMs = 300,
      -- alpha = 0.05,
      -- skip = { "no-serial-test" },
    },
  },
}
