import { EventEmitter } from 'node:events';
import { afterEach, describe, expect, it, vi } from 'vitest';
import { listenForStop } from '../../src/cli/stop-signals.js';

afterEach(() => {
  vi.useRealTimers();
});

function harness(graceMs = 4000) {
  const source = new EventEmitter();
  const lines: string[] = [];
  const exits: number[] = [];
  const stop = listenForStop('the run', { graceMs, source: source as never, write: (l) => lines.push(l), exit: (c) => void exits.push(c) });
  return { source, lines, exits, stop };
}

describe('stopping a command on a signal', () => {
  it('asks the command to stop at the first signal and answers 128 + the signal number (common practice)', () => {
    const h = harness();
    expect(h.stop.signal.aborted).toBe(false);
    expect(h.stop.exitCode(0)).toBe(0);
    h.source.emit('SIGTERM', 'SIGTERM');
    expect(h.stop.signal.aborted).toBe(true);
    expect(h.stop.received()).toBe('SIGTERM');
    expect(h.stop.exitCode(0)).toBe(143);
    expect(h.lines).toEqual(['strandline: SIGTERM: stopping the run (again to end at once)']);
    expect(h.exits).toEqual([]);
    h.stop.dispose();
  });

  it('ends the process when the command is still running after the grace period', () => {
    vi.useFakeTimers();
    const h = harness(4500);
    h.source.emit('SIGINT', 'SIGINT');
    vi.advanceTimersByTime(4499);
    expect(h.exits).toEqual([]);
    vi.advanceTimersByTime(1);
    expect(h.exits).toEqual([130]);
    expect(h.lines.at(-1)).toBe('strandline: the run did not stop within 4.5 s of SIGINT; ending now');
  });

  it('ends the process at once on a second signal', () => {
    const h = harness();
    h.source.emit('SIGINT', 'SIGINT');
    h.source.emit('SIGINT', 'SIGINT');
    expect(h.exits).toEqual([130]);
    expect(h.lines.at(-1)).toBe('strandline: SIGINT again; the run ends now');
    h.stop.dispose();
  });

  it('stops listening once disposed', () => {
    const h = harness();
    h.stop.dispose();
    expect(h.source.listenerCount('SIGINT') + h.source.listenerCount('SIGTERM')).toBe(0);
  });
});
