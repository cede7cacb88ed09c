/**
 * Loads the configuration once: the default file, an optional operator file on top, then
 * the few environment overrides. This is the only module that reads process.env.
 */
import { readFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
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
  merged = deepMerge(merged, envOverrides(env));
  // A token from the environment (keeps the secret out of files) joins the file's tokens.
  if (env.STRANDLINE_API_TOKEN) {
    const server = (merged.server ?? {}) as { tokens?: unknown };
    merged = deepMerge(merged, { server: { tokens: [...(Array.isArray(server.tokens) ? server.tokens : []), env.STRANDLINE_API_TOKEN] } });
  }
  if (sources.overrides) merged = deepMerge(merged, sources.overrides);
  return parseConfig(merged);
}

/** Validates an already-merged configuration object. */
export function parseConfig(raw: unknown): Readonly<Config> {
  const result = configSchema.safeParse(raw);
  if (!result.success) {
    const lines = result.error.issues.map((i) => `${i.path.join('.') || '(root)'}: ${i.message}`);
    throw new StrandError('STRAND_CONFIG_INVALID', `invalid configuration:\n  ${lines.join('\n  ')}`, { cause: result.error });
  }
  return deepFreeze(result.data);
}

/** True when the tests must fail rather than skip without Redis (CI sets it). */
export function redisRequired(env: Record<string, string | undefined> = process.env): boolean {
  return env.STRANDLINE_REQUIRE_REDIS === '1';
}

function envOverrides(env: Record<string, string | undefined>): Record<string, unknown> {
  const out: Record<string, Record<string, unknown>> = {};
  const set = (section: string, key: string, value: unknown): void => {
    (out[section] ??= {})[key] = value;
  };
  if (env.PORT !== undefined && env.PORT !== '') set('server', 'port', toPort(env.PORT));
  if (env.HOST) set('server', 'host', env.HOST);
  if (env.STRANDLINE_DB) set('store', 'path', env.STRANDLINE_DB);
  if (env.STRANDLINE_STORE) set('store', 'kind', env.STRANDLINE_STORE);
  if (env.STRANDLINE_REDIS_URL) (out.store ??= {}).redis = { url: env.STRANDLINE_REDIS_URL };
  if (env.STRANDLINE_ROLE) set('process', 'role', env.STRANDLINE_ROLE);
  if (env.STRANDLINE_LOG_LEVEL) set('log', 'level', env.STRANDLINE_LOG_LEVEL);
  return out;
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
    throw new StrandError('STRAND_CONFIG_UNREADABLE', `cannot read configuration file ${path}`, { cause: err });
  }
  if (text.length > 1024 * 1024) throw new StrandError('STRAND_CONFIG_INVALID', `configuration file ${path} is over 1 MiB`);
  let value: unknown;
  try {
    value = JSON.parse(text);
  } catch (err) {
    throw new StrandError('STRAND_CONFIG_INVALID', `configuration file ${path} is not valid JSON: ${(err as Error).message}`, { cause: err });
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
