-- settle-consolidation: clears the consolidation pass owed once a pass at that stored-article
-- count or later has completed. Fenced like the commits.
-- KEYS[1]  the partition's counts hash (routes the call)
-- ARGV[1]  the partition prefix
-- ARGV[2]  JSON {fence, articles: the count the completed pass ran at}
-- returns  1 when a pass owed was settled, else 0
local P = ARGV[1]
local body = cjson.decode(ARGV[2])
check_fence(P, body.fence)
local key = P .. ':consolidation-owed'
local owed = tonumber(redis.call('GET', key))
if owed ~= nil and owed <= body.articles then
  redis.call('DEL', key)
  return 1
end
return 0
