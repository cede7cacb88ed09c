-- put-states: replaces the linker states of stored events or stories (consolidation's
-- examination marks); one no longer stored is skipped. Fenced like the commits.
-- KEYS[1]  the partition's counts hash (routes the call)
-- ARGV[1]  the partition prefix
-- ARGV[2]  JSON {fence, kind: 'event' or 'story', ids: [id, ...]}
-- ARGV[3+] the states (binary), in the order of ids
-- returns  the number of states written
local P = ARGV[1]
local body = cjson.decode(ARGV[2])
check_fence(P, body.fence)
local written = 0
for i, id in ipairs(body.ids) do
  local ek = P .. ':' .. body.kind .. ':' .. id
  if redis.call('EXISTS', ek) == 1 then
    redis.call('HSET', ek, 'state', ARGV[2 + i])
    written = written + 1
  end
end
return written
