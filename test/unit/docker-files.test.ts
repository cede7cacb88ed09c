import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { parse } from 'yaml';
import { configSchema } from '../../src/config/schema.js';

// No container engine runs the tests: these pin the structure the deployment relies on.
// Compose reads YAML merge keys (<<), so the file is parsed with them on.
const dockerfile = readFileSync(new URL('../../docker/Dockerfile', import.meta.url), 'utf8');
const compose = parse(readFileSync(new URL('../../docker/compose.yaml', import.meta.url), 'utf8'), { merge: true }) as {
  services: Record<
    string,
    {
      build?: { context: string; dockerfile: string };
      command?: string[];
      environment?: Record<string, string>;
      depends_on?: Record<string, { condition: string }>;
      deploy?: { replicas: number };
      ports?: string[];
      volumes?: string[];
      healthcheck?: object;
    }
  >;
  volumes: Record<string, unknown>;
};

describe('the Dockerfile', () => {
  it('builds in two stages on a supported Node line (24, active LTS) and runs as an unprivileged user', () => {
    expect(dockerfile.match(/^FROM /gm)).toHaveLength(2);
    // Both stages on the same line: the native modules are built for the Node that runs them.
    expect(dockerfile.match(/^FROM node:24-bookworm-slim( AS build)?$/gm)).toHaveLength(2);
    expect(dockerfile).toMatch(/^COPY --from=build /m);
    expect(dockerfile).toMatch(/^USER node$/m);
    expect(dockerfile).toMatch(/^ENTRYPOINT \["node", "dist\/cli\/main.js"\]$/m);
  });

  it('prepares the language model at build time', () => {
    expect(dockerfile).toMatch(/^RUN node -e .*wink-eng-lite-web-model/m);
  });
});

describe('the compose file', () => {
  it('has Redis with the append-only file on and a volume, checked healthy before the others start', () => {
    const redis = compose.services.redis!;
    expect(redis.command).toEqual(expect.arrayContaining(['--appendonly', 'yes']));
    expect(redis.volumes).toEqual(['redis-data:/data']);
    expect(compose.volumes).toHaveProperty('redis-data');
    expect(redis.healthcheck).toBeDefined();
    for (const name of ['api', 'worker', 'linker'])
      expect(compose.services[name]!.depends_on).toEqual({ redis: { condition: 'service_healthy' } });
  });

  it('runs the API, two workers and the linker from the one image, on the Redis store', () => {
    const roles = Object.fromEntries(
      Object.entries(compose.services)
        .filter(([n]) => n !== 'redis')
        .map(([n, s]) => [n, s.command]),
    );
    expect(roles).toEqual({
      api: ['serve', '--role', 'api'],
      worker: ['serve', '--role', 'worker'],
      linker: ['serve', '--role', 'linker'],
    });
    expect(compose.services.worker!.deploy!.replicas).toBe(2);
    for (const name of ['api', 'worker', 'linker']) {
      const s = compose.services[name]!;
      expect(s.build).toEqual({ context: '..', dockerfile: 'docker/Dockerfile' });
      expect(s.environment).toMatchObject({ STRANDLINE_STORE: 'redis', STRANDLINE_REDIS_URL: 'redis://redis:6379' });
    }
    expect(compose.services.api!.ports).toEqual(['7410:7410']);
    expect(compose.services.api!.environment!.HOST).toBe('0.0.0.0');
  });

  it('uses only roles and stores the configuration accepts', () => {
    const roles = configSchema.shape.process.unwrap().shape.role.unwrap().options;
    for (const s of Object.values(compose.services)) {
      const i = s.command?.indexOf('--role') ?? -1;
      if (i >= 0) expect(roles).toContain(s.command![i + 1]);
    }
  });
});
