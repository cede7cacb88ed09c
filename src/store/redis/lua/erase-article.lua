-- erase-article: erases one article's stored text (body, sentences, mention and story vectors) and relabels the
-- events whose label came from that text with their earliest remaining sentence, or a
-- placeholder; notifications lose the article's sentences and take the new labels. Links,
-- mentions and events stay.
-- KEYS[1]  the partition's counts hash
-- ARGV[1]  the partition prefix
-- ARGV[2]  the article id
-- ARGV[3]  the placeholder label
-- returns  0: no such article; 1: stored but its text was already erased; 2: text erased
local P, id, placeholder = ARGV[1], ARGV[2], ARGV[3]
local ak = P .. ':article:' .. id
if redis.call('EXISTS', ak) == 0 then return 0 end
local had = redis.call('HDEL', ak, 'text')
redis.call('HDEL', ak, 'sketch', 'story-vector')
local erased = redis.call('HVALS', P .. ':sentence-text:' .. id)
redis.call('DEL', P .. ':sentence-text:' .. id)
-- A TF-IDF vector is a bag of the sentence's (hashed) words: it goes with the text.
redis.call('DEL', P .. ':mention-vectors:' .. id)
local function split(s)
  local nl = string.find(s, '\n', 1, true)
  return string.sub(s, 1, nl - 1), string.sub(s, nl + 1)
end
local events = {}
for _, field in ipairs(redis.call('HKEYS', P .. ':links:' .. id)) do
  local _, ev = split(field)
  events[ev] = true
end
-- Notifications keep copies of the sentences: they go from this article's messages.
rewrite_messages(P, P .. ':article-messages:' .. id, body_without_text)
for ev in pairs(events) do
  local ek = P .. ':event:' .. ev
  local label = redis.call('HGET', ek, 'label')
  if label and drawn_from(label, erased) then
    label = earliest_text(P, ev) or placeholder
    redis.call('HSET', ek, 'label', label)
  end
  -- Its notifications (those of events merged into it included) drop labels drawn from
  -- the erased sentences for the label it has now.
  if label then
    rewrite_messages(P, P .. ':event-messages:' .. ev, function(body) return body_relabelled(body, erased, label) end)
  end
end
if had == 1 then return 2 end
return 1
