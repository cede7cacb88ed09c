/** The Lua scripts of lua/, one per file, each loaded with the shared helpers of lib.lua in front. */
import { readFileSync } from 'node:fs';
import type { RedisClient } from './connect.js';

/** A script's source: lib.lua (functions only) and then the script. */
export function luaScript(name: string): string {
  const read = (f: string) => readFileSync(new URL(`./lua/${f}.lua`, import.meta.url), 'utf8');
  return `${read('lib')}\n${read(name)}`;
}

/** Defines `name` (a file of lua/) on the client as a one-key command and returns a caller for it. */
export function defineScript(client: RedisClient, name: string): (key: string, ...args: (string | Buffer | number)[]) => Promise<unknown> {
  const command = `strandline_${name.replace(/-/g, '_')}`;
  client.defineCommand(command, { numberOfKeys: 1, lua: luaScript(name) });
  const fn = (client as unknown as Record<string, (...a: unknown[]) => Promise<unknown>>)[command]!;
  return (key, ...args) => fn.call(client, key, ...args);
}
