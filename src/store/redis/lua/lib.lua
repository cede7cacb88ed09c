-- lib: helpers prepended to every script of this folder when it is loaded (redis-store.ts).
-- Defines functions only; touches no key by itself.

-- Refuses a write from a linker that no longer holds the partition's lease (a fencing
-- token: a linker that stalled past its lease, while another took over, must not write).
-- `fence` is the writer's lease token, or JSON null for a writer that holds no lease.
local function check_fence(P, fence)
  if fence ~= nil and fence ~= cjson.null and redis.call('GET', P .. ':linker-lease') ~= fence then
    error({ err = 'STRAND_LEASE_LOST this linker no longer holds the partition lease' })
  end
end

-- Logs outbox messages; a message already logged is left as it is (the same change gives
-- the same message id). Deliveries are queued later, by fan-out.lua.
local function queue_messages(P, messages)
  for _, msg in ipairs(messages) do
    local ok = P .. ':outbox:' .. msg.id
    if redis.call('EXISTS', ok) == 0 then
      -- Numbered in the notification log the live stream and fan-out read. The subscriber
      -- list (filled by fan-out) tells pruning when the last delivery of a message is gone;
      -- until it has one, the message is pruned by age.
      local seq = redis.call('INCR', P .. ':outbox-seq')
      redis.call('HSET', ok, 'type', msg.type, 'body', msg.body, 'created', msg.created, 'subscribers', '[]', 'seq', seq)
      redis.call('ZADD', P .. ':outbox-log', seq, msg.id)
      redis.call('ZADD', P .. ':outbox-unsubscribed', msg.dueAt, msg.id)
      -- Indexed by the articles and events it names, so an erasure can find its copies.
      for _, a in ipairs(msg.articles) do redis.call('SADD', P .. ':article-messages:' .. a, msg.id) end
      for _, e in ipairs(msg.events) do redis.call('SADD', P .. ':event-messages:' .. e, msg.id) end
    end
  end
end

-- Keeps a correction's record in the audit log, in the order made; an undo marks the
-- correction it undid (beside the record, which stays byte for byte as written).
local function keep_correction(P, id, record, undoes)
  redis.call('HSET', P .. ':corrections', id, record)
  redis.call('ZADD', P .. ':correction-order', redis.call('INCR', P .. ':correction-seq'), id)
  if undoes ~= cjson.null and undoes ~= nil then redis.call('HSET', P .. ':correction-undone', undoes, id) end
end

-- The story a story id now lives in, following story merges.
local function current_story(P, id)
  local seen = 0
  while true do
    local rec = redis.call('HGET', P .. ':story-merges', id)
    if not rec or seen > 64 then return id end
    id = string.sub(rec, 1, string.find(rec, '\n', 1, true) - 1)
    seen = seen + 1
  end
end

-- Takes an event that is leaving (merged away, removed by a correction) out of its story's
-- event set, so that the story counts only the events it holds.
local function leave_story(P, id)
  local rec = redis.call('HGET', P .. ':event:' .. id, 'record')
  if not rec then return end
  local story = cjson.decode(rec).story
  if story and story ~= cjson.null then redis.call('SREM', P .. ':story-events:' .. current_story(P, story), id) end
end

-- Writes an event's record, outlets and linker state; counts it when new. The label is
-- written only then: afterwards it changes only when text is erased (erase-article.lua),
-- so a linker holding an older label cannot put erased text back. A new event joins its
-- story's event set (the story as it now stands, after merges).
local function put_event(P, counts, e, state)
  local ek = P .. ':event:' .. e.id
  if redis.call('EXISTS', ek) == 0 then
    redis.call('HINCRBY', counts, 'events', 1)
    redis.call('HSET', ek, 'label', e.label)
    if e.story and e.story ~= cjson.null then
      redis.call('SADD', P .. ':story-events:' .. current_story(P, e.story), e.id)
    end
  end
  redis.call('HSET', ek, 'record', e.record, 'outlets', e.outlets, 'state', state)
  redis.call('ZADD', P .. ':events', e.lastSeen, e.id)
end

-- Writes a story's record, label and state; counts it when new. A story merged away
-- stays gone: a writer that had not yet heard of the merge files its article under the
-- survivor (current_story) and its view of the absorbed story is dropped.
local function put_story(P, counts, s, state)
  if redis.call('HEXISTS', P .. ':story-merges', s.id) == 1 then return end
  local sk = P .. ':story:' .. s.id
  if redis.call('EXISTS', sk) == 0 then redis.call('HINCRBY', counts, 'stories', 1) end
  redis.call('HSET', sk, 'record', s.record, 'label', s.label, 'state', state)
  redis.call('ZADD', P .. ':stories', s.lastSeen, s.id)
end

-- The end (index of the closing quote) of the JSON string whose first character is at i.
local function json_string_end(s, i)
  while i <= #s do
    local c = string.sub(s, i, i)
    if c == '\\' then i = i + 2
    elseif c == '"' then return i
    else i = i + 1 end
  end
  return #s
end

-- A message body with each string value of `field` rewritten: f(value) gives the JSON to
-- put in its place, or nil to leave it.
local function rewrite_field(body, field, f)
  local out, at = {}, 1
  local key = '"' .. field .. '":'
  while true do
    local a, b = string.find(body, key .. '"', at, true)
    if not a then break end
    local e = json_string_end(body, b + 1)
    local new = f(cjson.decode(string.sub(body, b, e)))
    table.insert(out, string.sub(body, at, a - 1) .. key .. (new or string.sub(body, b, e)))
    at = e + 1
  end
  table.insert(out, string.sub(body, at))
  return table.concat(out)
end

-- A message body with every "text" string value replaced by null (a mention's sentence).
local function body_without_text(body)
  return rewrite_field(body, 'text', function() return 'null' end)
end

-- Whether a label is one of the sentences, or one cut short (ending in an ellipsis:
-- U+2026, three bytes in UTF-8).
local function drawn_from(label, sentences)
  local stem, cut = string.gsub(label, '\226\128\166$', '')
  for _, t in ipairs(sentences) do
    if t == label or (cut > 0 and string.sub(t, 1, #stem) == stem) then return true end
  end
  return false
end

-- A message body with every "label" drawn from the erased sentences set to new.
local function body_relabelled(body, erased, new)
  return rewrite_field(body, 'label', function(value)
    if drawn_from(value, erased) then return cjson.encode(new) end
  end)
end

-- The text of an event's earliest linked sentence that still has its text, or nil; ties
-- on the publication time go to the lower article id, then sentence index.
local function earliest_text(P, ev)
  local best, bestKey = nil, nil
  for _, member in ipairs(redis.call('SMEMBERS', P .. ':event-links:' .. ev)) do
    local nl = string.find(member, '\n', 1, true)
    local article, idx = string.sub(member, 1, nl - 1), string.sub(member, nl + 1)
    local t = redis.call('HGET', P .. ':sentence-text:' .. article, idx)
    if t then
      local key = { cjson.decode(redis.call('HGET', P .. ':mentions:' .. article, idx)).published, article, tonumber(idx) }
      local earlier = not bestKey or key[1] < bestKey[1]
        or (key[1] == bestKey[1] and (key[2] < bestKey[2] or (key[2] == bestKey[2] and key[3] < bestKey[3])))
      if earlier then best, bestKey = t, key end
    end
  end
  return best
end

-- Rewrites the body of each message of a set with f.
local function rewrite_messages(P, set, f)
  for _, mid in ipairs(redis.call('SMEMBERS', set)) do
    local mk = P .. ':outbox:' .. mid
    local body = redis.call('HGET', mk, 'body')
    if body then
      local nb = f(body)
      if nb ~= body then redis.call('HSET', mk, 'body', nb) end
    end
  end
end

