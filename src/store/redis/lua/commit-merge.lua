-- commit-merge: one consolidation merge, atomically. The absorbed event's links move to
-- the surviving one (a sentence linked to both keeps the better-scoring link), the absorbed
-- event leaves, earlier merges into it now point at the survivor, and the merge is recorded.
-- KEYS[1]  the partition's counts hash
-- ARGV[1]  the partition prefix
-- ARGV[2]  JSON {fence, from, into: event (as in commit-articles), merge: "into\nscore\nat", messages}
-- ARGV[3]  the surviving event's state (binary)
-- returns  the number of links dropped because the sentence was linked to both events
local P = ARGV[1]
local counts = KEYS[1]
local m = cjson.decode(ARGV[2])
check_fence(P, m.fence)
local from, into = m.from, m.into.id
local dropped = 0
for _, member in ipairs(redis.call('SMEMBERS', P .. ':event-links:' .. from)) do
  local nl = string.find(member, '\n', 1, true)
  local article, idx = string.sub(member, 1, nl - 1), string.sub(member, nl + 1)
  local lk = P .. ':links:' .. article
  local fromLink = redis.call('HGET', lk, idx .. '\n' .. from)
  local intoLink = redis.call('HGET', lk, idx .. '\n' .. into)
  redis.call('HDEL', lk, idx .. '\n' .. from)
  if fromLink then
    if intoLink and cjson.decode(intoLink).score >= cjson.decode(fromLink).score then
      dropped = dropped + 1
    else
      if intoLink then dropped = dropped + 1 end
      redis.call('HSET', lk, idx .. '\n' .. into, fromLink)
      redis.call('SADD', P .. ':event-links:' .. into, member)
    end
  end
end
redis.call('DEL', P .. ':event-links:' .. from)
-- The absorbed event's notifications follow it, so that erasing text still finds them.
local fromMessages = P .. ':event-messages:' .. from
if redis.call('EXISTS', fromMessages) == 1 then
  local intoMessages = P .. ':event-messages:' .. into
  redis.call('SUNIONSTORE', intoMessages, intoMessages, fromMessages)
  redis.call('DEL', fromMessages)
end
leave_story(P, from)
if redis.call('DEL', P .. ':event:' .. from) == 1 then redis.call('HINCRBY', counts, 'events', -1) end
redis.call('ZREM', P .. ':events', from)
put_event(P, counts, m.into, ARGV[3])
for _, earlier in ipairs(redis.call('SMEMBERS', P .. ':merged-into:' .. from)) do
  local rec = redis.call('HGET', P .. ':merges', earlier)
  redis.call('HSET', P .. ':merges', earlier, into .. string.sub(rec, string.find(rec, '\n', 1, true)))
  redis.call('SADD', P .. ':merged-into:' .. into, earlier)
end
redis.call('DEL', P .. ':merged-into:' .. from)
redis.call('HSET', P .. ':merges', from, m.merge)
redis.call('SADD', P .. ':merged-into:' .. into, from)
if dropped > 0 then redis.call('HINCRBY', counts, 'links', 0 - dropped) end
queue_messages(P, m.messages)
return dropped
