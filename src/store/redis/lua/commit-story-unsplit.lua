-- commit-story-unsplit: the undo of an analyst's story split, atomically. The moved
-- articles and events go back to the story they left, the new story leaves with its split
-- record, the story and events take their earlier states, and the undo is recorded.
-- KEYS[1]  the partition's counts hash
-- ARGV[1]  the partition prefix
-- ARGV[2]  JSON {fence, from: story, into: story id, moved: [article id], events: [event], id, undoes, messages}
-- ARGV[3]  the undo's record, JSON
-- ARGV[4+] the states (binary): the story's, then each event's
-- returns  1
local P = ARGV[1]
local counts = KEYS[1]
local u = cjson.decode(ARGV[2])
check_fence(P, u.fence)
local from, into = u.from.id, u.into
local fa, ia = P .. ':story-articles:' .. from, P .. ':story-articles:' .. into
for _, id in ipairs(u.moved) do
  local at = redis.call('ZSCORE', ia, id)
  if at then
    redis.call('ZREM', ia, id)
    redis.call('ZADD', fa, at, id)
    redis.call('HSET', P .. ':article:' .. id, 'story', from)
  end
end
local fe, ie = P .. ':story-events:' .. from, P .. ':story-events:' .. into
for _, e in ipairs(u.events) do
  put_event(P, counts, e, ARGV[3 + e.state])
  redis.call('SREM', ie, e.id)
  redis.call('SADD', fe, e.id)
end
if redis.call('DEL', P .. ':story:' .. into) == 1 then redis.call('HINCRBY', counts, 'stories', -1) end
redis.call('ZREM', P .. ':stories', into)
redis.call('DEL', ia, ie)
redis.call('HDEL', P .. ':story-splits', into)
redis.call('SREM', P .. ':story-splits-of:' .. from, into)
put_story(P, counts, u.from, ARGV[3 + u.from.state])
keep_correction(P, u.id, ARGV[3], u.undoes)
queue_messages(P, u.messages)
return 1
