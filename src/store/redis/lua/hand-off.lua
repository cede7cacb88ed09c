-- hand-off: a worker's answer to one intake entry, atomically: the analysed article (or
-- the reason it was given up) goes on the analysed stream and the intake entry is
-- acknowledged. An entry answered already (a slow worker whose entry was claimed by
-- another) is only acknowledged, so every article reaches the linker exactly once.
-- KEYS[1]  the intake stream
-- ARGV[1]  the partition prefix
-- ARGV[2]  the intake entry id
-- ARGV[3]  'analysed' or 'dead'
-- ARGV[4]  the analysed record (JSON), or the article as received (dead)
-- ARGV[5]  for 'dead': the last error
-- returns  the analysed entry id, or '' when the entry had been answered already
local P, entry, kind, body = ARGV[1], ARGV[2], ARGV[3], ARGV[4]
local done = redis.call('HGET', P .. ':answered', entry)
if done then
  redis.call('XACK', KEYS[1], 'workers', entry)
  return ''
end
local id
if kind == 'dead' then
  redis.call('XADD', P .. ':dead-letters', '*', 'entry', entry, 'error', ARGV[5], 'article', body)
  id = redis.call('XADD', P .. ':analysed', '*', 'entry', entry, 'rejected', ARGV[5])
else
  id = redis.call('XADD', P .. ':analysed', '*', 'entry', entry, 'work', body)
end
redis.call('HSET', P .. ':answered', entry, id)
redis.call('XACK', KEYS[1], 'workers', entry)
return id
