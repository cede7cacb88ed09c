-- lib: helpers prepended to every script of this folder when it is loaded (redis-store.ts).
-- Defines functions only; touches no key by itself.

-- Queues outbox messages and one pending delivery per subscriber; a message or delivery
-- already queued is left as it is (the same change gives the same message id).
local function queue_messages(P, messages)
  for _, msg in ipairs(messages) do
    local ok = P .. ':outbox:' .. msg.id
    if redis.call('EXISTS', ok) == 0 then
      redis.call('HSET', ok, 'type', msg.type, 'body', msg.body, 'created', msg.created)
    end
    for _, sub in ipairs(msg.subscribers) do
      local dk = msg.id .. '\n' .. sub
      if redis.call('HSETNX', P .. ':deliveries', dk, msg.delivery) == 1 then
        redis.call('ZADD', P .. ':due', msg.dueAt, dk)
      end
    end
  end
end

-- Writes an event's record, label, outlets and linker state; counts it when new.
local function put_event(P, counts, e, state)
  local ek = P .. ':event:' .. e.id
  if redis.call('EXISTS', ek) == 0 then redis.call('HINCRBY', counts, 'events', 1) end
  redis.call('HSET', ek, 'record', e.record, 'label', e.label, 'outlets', e.outlets, 'state', state)
  redis.call('ZADD', P .. ':events', e.lastSeen, e.id)
end
