-- Drives headless Neovim with docs/editors/neovim.lua loaded, as a person would use it: open a netlist, wait for
-- diagnostics, hover a transistor, pick the sizing code action, answer the server's questions, and see the edit land.
-- Reads QPOINT_NVIM_NETLIST, QPOINT_NVIM_OTHER (a .net file of another format) and writes QPOINT_NVIM_OUT (JSON).

local out = { asked = {}, told = {}, steps = {} }
local function step(s) table.insert(out.steps, s) end

local function finish(err)
  out.error = err
  local f = io.open(os.getenv('QPOINT_NVIM_OUT'), 'w')
  f:write(vim.fn.json_encode(out))
  f:close()
  vim.cmd('qa!')
end

-- The questions the server asks (window/showMessageRequest) are answered as a person would: 1 mA, then the first value.
vim.lsp.handlers['window/showMessageRequest'] = function(_, result)
  table.insert(out.asked, { message = result.message, actions = vim.tbl_map(function(a) return a.title end, result.actions or {}) })
  local want = #out.asked == 1 and '^1 mA$' or '.'
  for _, a in ipairs(result.actions or {}) do
    if a.title:match(want) then return a end
  end
  return vim.NIL
end
vim.lsp.handlers['window/showMessage'] = function(_, result) table.insert(out.told, result.message) end
-- The code-action menu: pick the sizing refactor.
vim.ui.select = function(items, _, on_choice)
  out.menu = {}
  local action_of = function(item) return item.action or item[2] end
  for _, item in ipairs(items) do table.insert(out.menu, action_of(item).title) end
  for i, item in ipairs(items) do
    if action_of(item).title:match('^Size R1 ') then return on_choice(item, i) end
  end
  on_choice(nil)
end

-- Neovim 0.7 (Debian's) names these differently from later releases; take whichever this one has.
local function clients_of(buf)
  if vim.lsp.get_clients then return vim.lsp.get_clients({ bufnr = buf }) end
  return vim.lsp.buf_get_clients(buf)
end

local function code_of(d)
  return d.code or (d.user_data and d.user_data.lsp and d.user_data.lsp.code)
end
local function diagnostics(buf)
  local list = {}
  for _, d in ipairs(vim.diagnostic.get(buf)) do
    table.insert(list, { line = d.lnum, code = code_of(d), severity = d.severity, message = d.message })
  end
  return list
end

local ok, err = pcall(function()
  vim.cmd('edit ' .. vim.fn.fnameescape(os.getenv('QPOINT_NVIM_NETLIST')))
  local buf = vim.api.nvim_get_current_buf()
  out.filetype = vim.bo[buf].filetype
  if not vim.wait(15000, function() return #clients_of(buf) > 0 end, 50) then error('no language client attached to the netlist') end
  step('attached')
  if not vim.wait(30000, function() return #vim.diagnostic.get(buf) > 0 end, 50) then error('no diagnostics within 30 s') end
  out.diagnostics = diagnostics(buf)
  step('diagnostics')

  -- Hover on Q2 (line 5).
  vim.api.nvim_win_set_cursor(0, { 5, 1 })
  local replies = vim.lsp.buf_request_sync(buf, 'textDocument/hover', vim.lsp.util.make_position_params(), 15000) or {}
  for _, r in pairs(replies) do
    if r.result and r.result.contents then out.hover = r.result.contents.value or vim.inspect(r.result.contents) end
  end
  step('hover')

  -- The sizing code action on R1 (line 3), through Neovim's own code-action path.
  local before = vim.api.nvim_buf_get_lines(buf, 2, 3, false)[1]
  vim.api.nvim_win_set_cursor(0, { 3, 0 })
  vim.lsp.buf.code_action()
  if not vim.wait(30000, function() return vim.api.nvim_buf_get_lines(buf, 2, 3, false)[1] ~= before end, 50) then error('the sizing action changed nothing on line 3') end
  out.after = vim.api.nvim_buf_get_lines(buf, 2, 3, false)[1]
  step('code action applied')
  -- The edit reaches the server as a change; its findings follow the new value.
  vim.wait(30000, function()
    for _, d in ipairs(vim.diagnostic.get(buf)) do
      if code_of(d) == 'target-missed' then return false end
    end
    return true
  end, 50)
  out.diagnosticsAfter = diagnostics(buf)
  step('diagnostics after')

  -- A .net file of another format is left alone.
  local other = os.getenv('QPOINT_NVIM_OTHER')
  if other then
    vim.cmd('edit ' .. vim.fn.fnameescape(other))
    local b2 = vim.api.nvim_get_current_buf()
    vim.wait(500, function() return false end, 50)
    out.other = { filetype = vim.bo[b2].filetype, clients = #clients_of(b2) }
    step('other .net')
  end
end)
finish(not ok and tostring(err) or nil)
