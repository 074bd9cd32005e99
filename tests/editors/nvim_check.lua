-- Headless Neovim client for regvet's language server (tests/test_editors.py runs it).
--   nvim --headless -u NONE -c "luafile tests/editors/nvim_check.lua"   (0.7 has no -l)
-- Environment: REGVET_SERVER_CMD (JSON list), REGVET_FILE (the script to open),
-- REGVET_OUT (report file), REGVET_SETTINGS (JSON object for the `regvet` section),
-- REGVET_NVIM_CONFIG (optional: a dir holding lsp/regvet.lua, for Neovim 0.11+).
-- Neovim 0.7 (Debian 12) has no vim.lsp.start / vim.lsp.config and never pulls
-- diagnostics: start_client + buf_attach_client, and the server pushes. With
-- REGVET_NVIM_CONFIG on 0.11+, the shipped lsp/regvet.lua is used and Neovim pulls.
local out = assert(io.open(assert(os.getenv("REGVET_OUT")), "w"))
local function say(...)
  out:write(table.concat({ ... }, " "), "\n")
  out:flush()
end

local function finish(code)
  out:close()
  vim.cmd(code == 0 and "qa!" or "cq!")
end

local ok, err = pcall(function()
  vim.lsp.set_log_level("debug")
  local cmd = vim.fn.json_decode(assert(os.getenv("REGVET_SERVER_CMD")))
  local settings = vim.fn.json_decode(os.getenv("REGVET_SETTINGS") or "{}")
  vim.cmd("edit " .. vim.fn.fnameescape(assert(os.getenv("REGVET_FILE"))))
  local bufnr = vim.api.nvim_get_current_buf()

  local shipped = os.getenv("REGVET_NVIM_CONFIG")
  local id
  if shipped and shipped ~= "" then
    assert(vim.lsp.config, "REGVET_NVIM_CONFIG needs Neovim 0.11+")
    vim.opt.runtimepath:prepend(shipped)                 -- finds lsp/regvet.lua
    vim.lsp.config("regvet", { cmd = cmd, settings = { regvet = settings } }) -- merged over the file
    vim.lsp.enable("regvet")
    vim.bo.filetype = "python"                           -- FileType starts the client
    vim.wait(10000, function() return #vim.lsp.get_clients({ bufnr = bufnr }) > 0 end, 50)
    local c = vim.lsp.get_clients({ bufnr = bufnr })[1]
    id = c and c.id
    say("pull", tostring(c ~= nil and c.server_capabilities.diagnosticProvider ~= nil))
  else
    vim.bo.filetype = "python" -- -u NONE: no filetype detection
    local conf = {
      name = "regvet",
      cmd = cmd,
      root_dir = vim.fn.fnamemodify(vim.api.nvim_buf_get_name(bufnr), ":h"),
      settings = { regvet = settings }, -- answers workspace/configuration (section "regvet")
      flags = { debounce_text_changes = 50 },
      on_init = function(client) -- 0.7 never pulls settings itself: push them once
        local params = { settings = client.config.settings }
        if vim.fn.has("nvim-0.11") == 1 then
          client:notify("workspace/didChangeConfiguration", params)
        else
          client.notify("workspace/didChangeConfiguration", params)
        end
      end,
    }
    if vim.fn.has("nvim-0.10") == 1 then -- start_client is deprecated there
      id = vim.lsp.start(conf, { bufnr = bufnr })
    else
      id = vim.lsp.start_client(conf)
      vim.lsp.buf_attach_client(bufnr, id)
    end
  end
  say("client", tostring(id))
  assert(id, "no regvet client attached")

  local function dump(label)
    local diags = vim.diagnostic.get(bufnr)
    table.sort(diags, function(a, b)
      return a.lnum < b.lnum or (a.lnum == b.lnum and tostring(a.code) < tostring(b.code))
    end)
    say(label, tostring(#diags))
    for _, d in ipairs(diags) do
      say("DIAG", string.format("%d:%d", d.lnum + 1, d.col + 1), vim.diagnostic.severity[d.severity],
        tostring(d.source), tostring(d.code))
    end
  end

  local timeout = tonumber(os.getenv("REGVET_WAIT_MS") or "30000")
  local expect = tonumber(os.getenv("REGVET_EXPECT") or "1")
  local got = vim.wait(timeout, function() return #vim.diagnostic.get(bufnr) >= expect end, 50)
  say("opened", tostring(got))
  dump("before")

  -- Add the two checks the findings ask for; every set_lines sends a didChange.
  vim.api.nvim_buf_set_lines(bufnr, 1, 1, false,
    { "from statsmodels.stats.diagnostic import het_breuschpagan, linear_reset" })
  vim.api.nvim_buf_set_lines(bufnr, -1, -1, false,
    { "linear_reset(res, power=3, use_f=True)", "het_breuschpagan(res.resid, res.model.exog)" })
  local cleared = vim.wait(timeout, function() return #vim.diagnostic.get(bufnr) == 0 end, 50)
  vim.wait(1000, function() return false end, 50) -- a late stale publish would show up here
  say("cleared", tostring(cleared))
  dump("after")

  local client = vim.lsp.get_client_by_id(id)
  local method = vim.fn.has("nvim-0.11") == 1 -- client:stop() from 0.11, client.stop() before
  local function stopped() if method then return client:is_stopped() end return client.is_stopped() end
  say("alive", tostring(client ~= nil and not stopped()))
  if client then
    if method then client:stop() else client.stop() end
    vim.wait(3000, stopped, 50)
  end
end)
if not ok then
  say("LUA-ERROR", tostring(err))
  finish(1)
else
  finish(0)
end
