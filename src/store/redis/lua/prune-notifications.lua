-- prune-notifications: deletes delivery records settled before a time, and each
-- notification none of whose deliveries is left, with its entries in the erasure indexes
-- and the notification log; and the notifications no subscriber asked for created before
-- that time (fan-out takes a message out of that set when it queues its first delivery).
-- KEYS[1]  the partition's sorted set of settled deliveries (score: when each settled, ms)
-- ARGV[1]  the partition prefix
-- ARGV[2]  the time, ms: deliveries settled before it go
-- ARGV[3]  at most this many deliveries per call (the caller repeats until fewer come back)
-- returns  {deliveries removed, notifications removed, unsubscribed notifications looked at}
local P, before, limit = ARGV[1], ARGV[2], tonumber(ARGV[3])
local dks = redis.call('ZRANGEBYSCORE', KEYS[1], '-inf', '(' .. before, 'LIMIT', 0, limit)
local seen, mids = {}, {}
for _, dk in ipairs(dks) do
  redis.call('HDEL', P .. ':deliveries', dk)
  redis.call('ZREM', KEYS[1], dk)
  redis.call('ZREM', P .. ':dead', dk)
  local cut = string.find(dk, '\n', 1, true)
  local mid = string.sub(dk, 1, cut - 1)
  redis.call('ZREM', P .. ':subscription-deliveries:' .. string.sub(dk, cut + 1), dk)
  if not seen[mid] then
    seen[mid] = true
    table.insert(mids, mid)
  end
end

-- The index sets naming a message: its article's, its events' and, for an event since
-- merged away, the survivor's (a merge unions the sets).
local function unindex(mid, body)
  local ok, msg = pcall(cjson.decode, body)
  if not ok or type(msg) ~= 'table' or type(msg.data) ~= 'table' then return end
  for _, part in pairs(msg.data) do
    if type(part) == 'table' then
      if type(part.article) == 'string' then redis.call('SREM', P .. ':article-messages:' .. part.article, mid) end
      if type(part.id) == 'string' and string.sub(part.id, 1, 3) == 'ev_' then
        redis.call('SREM', P .. ':event-messages:' .. part.id, mid)
        local rec = redis.call('HGET', P .. ':merges', part.id)
        if rec then redis.call('SREM', P .. ':event-messages:' .. string.sub(rec, 1, string.find(rec, '\n', 1, true) - 1), mid) end
      end
    end
  end
end

local removed = 0
for _, mid in ipairs(mids) do
  local mk = P .. ':outbox:' .. mid
  local left = false
  -- Messages queued before the subscriber list was kept with them go with their first
  -- pruned delivery (their other deliveries settled long before, retries being bounded).
  local subs = redis.call('HGET', mk, 'subscribers')
  if subs then
    for _, sub in ipairs(cjson.decode(subs)) do
      if redis.call('HEXISTS', P .. ':deliveries', mid .. '\n' .. sub) == 1 then
        left = true
        break
      end
    end
  end
  if not left then
    local body = redis.call('HGET', mk, 'body')
    if body then unindex(mid, body) end
    redis.call('ZREM', P .. ':outbox-log', mid)
    removed = removed + redis.call('DEL', mk)
  end
end

local unsubscribed = redis.call('ZRANGEBYSCORE', P .. ':outbox-unsubscribed', '-inf', '(' .. before, 'LIMIT', 0, limit)
for _, mid in ipairs(unsubscribed) do
  local mk = P .. ':outbox:' .. mid
  local body = redis.call('HGET', mk, 'body')
  if body then unindex(mid, body) end
  redis.call('ZREM', P .. ':outbox-log', mid)
  redis.call('ZREM', P .. ':outbox-unsubscribed', mid)
  removed = removed + redis.call('DEL', mk)
end
return { #dks, removed, #unsubscribed }
