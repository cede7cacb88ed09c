-- lease-renew: extends the partition's linker lease if this linker still holds it.
-- KEYS[1]  the lease key ({strandline:<partition>}:linker-lease)
-- ARGV[1]  the holder's token
-- ARGV[2]  the new lease length, ms
-- returns  1 when renewed, 0 when another linker holds it (or nobody)
if redis.call('GET', KEYS[1]) == ARGV[1] then
  return redis.call('PEXPIRE', KEYS[1], ARGV[2])
end
return 0
