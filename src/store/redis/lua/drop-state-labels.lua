-- drop-state-labels: a data migration (migrate.ts). Linker states written before labels left
-- them carry the label, a copy of a sentence, in their JSON header (after a 4-byte
-- little-endian length): it is cut out, the rest kept byte for byte.
-- KEYS[1]  the partition's counts hash (routes the script to the partition's slot)
-- ARGV[1]  the partition prefix
-- ARGV[2..] event ids
-- returns  how many states were rewritten
local P = ARGV[1]
local rewritten = 0
for i = 2, #ARGV do
  local ek = P .. ':event:' .. ARGV[i]
  local st = redis.call('HGET', ek, 'state')
  if st then
    local hlen = struct.unpack('<I4', st)
    local header = string.sub(st, 5, 4 + hlen)
    local a, b = string.find(header, '"label":"', 1, true)
    if a then
      local rest = string.sub(header, json_string_end(header, b + 1) + 1)
      if string.sub(rest, 1, 1) == ',' then rest = string.sub(rest, 2) end
      local nh = string.sub(header, 1, a - 1) .. rest
      redis.call('HSET', ek, 'state', struct.pack('<I4', #nh) .. nh .. string.sub(st, 5 + hlen))
      rewritten = rewritten + 1
    end
  end
end
return rewritten
