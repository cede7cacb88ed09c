import { describe, expect, it } from 'vitest';
import { STOPPED, StopSignal } from '../../src/distribute/stop-signal.js';

describe('a stop signal around a blocking read', () => {
  it('gives the read its answer while not stopped', async () => {
    expect(await new StopSignal().race(Promise.resolve('entry'))).toBe('entry');
  });

  it('lets a loop leave a read that a disconnected client never settles', async () => {
    const signal = new StopSignal();
    const pending = signal.race(new Promise<string>(() => undefined));
    signal.stop();
    expect(await pending).toBe(STOPPED);
    // And every read after the stop.
    expect(await signal.race(new Promise<string>(() => undefined))).toBe(STOPPED);
  });

  it('passes on a read that fails before the stop, and swallows one that fails after it', async () => {
    const signal = new StopSignal();
    await expect(signal.race(Promise.reject(new Error('Connection is closed.')))).rejects.toThrow(/closed/);
    let fail!: (e: Error) => void;
    const late = signal.race(new Promise<string>((_, reject) => (fail = reject)));
    signal.stop();
    expect(await late).toBe(STOPPED);
    const unhandled: unknown[] = [];
    const note = (e: unknown) => unhandled.push(e);
    process.on('unhandledRejection', note);
    fail(new Error('Connection is closed.'));
    await new Promise((r) => setTimeout(r, 10));
    process.off('unhandledRejection', note);
    expect(unhandled).toEqual([]);
  });
});
