-- commit-story-split: one consolidation split of a story, atomically. The moved articles
-- leave the story for the new one, the events first reported in them follow (new records
-- and states), both stories are written and the split is recorded.
-- KEYS[1]  the partition's counts hash
-- ARGV[1]  the partition prefix
-- ARGV[2]  JSON {fence, from: story, into: story, moved: [article id, ...], events: [event, ...],
--          split: JSON {from, articles, score, at}, messages, correction, correctionRecord};
--          an analyst's split carries its correction's id and record; stories and events as put_story
--          and put_event take them, their states numbered as below
-- ARGV[3+] the states (binary): from's, into's, then each event's
-- returns  1
local P = ARGV[1]
local counts = KEYS[1]
local m = cjson.decode(ARGV[2])
check_fence(P, m.fence)
local from, into = m.from.id, m.into.id
local fa, ia = P .. ':story-articles:' .. from, P .. ':story-articles:' .. into
for _, id in ipairs(m.moved) do
  local at = redis.call('ZSCORE', fa, id)
  if at then
    redis.call('ZREM', fa, id)
    redis.call('ZADD', ia, at, id)
    redis.call('HSET', P .. ':article:' .. id, 'story', into)
  end
end
put_story(P, counts, m.from, ARGV[2 + m.from.state])
put_story(P, counts, m.into, ARGV[2 + m.into.state])
local fe, ie = P .. ':story-events:' .. from, P .. ':story-events:' .. into
for _, e in ipairs(m.events) do
  put_event(P, counts, e, ARGV[2 + e.state])
  redis.call('SREM', fe, e.id)
  redis.call('SADD', ie, e.id)
end
redis.call('HSET', P .. ':story-splits', into, m.split)
redis.call('SADD', P .. ':story-splits-of:' .. from, into)
if m.correction ~= nil and m.correction ~= cjson.null then keep_correction(P, m.correction, m.correctionRecord, cjson.null) end
queue_messages(P, m.messages)
return 1
