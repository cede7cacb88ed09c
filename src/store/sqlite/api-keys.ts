/** The SQLite store's API keys: one JSON document each (the key's hash, never the key), in the order made. */
import type Database from 'better-sqlite3';
import type { ApiKey, ApiKeys } from '../store.js';
import type { Write } from './when-free.js';

export class SqliteApiKeys implements ApiKeys {
  constructor(
    private readonly db: Database.Database,
    private readonly write: Write,
  ) {}

  async listApiKeys(): Promise<ApiKey[]> {
    return (this.db.prepare('SELECT data FROM api_keys ORDER BY seq').pluck().all() as string[]).map((d) => JSON.parse(d) as ApiKey);
  }

  async addApiKey(k: ApiKey): Promise<void> {
    await this.write(`cannot store API key ${k.id}`, () =>
      this.db.prepare('INSERT INTO api_keys (id, data) VALUES (?, ?)').run(k.id, JSON.stringify(k)),
    );
  }

  async deleteApiKey(id: string): Promise<boolean> {
    return this.write(`cannot revoke API key ${id}`, () => this.db.prepare('DELETE FROM api_keys WHERE id = ?').run(id).changes > 0);
  }
}
