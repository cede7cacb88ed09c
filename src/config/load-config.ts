/**
 * Loads the configuration once: the default file, an optional operator file on top, then
 * the few environment overrides. This is the only module that reads process.env.
 */
import { readFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { closest, distance } from 'fastest-levenshtein';
import type { z } from 'zod';
import { StrandError } from '../errors.js';
import { configSchema, type Config } from './schema.js';

/** The shipped default configuration file. */
export const DEFAULT_CONFIG_FILE = fileURLToPath(new URL('../../config/default.json', import.meta.url));

/** Where to read configuration from; all optional. */
export interface ConfigSources {
  /** An operator's JSON file, merged over the defaults. */
  file?: string | undefined;
  /** Overrides merged last (from CLI flags). */
  overrides?: Record<string, unknown>;
  /** Environment to read; defaults to process.env. */
  env?: Record<string, string | undefined>;
}

/** Reads, merges, validates and freezes the configuration. Throws STRAND_CONFIG_* errors. */
export function loadConfig(sources: ConfigSources = {}): Readonly<Config> {
  const env = sources.env ?? process.env;
  let merged: Record<string, unknown> = readJson(DEFAULT_CONFIG_FILE);
  const file = sources.file ?? env.STRANDLINE_CONFIG;
  if (file) merged = deepMerge(merged, readJson(file));
  const fromEnv = envOverrides(env);
  merged = deepMerge(merged, fromEnv.values);
  // A token from the environment (keeps the secret out of files) joins the file's tokens.
  if (env.STRANDLINE_API_TOKEN) {
    const server = (merged.server ?? {}) as { tokens?: unknown };
    const tokens = [...(Array.isArray(server.tokens) ? server.tokens : []), env.STRANDLINE_API_TOKEN];
    fromEnv.names.set(`server.tokens.${tokens.length - 1}`, 'STRANDLINE_API_TOKEN');
    merged = deepMerge(merged, { server: { tokens } });
  }
  if (sources.overrides) {
    merged = deepMerge(merged, sources.overrides);
    // A flag given on the command line wins over the variable; the error is then the flag's.
    for (const path of [...fromEnv.names.keys()]) if (hasPath(sources.overrides, path)) fromEnv.names.delete(path);
  }
  return parseConfig(merged, fromEnv.names);
}

/**
 * Validates an already-merged configuration object. `envNames` maps a setting's path to the
 * environment variable it came from, so an error names what the operator actually set.
 */
export function parseConfig(raw: unknown, envNames: ReadonlyMap<string, string> = new Map()): Readonly<Config> {
  const result = configSchema.safeParse(raw);
  if (!result.success) {
    const lines = result.error.issues.map((i) => describeIssue(i, envNames));
    throw new StrandError('STRAND_CONFIG_INVALID', `invalid configuration:\n  ${lines.join('\n  ')}`, { cause: result.error });
  }
  return deepFreeze(result.data);
}

/** One line per problem: where, what, and for a misspelt key the nearest one it may mean. */
function describeIssue(issue: z.core.$ZodIssue, envNames: ReadonlyMap<string, string>): string {
  const path = issue.path.join('.');
  const where = envNames.has(path) ? `${envNames.get(path)} (${path})` : path || '(root)';
  if (issue.code === 'unrecognized_keys') {
    const known = knownKeys(issue.path);
    const hints = issue.keys.map((k) => {
      const near = known.length ? closest(k, known) : undefined;
      return near !== undefined && distance(k, near) <= Math.max(2, Math.floor(k.length / 4))
        ? `"${k}" (did you mean "${near}"?)`
        : `"${k}"`;
    });
    return `${where}: unknown key${hints.length > 1 ? 's' : ''} ${hints.join(', ')}`;
  }
  return `${where}: ${issue.message}`;
}

/** The keys the schema knows at `path`, read from the defaults it fills in. */
function knownKeys(path: readonly PropertyKey[]): string[] {
  let node: unknown = configSchema.parse({});
  for (const key of path) node = isPlainObject(node) ? node[String(key)] : undefined;
  return isPlainObject(node) ? Object.keys(node) : [];
}

function hasPath(o: Record<string, unknown>, path: string): boolean {
  let node: unknown = o;
  for (const key of path.split('.')) {
    if (!isPlainObject(node) && !Array.isArray(node)) return false;
    node = (node as Record<string, unknown>)[key];
  }
  return node !== undefined;
}

/** True when the tests must fail rather than skip without Redis (CI sets it). */
export function redisRequired(env: Record<string, string | undefined> = process.env): boolean {
  return env.STRANDLINE_REQUIRE_REDIS === '1';
}

/** The settings the environment sets, and which variable set each (by setting path). */
function envOverrides(env: Record<string, string | undefined>): { values: Record<string, unknown>; names: Map<string, string> } {
  const out: Record<string, Record<string, unknown>> = {};
  const names = new Map<string, string>();
  const set = (section: string, key: string, value: unknown, variable?: string): void => {
    (out[section] ??= {})[key] = value;
    if (variable) names.set(`${section}.${key}`, variable);
  };
  if (env.PORT !== undefined && env.PORT !== '') set('server', 'port', toPort(env.PORT), 'PORT');
  if (env.HOST) set('server', 'host', env.HOST, 'HOST');
  if (env.STRANDLINE_DB) set('store', 'path', env.STRANDLINE_DB, 'STRANDLINE_DB');
  if (env.STRANDLINE_STORE) set('store', 'kind', env.STRANDLINE_STORE, 'STRANDLINE_STORE');
  if (env.STRANDLINE_REDIS_URL) {
    (out.store ??= {}).redis = { url: env.STRANDLINE_REDIS_URL };
    names.set('store.redis.url', 'STRANDLINE_REDIS_URL');
  }
  if (env.STRANDLINE_ROLE) set('process', 'role', env.STRANDLINE_ROLE, 'STRANDLINE_ROLE');
  if (env.STRANDLINE_LOG_LEVEL) set('log', 'level', env.STRANDLINE_LOG_LEVEL, 'STRANDLINE_LOG_LEVEL');
  return { values: out, names };
}

function toPort(value: string): number | string {
  // Left as a string when not an integer so that validation names the bad value.
  return /^\d+$/.test(value) ? Number(value) : value;
}

function readJson(path: string): Record<string, unknown> {
  let text: string;
  try {
    text = readFileSync(path, 'utf8');
  } catch (err) {
    const why =
      (err as NodeJS.ErrnoException).code === 'ENOENT'
        ? 'no such file'
        : (err as NodeJS.ErrnoException).code === 'EISDIR'
          ? 'it is a folder'
          : (err as Error).message;
    throw new StrandError('STRAND_CONFIG_UNREADABLE', `cannot read configuration file ${path}: ${why}`, { cause: err });
  }
  if (text.length > 1024 * 1024) throw new StrandError('STRAND_CONFIG_INVALID', `configuration file ${path} is over 1 MiB`);
  let value: unknown;
  try {
    value = JSON.parse(text);
  } catch (err) {
    throw new StrandError('STRAND_CONFIG_INVALID', `configuration file ${path} is not valid JSON: ${(err as Error).message}`, {
      cause: err,
    });
  }
  if (!isPlainObject(value)) throw new StrandError('STRAND_CONFIG_INVALID', `configuration file ${path} must hold a JSON object`);
  return value;
}

function isPlainObject(v: unknown): v is Record<string, unknown> {
  return typeof v === 'object' && v !== null && !Array.isArray(v);
}

function deepMerge(base: Record<string, unknown>, top: Record<string, unknown>): Record<string, unknown> {
  const out: Record<string, unknown> = { ...base };
  for (const [key, value] of Object.entries(top)) {
    // A JSON file could carry "__proto__"; never merge through it.
    if (key === '__proto__' || key === 'constructor' || key === 'prototype') continue;
    const prev = out[key];
    out[key] = isPlainObject(prev) && isPlainObject(value) ? deepMerge(prev, value) : value;
  }
  return out;
}

function deepFreeze<T>(value: T): T {
  if (typeof value === 'object' && value !== null) {
    for (const v of Object.values(value)) deepFreeze(v);
    Object.freeze(value);
  }
  return value;
}
