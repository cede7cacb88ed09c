import { describe, expect, it } from 'vitest';
import { ServiceStack } from '../../src/lifecycle/service-stack.js';

function recorder() {
  const events: string[] = [];
  const errors: unknown[] = [];
  const stack = new ServiceStack({ error: (o: unknown) => void errors.push(o) });
  const part = (name: string) =>
    stack.add(
      name,
      () => void events.push(`start ${name}`),
      () => void events.push(`stop ${name}`),
    );
  return { events, errors, stack, part };
}

describe('the parts of a process', () => {
  it('stop in the reverse of the order they started', async () => {
    const { events, stack, part } = recorder();
    await part('store');
    await part('server');
    await part('poller');
    await stack.stop();
    expect(events).toEqual(['start store', 'start server', 'start poller', 'stop poller', 'stop server', 'stop store']);
  });

  it('stop once, however often asked', async () => {
    const { events, stack, part } = recorder();
    await part('store');
    await Promise.all([stack.stop(), stack.stop()]);
    await stack.stop();
    expect(events.filter((e) => e.startsWith('stop'))).toEqual(['stop store']);
  });

  it('already started are stopped when a later one fails to start, and the error goes on', async () => {
    const { events, stack, part } = recorder();
    await part('store');
    await part('intake');
    await expect(
      stack.add(
        'server',
        () => Promise.reject(new Error('port in use')),
        () => undefined,
      ),
    ).rejects.toThrow('port in use');
    expect(events).toEqual(['start store', 'start intake', 'stop intake', 'stop store']);
  });

  it('a part that fails to stop is logged, and the others still stop', async () => {
    const { events, errors, stack, part } = recorder();
    await part('store');
    await stack.add(
      'dispatcher',
      () => undefined,
      () => Promise.reject(new Error('receiver hung')),
    );
    await stack.stop();
    expect(events).toEqual(['start store', 'stop store']);
    expect(errors).toEqual([{ err: 'receiver hung', part: 'dispatcher' }]);
  });

  it('refuses to start a part once stopping', async () => {
    const { stack } = recorder();
    await stack.stop();
    await expect(
      stack.add(
        'late',
        () => undefined,
        () => undefined,
      ),
    ).rejects.toThrow(/stopping/);
  });
});
