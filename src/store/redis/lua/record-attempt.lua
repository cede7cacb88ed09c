-- record-attempt: records the outcome of one delivery attempt, keeping what the delivery
-- was queued with (its rule), and moves it between the due, dead and settled sets.
-- KEYS[1]  the partition's deliveries hash
-- ARGV[1]  the partition prefix
-- ARGV[2]  the delivery (`<message>\n<subscriber>`)
-- ARGV[3]  the outcome, JSON {status, attempts, nextAt, lastError, latencyMs}
-- ARGV[4]  nextAt in ms (the score in the due, dead and settled sets)
-- returns  1, or 0 when the delivery is no longer stored (pruned meanwhile)
local P, dk, at = ARGV[1], ARGV[2], ARGV[4]
local old = redis.call('HGET', KEYS[1], dk)
if not old then return 0 end
local state = cjson.decode(old)
local o = cjson.decode(ARGV[3])
for key, value in pairs(o) do state[key] = value end
redis.call('HSET', KEYS[1], dk, cjson.encode(state))
if o.status == 'pending' then
  redis.call('ZADD', P .. ':due', at, dk)
else
  redis.call('ZREM', P .. ':due', dk)
  redis.call('ZADD', P .. ':settled', at, dk)
end
if o.status == 'dead' then redis.call('ZADD', P .. ':dead', at, dk) end
return 1
