-- lease-release: gives the partition's linker lease up if this linker holds it.
-- KEYS[1]  the lease key
-- ARGV[1]  the holder's token
-- returns  1 when released, 0 when this linker did not hold it
if redis.call('GET', KEYS[1]) == ARGV[1] then
  return redis.call('DEL', KEYS[1])
end
return 0
