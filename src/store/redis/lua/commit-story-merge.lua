-- commit-story-merge: one consolidation merge of two stories, atomically. The absorbed
-- story's articles and events move to the surviving one, the absorbed story leaves, earlier
-- merges into it now point at the survivor, and the merge is recorded.
-- KEYS[1]  the partition's counts hash
-- ARGV[1]  the partition prefix
-- ARGV[2]  JSON {fence, from, into: story {id, record, label, lastSeen, state}, merge: "into\nscore\nat", messages}
-- ARGV[3]  the surviving story's state (binary)
-- ARGV[4]  for an analyst's merge: its correction record, JSON (m.correction is its id)
-- returns  1
local P = ARGV[1]
local counts = KEYS[1]
local m = cjson.decode(ARGV[2])
check_fence(P, m.fence)
local from, into = m.from, m.into.id
local fa, ia = P .. ':story-articles:' .. from, P .. ':story-articles:' .. into
redis.call('ZUNIONSTORE', ia, 2, ia, fa)
redis.call('DEL', fa)
local fe, ie = P .. ':story-events:' .. from, P .. ':story-events:' .. into
redis.call('SUNIONSTORE', ie, ie, fe)
redis.call('DEL', fe)
if redis.call('DEL', P .. ':story:' .. from) == 1 then redis.call('HINCRBY', counts, 'stories', -1) end
redis.call('ZREM', P .. ':stories', from)
put_story(P, counts, m.into, ARGV[3])
-- Stories merged into the absorbed one now point at the survivor (one step to follow).
local earlier = P .. ':story-merged-into:' .. from
for _, x in ipairs(redis.call('SMEMBERS', earlier)) do
  local rec = redis.call('HGET', P .. ':story-merges', x)
  if rec then
    local nl = string.find(rec, '\n', 1, true)
    redis.call('HSET', P .. ':story-merges', x, into .. string.sub(rec, nl))
  end
  redis.call('SADD', P .. ':story-merged-into:' .. into, x)
end
redis.call('DEL', earlier)
redis.call('HSET', P .. ':story-merges', from, m.merge)
redis.call('SADD', P .. ':story-merged-into:' .. into, from)
if m.correction ~= nil and m.correction ~= cjson.null then keep_correction(P, m.correction, ARGV[4], cjson.null) end
queue_messages(P, m.messages)
return 1
