-- put-subscription: adds a subscription, or replaces one keeping its place in the log.
-- KEYS[1]  the partition's subscriptions hash
-- ARGV[1]  the partition prefix
-- ARGV[2]  the name
-- ARGV[3]  the subscription, JSON
-- ARGV[4]  the log number a new one starts from
-- ARGV[5]  when it was made, ms (its place in the list)
-- ARGV[6]  '1' to refuse a name already taken, '0' to replace it
-- returns  1, or 0 when refused
local P, name = ARGV[1], ARGV[2]
if ARGV[6] == '1' and redis.call('HEXISTS', KEYS[1], name) == 1 then return 0 end
redis.call('HSET', KEYS[1], name, ARGV[3])
redis.call('HSETNX', P .. ':subscription-cursors', name, ARGV[4])
redis.call('ZADD', P .. ':subscription-order', 'NX', ARGV[5], name)
return 1
