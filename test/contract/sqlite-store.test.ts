import { mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { openSqliteStore } from '../../src/store/sqlite/sqlite-store.js';
import { isStrandError } from '../../src/errors.js';
import { describeStoreContract } from './store-contract.js';

describeStoreContract('SQLite store in memory', async () => openSqliteStore(':memory:'));
describeStoreContract('SQLite store on disk', async () => openSqliteStore(join(mkdtempSync(join(tmpdir(), 'strandline-store-')), 'db', 'store.sqlite')));

describe('opening the SQLite store', () => {
  it('refuses a path it cannot open with a clear error', () => {
    let err: unknown;
    try {
      openSqliteStore('/proc/version/not-a-dir/x.sqlite');
    } catch (e) {
      err = e;
    }
    expect(isStrandError(err, 'STRAND_STORE_FAILED')).toBe(true);
  });
});
