/**
 * Lua source run once in the script VM of the in-memory Redis, after the JavaScript libraries
 * (`redis.call`, `cjson`, `cmsgpack`) are installed. It makes Lua 5.4 look like the Lua 5.1
 * environment Redis 7 gives scripts.
 *
 * Contract (each item checked against redis-server 7.0.15 in tests/unit/redis-fake/):
 * - Lua 5.1 names: `unpack`, `loadstring`, `gcinfo`, `table.getn`, `math.pow`, `math.mod`,
 *   `math.log10`, `math.ldexp`, `math.frexp`, `string.gfind`.
 * - Numbers print as Lua 5.1's doubles do through `tostring` ("%.14g": 7/7 is "1", 1e15 is
 *   "1e+15"), and `tonumber` returns integral values as integers so that `..` on them prints
 *   no ".0".
 * - `bit` (LuaBitOp semantics: 32-bit two's complement results) and `struct` (Roberto
 *   Ierusalimschy's struct library, with x86-64 sizes: l/L/T are 8 bytes).
 * - The globals of a Redis script and no others (no io, os, package, require, print, ...);
 *   `_G` is read-only ("Attempt to modify a readonly table") and reading an unknown global
 *   raises "Script attempted to access nonexistent global variable 'x'".
 * - `pcall` hands back the `err` string of Redis error tables, as Redis 7 does.
 * - `__redis__err__handler` turns any error into an error table with the script position.
 *
 * Not covered yet:
 * - `..` (concatenation) and `string.format("%s")` on a float still print Lua 5.4's ".0"
 *   (e.g. `(7/7) .. ""` is "1.0", Redis gives "1"); `..` on integers >= 1e14 prints every
 *   digit where Lua 5.1 prints "%.14g". BullMQ's scripts do neither.
 * - `string.format("%d", 1.5)` raises in Lua 5.4 where Lua 5.1 truncates; `table.insert`
 *   with an out-of-range position raises in Lua 5.4 only.
 * - Library tables (string, table, math, ...) can be modified, where Redis 7 makes them
 *   read-only too.
 */
export const PRELUDE = String.raw`
local rawpcall, rawtype, rawerror, rawget, rawtostring, rawtonumber = pcall, type, error, rawget, tostring, tonumber
local setmetatable, select, collectgarbage = setmetatable, select, collectgarbage
local mathtype, tointeger, floor, fmod, huge = math.type, math.tointeger, math.floor, math.fmod, math.huge
local format, byte, sub = string.format, string.byte, string.sub
local tpack, tunpack, spack, sunpack = table.pack, table.unpack, string.pack, string.unpack
local dbg = debug

---------------------------------------------------------------- Lua 5.1 names
unpack = tunpack
loadstring = load
gcinfo = function() return floor(collectgarbage("count")) end
table.getn = function(t) return #t end
math.pow = function(x, y) return x ^ y end
math.mod = fmod
math.log10 = function(x) return math.log(x, 10) end
math.ldexp = function(m, e) return m * 2.0 ^ e end
math.frexp = function(x)
  if x == 0 or x ~= x or x == huge or x == -huge then return x, 0 end
  local e = floor(math.log(math.abs(x), 2)) + 1
  local m = x / 2.0 ^ e
  if math.abs(m) >= 1 then m = m / 2; e = e + 1 end
  if math.abs(m) < 0.5 then m = m * 2; e = e - 1 end
  return m, e
end
string.gfind = string.gmatch

---------------------------------------------------------------- numbers print like Lua 5.1
tostring = function(v)
  if mathtype(v) then return format("%.14g", v) end
  return rawtostring(v)
end
tonumber = function(v, base)
  local n
  if base == nil then n = rawtonumber(v) else n = rawtonumber(v, base) end
  if mathtype(n) == "float" and n == floor(n) and n > -9007199254740992 and n < 9007199254740992 then
    return tointeger(n)
  end
  return n
end

---------------------------------------------------------------- bit (LuaBitOp)
local function tobit(x)
  local i = tointeger(x)
  if not i then
    if rawtype(x) ~= "number" then x = rawtonumber(x) end
    if x == nil then rawerror("bad argument to bit operation (number expected)", 3) end
    if x ~= x or x == huge or x == -huge then
      i = 0
    else
      -- LuaBitOp adds 2^52+2^51, i.e. rounds half to even, then keeps the low 32 bits.
      local r = floor(x)
      local d = x - r
      if d > 0.5 or (d == 0.5 and r % 2 == 1) then r = r + 1 end
      i = tointeger(fmod(r, 4294967296.0)) or 0
    end
  end
  i = i & 0xffffffff
  if i >= 0x80000000 then i = i - 0x100000000 end
  return i
end
local function u32(x) return tobit(x) & 0xffffffff end
local bitlib = {}
bitlib.tobit = tobit
bitlib.bnot = function(x) return tobit(~tobit(x)) end
bitlib.band = function(x, ...)
  local r = tobit(x)
  for i = 1, select("#", ...) do r = r & tobit((select(i, ...))) end
  return tobit(r)
end
bitlib.bor = function(x, ...)
  local r = tobit(x)
  for i = 1, select("#", ...) do r = r | tobit((select(i, ...))) end
  return tobit(r)
end
bitlib.bxor = function(x, ...)
  local r = tobit(x)
  for i = 1, select("#", ...) do r = r ~ tobit((select(i, ...))) end
  return tobit(r)
end
bitlib.lshift = function(x, n) return tobit(u32(x) << (u32(n) & 31)) end
bitlib.rshift = function(x, n) return tobit(u32(x) >> (u32(n) & 31)) end
bitlib.arshift = function(x, n)
  local v, s = tobit(x), u32(n) & 31
  if v >= 0 then return tobit(v >> s) end
  return tobit(~((~v) >> s))
end
bitlib.rol = function(x, n)
  local v, s = u32(x), u32(n) & 31
  return tobit((v << s) | (v >> (32 - s)))
end
bitlib.ror = function(x, n)
  local v, s = u32(x), u32(n) & 31
  return tobit((v >> s) | (v << (32 - s)))
end
bitlib.bswap = function(x)
  local v = u32(x)
  return tobit(((v & 0xff) << 24) | ((v & 0xff00) << 8) | ((v >> 8) & 0xff00) | (v >> 24))
end
bitlib.tohex = function(x, n)
  n = n == nil and 8 or tobit(n)
  local upper = false
  if n < 0 then n = -n; upper = true end
  if n > 8 then n = 8 end
  local v = u32(x)
  if n < 8 then v = v & ((1 << (4 * n)) - 1) end
  if n == 0 then return "" end
  return format(upper and ("%0" .. n .. "X") or ("%0" .. n .. "x"), v)
end
bit = bitlib

---------------------------------------------------------------- struct
-- One item of a struct format: returns the option, its size and the next position.
local function structItem(fmt, i)
  local c = sub(fmt, i, i)
  local j = i + 1
  local digits = fmt:match("^%d+", j)
  local n
  if digits then n = rawtonumber(digits); j = j + #digits end
  return c, n, j
end
local structSizes = { b = 1, B = 1, h = 2, H = 2, l = 8, L = 8, T = 8, f = 4, d = 8, x = 1 }
local function structSize(c, n)
  if c == "i" or c == "I" then return n or 4 end
  if c == "c" then return n or 1 end
  return structSizes[c]
end
local function alignPad(pos, size, maxalign)
  local a = size < maxalign and size or maxalign
  if a <= 1 then return 0 end
  if a & (a - 1) ~= 0 then rawerror("alignment must be power of 2", 3) end
  return (a - ((pos - 1) & (a - 1))) & (a - 1)
end
local function trunc(v)
  local n = rawtonumber(v)
  if n == nil then rawerror("bad argument to 'pack' (number expected)", 3) end
  if mathtype(n) == "float" then
    if n ~= n or n == huge or n == -huge then return 0 end
    n = n >= 0 and floor(n) or -floor(-n)
    n = tointeger(fmod(n, 18446744073709551616.0)) or 0
  end
  return n
end
local structlib = {}
structlib.pack = function(fmt, ...)
  local out, pos, arg, endian, maxalign = {}, 1, 1, "<", 1
  local i = 1
  while i <= #fmt do
    local c, n, j = structItem(fmt, i)
    i = j
    if c == "<" or c == ">" then endian = c
    elseif c == "=" then endian = "<"
    elseif c == "!" then maxalign = n or 8
    elseif c == " " then
    elseif c == "x" then out[#out + 1] = "\0"; pos = pos + 1
    elseif c == "s" then
      local s = select(arg, ...); arg = arg + 1
      out[#out + 1] = s .. "\0"; pos = pos + #s + 1
    elseif c == "c" then
      local s = select(arg, ...); arg = arg + 1
      local size = n or 1
      if size == 0 then size = #s end
      if #s < size then rawerror("bad argument to 'pack' (string too short)", 2) end
      out[#out + 1] = sub(s, 1, size); pos = pos + size
    else
      local size = structSize(c, n)
      if not size then rawerror("invalid format option '" .. c .. "'", 2) end
      local pad = alignPad(pos, size, maxalign)
      if pad > 0 then out[#out + 1] = string.rep("\0", pad); pos = pos + pad end
      local v = select(arg, ...); arg = arg + 1
      if c == "f" or c == "d" then
        out[#out + 1] = spack(endian .. c, rawtonumber(v))
      else
        local iv = trunc(v)
        if size < 8 then iv = iv & ((1 << (8 * size)) - 1) end
        out[#out + 1] = spack(endian .. "I" .. size, iv)
      end
      pos = pos + size
    end
  end
  return table.concat(out)
end
structlib.unpack = function(fmt, data, init)
  local res, pos, endian, maxalign = {}, init or 1, "<", 1
  local i = 1
  local last
  while i <= #fmt do
    local c, n, j = structItem(fmt, i)
    i = j
    if c == "<" or c == ">" then endian = c
    elseif c == "=" then endian = "<"
    elseif c == "!" then maxalign = n or 8
    elseif c == " " then
    elseif c == "x" then pos = pos + 1
    elseif c == "s" then
      local v, p = sunpack("z", data, pos)
      res[#res + 1] = v; last = v; pos = p
    elseif c == "c" then
      local size = n or 1
      if size == 0 then
        if rawtype(last) ~= "number" then rawerror("format 'c0' needs a previous size", 2) end
        size = last
      end
      if pos + size - 1 > #data then rawerror("data string too short", 2) end
      local v = sub(data, pos, pos + size - 1)
      res[#res + 1] = v; last = v; pos = pos + size
    else
      local size = structSize(c, n)
      if not size then rawerror("invalid format option '" .. c .. "'", 2) end
      pos = pos + alignPad(pos, size, maxalign)
      if pos + size - 1 > #data then rawerror("data string too short", 2) end
      local v
      if c == "f" or c == "d" then v = sunpack(endian .. c, data, pos)
      elseif c == "b" or c == "h" or c == "l" or c == "i" then v = sunpack(endian .. "i" .. size, data, pos)
      else v = sunpack(endian .. "I" .. size, data, pos) end
      res[#res + 1] = v; last = v; pos = pos + size
    end
  end
  res[#res + 1] = pos
  return tunpack(res, 1, #res)
end
structlib.size = function(fmt)
  local pos, maxalign = 1, 1
  local i = 1
  while i <= #fmt do
    local c, n, j = structItem(fmt, i)
    i = j
    if c == "!" then maxalign = n or 8
    elseif c == "<" or c == ">" or c == "=" or c == " " then
    elseif c == "s" or (c == "c" and n == 0) then rawerror("options 'c0' - 's' have undefined sizes", 2)
    else
      local size = structSize(c, n)
      if not size then rawerror("invalid format option '" .. c .. "'", 2) end
      if c ~= "c" and c ~= "x" then pos = pos + alignPad(pos, size, maxalign) end
      pos = pos + size
    end
  end
  return pos - 1
end
struct = structlib

---------------------------------------------------------------- errors
__redis__err__handler = function(err)
  local level = 2
  local info = dbg.getinfo(level, "Sl")
  while info and info.source ~= "@user_script" do
    level = level + 1
    info = dbg.getinfo(level, "Sl")
  end
  if rawtype(err) ~= "table" then
    err = { err = "ERR " .. rawtostring(err) }
  end
  if info then
    err.source = info.source
    err.line = info.currentline
  end
  return err
end

pcall = function(...)
  local r = tpack(rawpcall(...))
  if r[1] then return tunpack(r, 1, r.n) end
  local e = r[2]
  if rawtype(e) == "table" then
    local field = rawget(e, "err")
    local ft = rawtype(field)
    if ft == "string" or ft == "number" then e = field end
  end
  return false, e
end

---------------------------------------------------------------- the script environment
io, os, package, require, dofile, loadfile, print, utf8, warn, rawlen, debug = nil, nil, nil, nil, nil, nil, nil, nil, nil, nil, nil
setmetatable(_G, {
  __newindex = function(_, key)
    rawerror("Attempt to modify a readonly table", 2)
  end,
  __index = function(_, key)
    rawerror("Script attempted to access nonexistent global variable '" .. rawtostring(key) .. "'", 2)
  end,
  __metatable = false,
})
`;
