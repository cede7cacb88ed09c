-- fan-out: queues one subscription's deliveries of the notifications its rules selected
-- and moves its place in the notification log, only while that place is still where the
-- caller read it (another pass may have done it first).
-- KEYS[1]  the partition's subscription places hash
-- ARGV[1]  the partition prefix
-- ARGV[2]  the subscription's name
-- ARGV[3]  its place as read (log number)
-- ARGV[4]  its new place
-- ARGV[5]  now, ms (when the deliveries are due)
-- ARGV[6]  now, RFC 3339
-- ARGV[7]  the deliveries, JSON [{id, rule}]
-- returns  1, or 0 when the place had moved or the subscription is gone
local P, name = ARGV[1], ARGV[2]
if redis.call('HEXISTS', P .. ':subscriptions', name) == 0 then return 0 end
if tonumber(redis.call('HGET', KEYS[1], name) or '0') ~= tonumber(ARGV[3]) then return 0 end
for _, d in ipairs(cjson.decode(ARGV[7])) do
  local mk = P .. ':outbox:' .. d.id
  local seq = redis.call('HGET', mk, 'seq')
  -- A notification pruned meanwhile is not delivered.
  if seq then
    local dk = d.id .. '\n' .. name
    local state = cjson.encode({ status = 'pending', attempts = 0, nextAt = ARGV[6], lastError = cjson.null, rule = d.rule, latencyMs = cjson.null })
    if redis.call('HSETNX', P .. ':deliveries', dk, state) == 1 then
      redis.call('ZADD', P .. ':due', ARGV[5], dk)
      redis.call('ZADD', P .. ':subscription-deliveries:' .. name, seq, dk)
      -- Pruning now waits for its deliveries to settle.
      local subs = cjson.decode(redis.call('HGET', mk, 'subscribers') or '[]')
      table.insert(subs, name)
      redis.call('HSET', mk, 'subscribers', cjson.encode(subs))
      redis.call('ZREM', P .. ':outbox-unsubscribed', d.id)
    end
  end
end
redis.call('HSET', KEYS[1], name, ARGV[4])
return 1
