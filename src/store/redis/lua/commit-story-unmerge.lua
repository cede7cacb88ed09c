-- commit-story-unmerge: the undo of an analyst's story merge, atomically. The absorbed
-- story comes back with its articles and events, the stories merged into it before point
-- at it again, both stories take their earlier states, and the undo is recorded.
-- KEYS[1]  the partition's counts hash
-- ARGV[1]  the partition prefix
-- ARGV[2]  JSON {fence, from: story, into: story (as in commit-story-merge), articles, events, earlier, id, undoes, messages}
-- ARGV[3]  the undo's record, JSON
-- ARGV[4]  the absorbed story's state (binary)
-- ARGV[5]  the surviving story's state (binary)
-- returns  1
local P = ARGV[1]
local counts = KEYS[1]
local u = cjson.decode(ARGV[2])
check_fence(P, u.fence)
local from, into = u.from.id, u.into.id
redis.call('HDEL', P .. ':story-merges', from)
redis.call('SREM', P .. ':story-merged-into:' .. into, from)
local fa, ia = P .. ':story-articles:' .. from, P .. ':story-articles:' .. into
for _, a in ipairs(u.articles) do
  local score = redis.call('ZSCORE', ia, a)
  if score then
    redis.call('ZREM', ia, a)
    redis.call('ZADD', fa, score, a)
  end
end
local fe, ie = P .. ':story-events:' .. from, P .. ':story-events:' .. into
for _, e in ipairs(u.events) do
  redis.call('SREM', ie, e)
  redis.call('SADD', fe, e)
end
for _, x in ipairs(u.earlier) do
  local rec = redis.call('HGET', P .. ':story-merges', x)
  if rec then
    redis.call('HSET', P .. ':story-merges', x, from .. string.sub(rec, string.find(rec, '\n', 1, true)))
  end
  redis.call('SREM', P .. ':story-merged-into:' .. into, x)
  redis.call('SADD', P .. ':story-merged-into:' .. from, x)
end
put_story(P, counts, u.from, ARGV[4])
put_story(P, counts, u.into, ARGV[5])
keep_correction(P, u.id, ARGV[3], u.undoes)
queue_messages(P, u.messages)
return 1
