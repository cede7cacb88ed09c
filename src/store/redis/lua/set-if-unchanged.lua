-- set-if-unchanged: writes a hash field only if it still holds what the caller read
-- (compare and set, for read-modify-write updates from several processes).
-- KEYS[1]  the hash
-- ARGV[1]  the field
-- ARGV[2]  the value the caller read
-- ARGV[3]  the new value
-- returns  1 written; 0 the field changed meanwhile (read again); -1 the field is gone
local cur = redis.call('HGET', KEYS[1], ARGV[1])
if not cur then return -1 end
if cur ~= ARGV[2] then return 0 end
redis.call('HSET', KEYS[1], ARGV[1], ARGV[3])
return 1
