import { describe, expect, it } from 'vitest';
import { isBusy, whenFree } from '../../src/store/sqlite/when-free.js';

const busy = () => Object.assign(new Error('database is locked'), { code: 'SQLITE_BUSY' });

describe('a write that meets a busy SQLite file', () => {
  it('goes again after growing pauses until the file is free, and returns what the write returned', async () => {
    const pauses: number[] = [];
    let calls = 0;
    const result = await whenFree(
      'store',
      () => {
        if (++calls < 4) throw busy();
        return 'stored';
      },
      { sleep: async (ms) => void pauses.push(ms) },
    );
    expect(result).toBe('stored');
    expect(pauses).toEqual([50, 100, 200]);
  });

  it('gives up with the reason once the file stayed busy past giveUpMs', async () => {
    await expect(
      whenFree(
        'cannot store a1',
        () => {
          throw busy();
        },
        { giveUpMs: 0, sleep: async () => undefined },
      ),
    ).rejects.toMatchObject({
      code: 'STRAND_STORE_FAILED',
      message: expect.stringMatching(/^cannot store a1: database is locked \(busy for 0 s: another process holds the file\?\)$/),
    });
  });

  it('does not retry other failures', async () => {
    let calls = 0;
    await expect(
      whenFree(
        'store',
        () => {
          calls++;
          throw Object.assign(new Error('disk I/O error'), { code: 'SQLITE_IOERR' });
        },
        { sleep: async () => undefined },
      ),
    ).rejects.toMatchObject({ code: 'STRAND_STORE_FAILED', message: 'store: disk I/O error' });
    expect(calls).toBe(1);
  });

  it('tells busy and locked answers from the rest by their SQLite result codes', () => {
    expect(['SQLITE_BUSY', 'SQLITE_BUSY_SNAPSHOT', 'SQLITE_LOCKED'].map((code) => isBusy({ code }))).toEqual([true, true, true]);
    expect([{ code: 'SQLITE_FULL' }, new Error('x'), null].map(isBusy)).toEqual([false, false, false]);
  });
});
