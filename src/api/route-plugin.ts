/**
 * Routes as fastify plugins whose request types (params, querystring, body) are inferred
 * from the JSON Schemas that validate them (json-schema-to-ts), so no route repeats a
 * schema's shape as a hand-written type. Replies stay as fastify's serializer shapes them
 * from the response schemas: our records are interfaces, which the inferred response
 * types (open objects) would not accept without loosening every record.
 */
import type { FastifyPluginAsync, FastifyTypeProvider, RawServerDefault } from 'fastify';
import type { FromSchema, JSONSchema } from 'json-schema-to-ts';

/** Request types from the route's schemas. */
export interface RequestSchemaTypes extends FastifyTypeProvider {
  validator: this['schema'] extends JSONSchema ? FromSchema<this['schema']> : unknown;
  serializer: unknown;
}

/** A group of routes, registered with `app.register(plugin, options)`. */
export type RoutePlugin<Options extends object> = FastifyPluginAsync<Options, RawServerDefault, RequestSchemaTypes>;
