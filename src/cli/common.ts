/** What every command shares: loading configuration from flags, the logger, the version. */
import { openStore } from '../store/open-store.js';
import type { Store } from '../store/store.js';
import { readFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { type Config } from '../config/schema.js';
import { loadConfig } from '../config/load-config.js';
import { createLogger, type Logger } from '../logger.js';

/** Flags every command accepts. */
export interface CommonOptions {
  config?: string;
  db?: string;
  logLevel?: string;
}

/** The bundled demo folder and its feeds. */
export const DEMO_DIR = fileURLToPath(new URL('../../demo-feed', import.meta.url));
export const DEMO_FEEDS = `${DEMO_DIR}/feeds`;

/** The package version. */
export function version(): string {
  const pkg = JSON.parse(readFileSync(new URL('../../package.json', import.meta.url), 'utf8')) as { version: string };
  return pkg.version;
}

/** Loads and validates configuration with the command's flags on top. */
export function setup(opts: CommonOptions, extra: Record<string, unknown> = {}): { config: Readonly<Config>; logger: Logger } {
  const overrides: Record<string, Record<string, unknown>> = { ...(extra as Record<string, Record<string, unknown>>) };
  if (opts.db) overrides.store = { ...overrides.store, path: opts.db };
  if (opts.logLevel) overrides.log = { level: opts.logLevel };
  const config = loadConfig({ file: opts.config, overrides });
  return { config, logger: createLogger(config.log.level) };
}

/** Runs `work` on the configured store (SQLite file or Redis, as the configuration says), closing it after. */
export async function withStore<T>(opts: CommonOptions, work: (store: Store) => Promise<T>): Promise<T> {
  const { config, logger } = setup(opts);
  const store = await openStore(config.store, logger);
  try {
    return await work(store);
  } finally {
    await store.close();
  }
}
