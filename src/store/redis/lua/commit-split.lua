-- commit-split: one consolidation split, atomically. The moved sentences' links leave the
-- old event for the new one, both events' states are written, and the split is recorded.
-- KEYS[1]  the partition's counts hash
-- ARGV[1]  the partition prefix
-- ARGV[2]  JSON {fence, from: event, into: event (as in commit-articles), moved: [[article, index]], split: "{from, mentions, score, at}"}
-- ARGV[3]  the old event's state (binary)
-- ARGV[4]  the new event's state (binary)
-- ARGV[5]  the placeholder label (for an event left with no sentence text)
-- returns  the number of links moved
local P = ARGV[1]
local counts = KEYS[1]
local s = cjson.decode(ARGV[2])
check_fence(P, s.fence)
local from, into = s.from.id, s.into.id
local moved = 0
local movedTexts = {}
for _, m in ipairs(s.moved) do
  local article, idx = m[1], m[2]
  local t = redis.call('HGET', P .. ':sentence-text:' .. article, idx)
  if t then table.insert(movedTexts, t) end
  local lk = P .. ':links:' .. article
  local link = redis.call('HGET', lk, idx .. '\n' .. from)
  if link then
    local member = article .. '\n' .. idx
    redis.call('HDEL', lk, idx .. '\n' .. from)
    redis.call('HSET', lk, idx .. '\n' .. into, link)
    redis.call('SREM', P .. ':event-links:' .. from, member)
    redis.call('SADD', P .. ':event-links:' .. into, member)
    moved = moved + 1
  end
end
put_event(P, counts, s.from, ARGV[3])
put_event(P, counts, s.into, ARGV[4])
-- A label drawn from a sentence that moved goes with it: the event left behind takes its
-- earliest remaining sentence.
local fk = P .. ':event:' .. from
local label = redis.call('HGET', fk, 'label')
if label and drawn_from(label, movedTexts) then
  redis.call('HSET', fk, 'label', earliest_text(P, from) or ARGV[5])
end
redis.call('HSET', P .. ':splits', into, s.split)
redis.call('SADD', P .. ':split-off:' .. from, into)
queue_messages(P, s.messages)
return moved
