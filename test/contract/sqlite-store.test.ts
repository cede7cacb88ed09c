import { mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { bareCommit } from '../helpers/bare-commit.js';
import { openSqliteStore } from '../../src/store/sqlite/sqlite-store.js';
import { isStrandError } from '../../src/errors.js';
import { describeStoreContract } from './store-contract.js';

describeStoreContract('SQLite store in memory', async () => openSqliteStore(':memory:'));
describeStoreContract('SQLite store on disk', async () =>
  openSqliteStore(join(mkdtempSync(join(tmpdir(), 'strandline-store-')), 'db', 'store.sqlite')),
);

describe('document frequencies in the SQLite store', () => {
  it('folds per-article rows into a snapshot without changing the sums', async () => {
    const store = openSqliteStore(':memory:', { idfSnapshotEvery: 2 });
    for (let i = 0; i < 5; i++) {
      await store.commitArticle(
        bareCommit(`a${i}`, {
          commit: {
            idf: {
              docs: 3,
              df: new Map([
                [1, 1],
                [i + 10, 2],
              ]),
            },
          },
        }),
      );
    }
    const { idf } = await store.loadLinkerState();
    expect(idf.docs).toBe(15);
    expect(new Map(idf.df)).toEqual(
      new Map([
        [1, 5],
        [10, 2],
        [11, 2],
        [12, 2],
        [13, 2],
        [14, 2],
      ]),
    );
    await store.close();
  });
});

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
