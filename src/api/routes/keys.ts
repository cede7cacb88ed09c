/** API keys: list, make (the key is shown once), revoke. Every route here needs the admin scope. */
import { StrandError } from '../../errors.js';
import { type KeyRing, SCOPES, newApiKey } from '../access.js';
import type { ApiKey, ApiKeys, Scope } from '../../store/store.js';
import type { RoutePlugin } from '../route-plugin.js';
import { errorSchema, str } from '../schemas.js';

const TAGS = ['keys'];
const keySchema = {
  type: 'object',
  properties: {
    id: str,
    name: str,
    scopes: { type: 'array', items: { type: 'string', enum: [...SCOPES] } },
    created: str,
  },
  required: ['id', 'name', 'scopes', 'created'],
} as const;

/** /api/keys and /api/keys/:id. */
export const keyRoutes: RoutePlugin<{ store: ApiKeys; keys: KeyRing; now: () => Date }> = async (app, { store, keys, now }) => {
  app.get(
    '/api/keys',
    {
      schema: {
        summary: 'The API keys (never the keys themselves: only their SHA-256 is stored)',
        tags: TAGS,
        response: { 200: { type: 'object', properties: { keys: { type: 'array', items: keySchema } }, required: ['keys'] } },
      },
    },
    async () => ({ keys: (await store.listApiKeys()).map(view) }),
  );

  app.post(
    '/api/keys',
    {
      schema: {
        summary: 'Make an API key with scopes; the answer carries the key, once',
        description:
          'Scopes: read (events, stories, articles, the stream), push (POST /api/articles, nothing else), manage (feeds, subscriptions, dead letters, corrections, reviews; includes read), admin (keys; everything). Send it as Authorization: Bearer <key>.',
        tags: TAGS,
        body: {
          type: 'object',
          additionalProperties: false,
          properties: {
            name: { type: 'string', minLength: 1, maxLength: 100, pattern: '^[\\x20-\\x7e]+$' },
            scopes: { type: 'array', items: { type: 'string', enum: [...SCOPES] }, minItems: 1, maxItems: 4, uniqueItems: true },
          },
          required: ['name', 'scopes'],
        },
        response: {
          201: { ...keySchema, properties: { ...keySchema.properties, key: str }, required: [...keySchema.required, 'key'] },
          400: errorSchema,
        },
      },
    },
    async (req, reply) => {
      const { record, key } = newApiKey(req.body.name, req.body.scopes as Scope[], now());
      await store.addApiKey(record);
      keys.changed();
      return reply
        .code(201)
        .header('location', `/api/keys/${record.id}`)
        .send({ ...view(record), key });
    },
  );

  app.delete(
    '/api/keys/:id',
    {
      schema: {
        summary: 'Revoke an API key (refused within a second on every api process)',
        tags: TAGS,
        params: { type: 'object', properties: { id: { type: 'string', pattern: '^key_[0-9a-f]{12}$' } }, required: ['id'] },
        response: { 204: { type: 'null' }, 404: errorSchema },
      },
    },
    async (req, reply) => {
      if (!(await store.deleteApiKey(req.params.id))) throw new StrandError('STRAND_NOT_FOUND', `no API key ${req.params.id}`);
      keys.changed();
      return reply.code(204).send();
    },
  );
};

function view(k: ApiKey): object {
  return { id: k.id, name: k.name, scopes: k.scopes, created: k.created };
}
