-- commit-articles: stores a group of articles with their sentences, mentions, links, event
-- states, document frequencies and outbox messages, all at once. An article already stored
-- is left exactly as it is, so replaying a commit changes nothing.
-- KEYS[1]  the partition's counts hash ({strandline:<partition>}:counts; routes the call)
-- ARGV[1]  the partition prefix, {strandline:<partition>} (key names as in keys.ts)
-- ARGV[2]  JSON {fence: the writer's lease token or null, commits: [...]}, built by redis-store.ts
-- ARGV[3+] event and story states (binary), numbered by the commits' events[].state and story.state
-- returns  one status per commit: 'stored' or 'already-stored'; an error
--          STRAND_LEASE_LOST (nothing written) when the fence token no longer holds the lease
local P = ARGV[1]
local body = cjson.decode(ARGV[2])
check_fence(P, body.fence)
local commits = body.commits
local counts = KEYS[1]
local out = {}
for i, c in ipairs(commits) do
  local ak = P .. ':article:' .. c.id
  if redis.call('EXISTS', ak) == 1 then
    out[i] = 'already-stored'
  else
    local seq = redis.call('INCR', P .. ':seq')
    redis.call('HSET', ak, 'meta', c.meta, 'seq', seq)
    if c.text ~= cjson.null then redis.call('HSET', ak, 'text', c.text) end
    if c.sketch ~= cjson.null then redis.call('HSET', ak, 'sketch', c.sketch) end
    if c.storyVector ~= cjson.null then redis.call('HSET', ak, 'story-vector', c.storyVector, 'story-names', c.storyNames) end
    redis.call('ZADD', P .. ':articles', seq, c.id)
    redis.call('ZADD', P .. ':articles-by-time', c.time, c.id)
    redis.call('HINCRBY', P .. ':outlets', c.outlet, 1)
    redis.call('SET', P .. ':content-hash:' .. c.contentHash, c.id, 'NX')
    if c.canonicalUrl ~= cjson.null then redis.call('SET', P .. ':article-url:' .. c.canonicalUrl, c.id, 'NX') end
    for _, s in ipairs(c.sentences) do
      redis.call('HSET', P .. ':sentences:' .. c.id, s[1], s[2])
      redis.call('HSET', P .. ':sentence-text:' .. c.id, s[1], s[3])
    end
    for _, m in ipairs(c.mentions) do
      redis.call('HSET', P .. ':mentions:' .. c.id, m[1], m[2])
      if m[3] then redis.call('HSET', P .. ':mention-vectors:' .. c.id, m[1], m[3]) end
    end
    for _, l in ipairs(c.links) do
      redis.call('HSET', P .. ':links:' .. c.id, l[1] .. '\n' .. l[2], l[3])
      redis.call('SADD', P .. ':event-links:' .. l[2], c.id .. '\n' .. l[1])
    end
    if c.storyId ~= cjson.null then
      redis.call('HSET', ak, 'story', c.storyId)
      redis.call('ZADD', P .. ':story-articles:' .. current_story(P, c.storyId), c.time, c.id)
    end
    if c.story ~= cjson.null then put_story(P, counts, c.story, ARGV[2 + c.story.state]) end
    for _, e in ipairs(c.events) do put_event(P, counts, e, ARGV[2 + e.state]) end
    if c.idf ~= cjson.null then
      redis.call('INCRBY', P .. ':idf-docs', c.idf.docs)
      local df = c.idf.df
      for k = 1, #df, 2 do redis.call('HINCRBY', P .. ':idf', df[k], df[k + 1]) end
    end
    if c.tally ~= cjson.null then
      redis.call('HINCRBY', P .. ':link-tally', 'mentions', c.tally.mentions)
      redis.call('HINCRBY', P .. ':link-tally', 'high', c.tally.high)
    end
    queue_messages(P, c.messages)
    redis.call('HINCRBY', counts, 'articles', 1)
    redis.call('HINCRBY', counts, 'sentences', #c.sentences)
    redis.call('HINCRBY', counts, 'mentions', #c.mentions)
    redis.call('HINCRBY', counts, 'links', #c.links)
    if c.due then redis.call('SET', P .. ':consolidation-owed', redis.call('HGET', counts, 'articles')) end
    out[i] = 'stored'
  end
end
return out
