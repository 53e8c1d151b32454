-- qpoint's language server in Neovim (0.7 or later), with no plugin needed.
--
-- Install the server once (it needs Node.js 20 or later):
--   npm install -g <path to a qpoint checkout or its packed .tgz>   -- puts qpoint-language-server on PATH
-- or point g:qpoint_server_cmd at the built server of a checkout:
--   vim.g.qpoint_server_cmd = { 'node', '/path/to/qpoint/dist/server.js', '--stdio' }
-- Then load this file from your init.lua, e.g. copy it to ~/.config/nvim/lua/qpoint.lua and add
--   require('qpoint')
--
-- What you get on a netlist (.cir .sp .spi .ckt, and .net files whose first cards read as a SPICE
-- netlist): diagnostics, hover (K), completion (<C-x><C-o>), go to definition, references, rename,
-- and code actions (<leader>ca) including "Size R… for a target current…", which asks for the
-- current in a numbered list and writes the value. :QpointSize 250u sizes the resistor under the
-- cursor for 250 µA without asking for the current. The settings are those of the README's table,
-- without the "qpoint." prefix (docs/PROTOCOL.md describes how they reach the server).

local settings = vim.g.qpoint_settings or {
  -- Examples; leave the table empty to use the defaults.
  resistorSeries = 'E24',
  inlayHints = { detail = 'terse' },
}

local cmd = vim.g.qpoint_server_cmd or { 'qpoint-language-server', '--stdio' }
local netlist_patterns = { '*.cir', '*.sp', '*.spi', '*.ckt', '*.net' }

-- A .net file is also what PCB tools write; claim it only when its first cards read as a SPICE
-- netlist, by the rule the VS Code extension uses (client/src/net-sniff.ts): the first line is the
-- title (unless it opens with ( < { [ or %), then, skipping blank lines and * or ; comments, the
-- first lines are dot cards or element cards with as many fields as their letter needs.
local min_fields = { R = 3, C = 3, L = 3, V = 2, I = 2, B = 3, K = 3, D = 3, X = 2, E = 5, G = 5, F = 4, H = 4, Q = 4, J = 4, Z = 4, W = 4, M = 5, S = 5 }
local function is_card(line)
  if line:match('^%s*%.%a') then return true end
  local fields = vim.split(vim.trim(line), '[%s,]+')
  local name = fields[1] or ''
  if not name:match('^%a[^%s=(){}]*$') then return false end
  local least = min_fields[name:sub(1, 1):upper()]
  return least ~= nil and #fields - 1 >= least
end
local function reads_as_spice(bufnr)
  local lines = vim.api.nvim_buf_get_lines(bufnr, 0, 60, false)
  if (lines[1] or ''):match('^%s*[%(<{%[%%]') then return false end
  local cards = 0
  for i = 2, #lines do
    local l = lines[i]
    if not (l:match('^%s*$') or l:match('^%s*[%*;]')) then
      if l:match('^%s*%+') then
        if cards == 0 then return false end
      elseif is_card(l) then
        cards = cards + 1
        if cards >= 3 then return true end
      else
        return false
      end
    end
  end
  return cards > 0
end

local client_id -- Neovim 0.7 has no vim.lsp.start: one client is started and attached to every netlist buffer.

local function start(bufnr)
  local config = {
    name = 'qpoint',
    cmd = cmd,
    root_dir = vim.fn.getcwd(),
    -- The same section reaches the server at start, when it asks (workspace/configuration), and
    -- when Neovim pushes it (workspace/didChangeConfiguration).
    init_options = { qpoint = settings },
    settings = { qpoint = settings },
    on_init = function(client)
      client.notify('workspace/didChangeConfiguration', { settings = client.config.settings })
    end,
  }
  if vim.lsp.start then
    vim.lsp.start(config, { bufnr = bufnr })
  else
    if not client_id or not vim.lsp.get_client_by_id(client_id) then client_id = vim.lsp.start_client(config) end
    if client_id then vim.lsp.buf_attach_client(bufnr, client_id) end
  end
  vim.bo[bufnr].omnifunc = 'v:lua.vim.lsp.omnifunc'
  local map = function(lhs, rhs) vim.api.nvim_buf_set_keymap(bufnr, 'n', lhs, rhs, { noremap = true, silent = true }) end
  map('K', '<cmd>lua vim.lsp.buf.hover()<CR>')
  map('gd', '<cmd>lua vim.lsp.buf.definition()<CR>')
  map('gr', '<cmd>lua vim.lsp.buf.references()<CR>')
  map('<leader>ca', '<cmd>lua vim.lsp.buf.code_action()<CR>')
  map('<leader>rn', '<cmd>lua vim.lsp.buf.rename()<CR>')
end

local group = vim.api.nvim_create_augroup('qpoint', { clear = true })
vim.api.nvim_create_autocmd({ 'BufRead', 'BufNewFile' }, {
  group = group,
  pattern = netlist_patterns,
  callback = function(args)
    if args.file:lower():match('%.net$') and not reads_as_spice(args.buf) then return end
    vim.bo[args.buf].filetype = 'spice'
    start(args.buf)
  end,
})

-- :QpointSize 250u — size the resistor on the cursor line for a target current (the server asks which standard value).
vim.api.nvim_create_user_command('QpointSize', function(opts)
  local line = vim.api.nvim_get_current_line()
  local name = line:match('^%s*([Rr][^%s]*)')
  if not name then
    vim.notify('Put the cursor on a resistor card (its name starts with R).', vim.log.levels.WARN)
    return
  end
  vim.lsp.buf.execute_command({
    command = 'qpoint.server.sizeResistor',
    arguments = { { uri = vim.uri_from_bufnr(0), resistor = name, target = opts.args } },
  })
end, { nargs = 1 })
