-- commit-correction: one analyst's correction (or its undo), atomically. Every link of the
-- touched sentences is replaced by the given ones, events are removed or written (label as
-- given), and the record is kept; an undo marks the correction it undid.
-- KEYS[1]  the partition's counts hash
-- ARGV[1]  the partition prefix
-- ARGV[2]  JSON {fence, sentences: [[article, index]], links: [[article, index, event, link JSON]],
--          removed: [event], events: [event (as in commit-articles)], id, undoes, messages}
-- ARGV[3]  the record, JSON
-- ARGV[4.. ] the events' states (binary), referred to by number
local P = ARGV[1]
local counts = KEYS[1]
local c = cjson.decode(ARGV[2])
check_fence(P, c.fence)
local delta = 0
for _, s in ipairs(c.sentences) do
  local article, idx = s[1], tostring(s[2])
  local lk = P .. ':links:' .. article
  local prefix = idx .. '\n'
  for _, field in ipairs(redis.call('HKEYS', lk)) do
    if string.sub(field, 1, #prefix) == prefix then
      redis.call('HDEL', lk, field)
      redis.call('SREM', P .. ':event-links:' .. string.sub(field, #prefix + 1), article .. '\n' .. idx)
      delta = delta - 1
    end
  end
end
for _, l in ipairs(c.links) do
  local article, idx, ev = l[1], tostring(l[2]), l[3]
  redis.call('HSET', P .. ':links:' .. article, idx .. '\n' .. ev, l[4])
  redis.call('SADD', P .. ':event-links:' .. ev, article .. '\n' .. idx)
  delta = delta + 1
end
if delta ~= 0 then redis.call('HINCRBY', counts, 'links', delta) end
for _, id in ipairs(c.removed) do
  leave_story(P, id)
  if redis.call('DEL', P .. ':event:' .. id) == 1 then redis.call('HINCRBY', counts, 'events', -1) end
  redis.call('ZREM', P .. ':events', id)
  redis.call('DEL', P .. ':event-links:' .. id)
end
for _, e in ipairs(c.events) do
  put_event(P, counts, e, ARGV[3 + e.state])
  redis.call('HSET', P .. ':event:' .. e.id, 'label', e.label)
end
keep_correction(P, c.id, ARGV[3], c.undoes)
queue_messages(P, c.messages)
return delta
