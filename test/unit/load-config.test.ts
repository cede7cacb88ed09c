import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { loadConfig, parseConfig } from '../../src/config/load-config.js';
import { isStrandError } from '../../src/errors.js';

const dir = mkdtempSync(join(tmpdir(), 'strandline-config-'));
function file(name: string, text: string): string {
  const p = join(dir, name);
  writeFileSync(p, text);
  return p;
}
function failure(fn: () => unknown): { code?: string; message: string } {
  try {
    fn();
  } catch (err) {
    return { code: isStrandError(err) ? err.code : undefined, message: (err as Error).message };
  }
  throw new Error('expected a failure');
}

describe('configuration', () => {
  it('loads the shipped defaults, validated and frozen', () => {
    const c = loadConfig({ env: {} });
    expect(c.server.port).toBe(7410);
    expect(c.link.halfLifeDays).toBe(7);
    expect(Object.isFrozen(c.link)).toBe(true);
  });

  it('lets PORT, HOST and STRANDLINE_DB override the file', () => {
    const c = loadConfig({ env: { PORT: '8123', HOST: '0.0.0.0', STRANDLINE_DB: 'x.sqlite' } });
    expect([c.server.port, c.server.host, c.store.path]).toEqual([8123, '0.0.0.0', 'x.sqlite']);
  });

  it('lets STRANDLINE_STORE, STRANDLINE_REDIS_URL and STRANDLINE_ROLE set up a scale-out process', () => {
    const c = loadConfig({
      env: { STRANDLINE_STORE: 'redis', STRANDLINE_REDIS_URL: 'rediss://user:pw@cache.example:6380/2', STRANDLINE_ROLE: 'worker' },
    });
    expect([c.store.kind, c.store.redis.url, c.store.redis.partition, c.process.role]).toEqual([
      'redis',
      'rediss://user:pw@cache.example:6380/2',
      'main',
      'worker',
    ]);
  });

  it.each([
    ['STRANDLINE_STORE', 'postgres', /store\.kind/],
    [
      'STRANDLINE_REDIS_URL',
      'http://127.0.0.1:6379',
      /STRANDLINE_REDIS_URL \(store\.redis\.url\): must be a redis:\/\/ or rediss:\/\/ URL/,
    ],
    ['STRANDLINE_ROLE', 'boss', /process\.role/],
  ])('names the bad value of %s', (name, value, message) => {
    expect(failure(() => loadConfig({ env: { [name]: value } })).message).toMatch(message);
  });

  it('names the bad value of a malformed PORT', () => {
    expect(failure(() => loadConfig({ env: { PORT: 'eighty' } })).message).toMatch(/server\.port/);
  });

  it('merges an operator file over the defaults', () => {
    const c = loadConfig({ file: file('ok.json', '{"link": {"threshold": 0.3}}'), env: {} });
    expect(c.link.threshold).toBe(0.3);
    expect(c.link.halfLifeDays).toBe(7);
  });

  it.each([
    ['not JSON', '{"link": ', 'STRAND_CONFIG_INVALID', /not valid JSON/],
    ['a JSON array', '[1, 2]', 'STRAND_CONFIG_INVALID', /JSON object/],
    ['a misspelt option', '{"link": {"treshold": 0.3}}', 'STRAND_CONFIG_INVALID', /link/],
    ['an out-of-range value', '{"link": {"threshold": 7}}', 'STRAND_CONFIG_INVALID', /link\.threshold/],
    ['a wrong type', '{"server": {"port": "80"}}', 'STRAND_CONFIG_INVALID', /server\.port/],
    [
      'a Redis partition that would break the hash tag',
      '{"store": {"redis": {"partition": "a}b"}}}',
      'STRAND_CONFIG_INVALID',
      /store\.redis\.partition/,
    ],
    ['an unknown queue option', '{"queue": {"retries": 3}}', 'STRAND_CONFIG_INVALID', /queue/],
    ['a zero dead-letter limit', '{"queue": {"maxDeliveries": 0}}', 'STRAND_CONFIG_INVALID', /queue\.maxDeliveries/],
    [
      'a split threshold above the merge threshold',
      '{"link": {"splitThreshold": 0.5, "mergeThreshold": 0.4}}',
      'STRAND_CONFIG_INVALID',
      /link\.splitThreshold.*merge back/,
    ],
    ['a polled feed that is not http(s)', '{"poll": {"feeds": [{"url": "file:///etc/passwd"}]}}', 'STRAND_CONFIG_INVALID', /poll\.feeds/],
    [
      'a polled feed with an unknown field',
      '{"poll": {"feeds": [{"url": "https://a.example/rss", "every": 5}]}}',
      'STRAND_CONFIG_INVALID',
      /poll\.feeds/,
    ],
    ['a poll interval under 30 s', '{"poll": {"intervalSeconds": 1}}', 'STRAND_CONFIG_INVALID', /poll\.intervalSeconds/],
    ['a copy threshold over 1', '{"copies": {"nearThreshold": 2}}', 'STRAND_CONFIG_INVALID', /copies\.nearThreshold/],
    ['a negative thread count', '{"analysis": {"threads": -1}}', 'STRAND_CONFIG_INVALID', /analysis\.threads/],
    [
      'a fractional notification retention',
      '{"retention": {"notificationDays": 0.5}}',
      'STRAND_CONFIG_INVALID',
      /retention\.notificationDays/,
    ],
    ['a zero notification retention', '{"retention": {"notificationDays": 0}}', 'STRAND_CONFIG_INVALID', /retention\.notificationDays/],
    ['a short API token', '{"server": {"tokens": ["secret"]}}', 'STRAND_CONFIG_INVALID', /server\.tokens\.0/],
    [
      'an API token with a space',
      `{"server": {"tokens": ["${'a'.repeat(20)} ${'b'.repeat(20)}"]}}`,
      'STRAND_CONFIG_INVALID',
      /server\.tokens\.0.*printable/,
    ],
    ['an unknown protect mode', '{"server": {"protect": "reads"}}', 'STRAND_CONFIG_INVALID', /server\.protect/],
    ['a thread count in words', '{"analysis": {"threads": "many"}}', 'STRAND_CONFIG_INVALID', /analysis\.threads/],
    [
      'a webhook secret without the whsec_ prefix',
      '{"webhooks": {"subscribers": [{"name": "a", "url": "http://127.0.0.1:9/x", "secret": "abc"}]}}',
      'STRAND_CONFIG_INVALID',
      /secret/,
    ],
    [
      'a webhook URL that is not http(s)',
      '{"webhooks": {"subscribers": [{"name": "a", "url": "file:///etc/passwd", "secret": "whsec_MfKQ9r8GKYqrTwjUPD8ILPZIo2LaLaSw"}]}}',
      'STRAND_CONFIG_INVALID',
      /url/,
    ],
    [
      'two subscribers of one name',
      '{"webhooks": {"subscribers": [{"name": "a", "url": "https://desk.example/x", "secret": "whsec_MfKQ9r8GKYqrTwjUPD8ILPZIo2LaLaSw"}, {"name": "a", "url": "https://desk.example/x", "secret": "whsec_MfKQ9r8GKYqrTwjUPD8ILPZIo2LaLaSw"}]}}',
      'STRAND_CONFIG_INVALID',
      /subscriber names must differ/,
    ],
    [
      'two alert rules of one name',
      '{"webhooks": {"subscribers": [{"name": "a", "url": "https://desk.example/x", "secret": "whsec_MfKQ9r8GKYqrTwjUPD8ILPZIo2LaLaSw", "rules": [{"name": "r"}, {"name": "r"}]}]}}',
      'STRAND_CONFIG_INVALID',
      /rule names must differ/,
    ],
    [
      'an alert rule with a window but no outlet count',
      '{"webhooks": {"subscribers": [{"name": "a", "url": "https://desk.example/x", "secret": "whsec_MfKQ9r8GKYqrTwjUPD8ILPZIo2LaLaSw", "rules": [{"name": "r", "withinHours": 3}]}]}}',
      'STRAND_CONFIG_INVALID',
      /withinHours needs minOutlets/,
    ],
    [
      'an alert rule for a type that does not exist',
      '{"webhooks": {"subscribers": [{"name": "a", "url": "https://desk.example/x", "secret": "whsec_MfKQ9r8GKYqrTwjUPD8ILPZIo2LaLaSw", "rules": [{"name": "r", "types": ["event.deleted"]}]}]}}',
      'STRAND_CONFIG_INVALID',
      /types/,
    ],
    [
      'an alert rule with a condition it does not know',
      '{"webhooks": {"subscribers": [{"name": "a", "url": "https://desk.example/x", "secret": "whsec_MfKQ9r8GKYqrTwjUPD8ILPZIo2LaLaSw", "rules": [{"name": "r", "script": "rm -rf /"}]}]}}',
      'STRAND_CONFIG_INVALID',
      /script/,
    ],
  ])('refuses %s with a clear message', (_name, text, code, message) => {
    const f = failure(() => loadConfig({ file: file(`bad-${Math.random()}.json`, text), env: {} }));
    expect(f.code).toBe(code);
    expect(f.message).toMatch(message);
  });

  it('refuses a missing file', () => {
    expect(failure(() => loadConfig({ file: join(dir, 'missing.json'), env: {} })).code).toBe('STRAND_CONFIG_UNREADABLE');
  });

  it('refuses an oversized file', () => {
    expect(failure(() => loadConfig({ file: file('big.json', `{"x": "${'a'.repeat(1024 * 1024)}"}`), env: {} })).message).toMatch(
      /over 1 MiB/,
    );
  });

  it('ignores __proto__ keys so a file cannot pollute object prototypes', () => {
    const c = loadConfig({
      file: file('proto.json', '{"__proto__": {"polluted": true}, "link": {"__proto__": {"threshold": 0.9}}}'),
      env: {},
    });
    expect(({} as Record<string, unknown>).polluted).toBeUndefined();
    expect(c.link.threshold).toBe(parseConfig({}).link.threshold);
  });

  it('validates an object given directly', () => {
    expect(parseConfig({}).detect.threshold).toBe(0.5);
  });

  it('adds STRANDLINE_API_TOKEN to the tokens of the file, and checks it like them', () => {
    const fromFile = 'f'.repeat(32);
    const fromEnv = 'e'.repeat(32);
    const c = loadConfig({ file: file('tokens.json', `{"server": {"tokens": ["${fromFile}"]}}`), env: { STRANDLINE_API_TOKEN: fromEnv } });
    expect(c.server.tokens).toEqual([fromFile, fromEnv]);
    expect(loadConfig({ env: { STRANDLINE_API_TOKEN: fromEnv } }).server.tokens).toEqual([fromEnv]);
    expect(failure(() => loadConfig({ env: { STRANDLINE_API_TOKEN: 'short' } })).message).toMatch(/server\.tokens/);
  });

  it('names the environment variable a bad value came from, not only the setting', () => {
    expect(failure(() => loadConfig({ env: { STRANDLINE_API_TOKEN: 'short' } })).message).toMatch(
      /STRANDLINE_API_TOKEN \(server\.tokens\.0\): Too small/,
    );
    expect(failure(() => loadConfig({ env: { PORT: 'eighty' } })).message).toMatch(/PORT \(server\.port\)/);
    expect(failure(() => loadConfig({ env: { STRANDLINE_STORE: 'postgres' } })).message).toMatch(
      /STRANDLINE_STORE \(store\.kind\): .*"sqlite"\|"redis"/,
    );
    // A token from the file in the same list keeps its own name.
    const f = failure(() =>
      loadConfig({
        file: file('short-file-token.json', '{"server": {"tokens": ["short"]}}'),
        env: { STRANDLINE_API_TOKEN: 'e'.repeat(32) },
      }),
    );
    expect(f.message).toMatch(/^ {2}server\.tokens\.0: /m);
    expect(f.message).not.toMatch(/STRANDLINE_API_TOKEN/);
  });

  it('suggests the key a misspelt one may mean, at any depth', () => {
    expect(failure(() => loadConfig({ file: file('typo1.json', '{"link": {"treshold": 0.3}}'), env: {} })).message).toMatch(
      /link: unknown key "treshold" \(did you mean "threshold"\?\)/,
    );
    expect(failure(() => loadConfig({ file: file('typo2.json', '{"link": {"calibration": {"slop": 0.1}}}'), env: {} })).message).toMatch(
      /link\.calibration: unknown key "slop" \(did you mean "slope"\?\)/,
    );
    expect(failure(() => loadConfig({ file: file('typo3.json', '{"servr": {}}'), env: {} })).message).toMatch(
      /\(root\): unknown key "servr" \(did you mean "server"\?\)/,
    );
    // Nothing near: named without a guess.
    expect(failure(() => loadConfig({ file: file('typo4.json', '{"link": {"zebra": 1}}'), env: {} })).message).toMatch(
      /link: unknown key "zebra"$/m,
    );
  });

  it('says why a configuration file cannot be read', () => {
    expect(failure(() => loadConfig({ file: join(dir, 'missing.json'), env: {} })).message).toMatch(
      /cannot read configuration file .*missing\.json: no such file/,
    );
    expect(failure(() => loadConfig({ file: dir, env: {} })).message).toMatch(/: it is a folder/);
  });

  it('keeps settled notifications 30 days unless told otherwise, and for ever when told null', () => {
    expect(parseConfig({}).retention.notificationDays).toBe(30);
    expect(parseConfig({ retention: { notificationDays: null } }).retention.notificationDays).toBeNull();
  });
});

describe('the configuration files shipped in config/', () => {
  it.each(['default.json', 'example-webhooks.json'])('%s loads as it stands', (file) => {
    expect(() => loadConfig({ file: join(import.meta.dirname, '../../config', file), env: {} })).not.toThrow();
  });
});
