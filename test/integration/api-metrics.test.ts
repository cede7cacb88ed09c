import { describe, expect, it } from 'vitest';
import { Metrics } from '../../src/api/metrics.js';
import { demoApi } from '../helpers/runtime.js';

/**
 * A line of the Prometheus text exposition format 0.0.4 (prometheus.io, "Exposition
 * formats", text-based format): `# HELP`/`# TYPE` comments, or a metric name with optional
 * labels and a value (a float as Go's ParseFloat reads it, so NaN and Inf in any case);
 * empty lines are ignored.
 */
const LINE =
  /^(# (HELP|TYPE) [a-zA-Z_:][a-zA-Z0-9_:]* .*|[a-zA-Z_:][a-zA-Z0-9_:]*(\{([a-zA-Z_][a-zA-Z0-9_]*="(\\.|[^"\\])*",?)*\})? (-?[0-9.eE+-]+|nan|[+-]?inf))$/i;

describe('/metrics', () => {
  it('serves the stored rows, the replay and the process figures in the Prometheus text format', async () => {
    const { rt, app } = await demoApi();
    try {
      const res = await app.inject('/metrics');
      expect(res.statusCode).toBe(200);
      expect(res.headers['content-type']).toMatch(/^text\/plain; version=0\.0\.4/);
      // Empty lines between families are ignored by the format.
      const lines = res.body.split('\n').filter((l) => l !== '');
      expect(lines.filter((l) => !LINE.test(l))).toEqual([]);
      const counts = await rt.store.counts();
      expect(lines).toContain(`strandline_store_rows{kind="articles"} ${counts.articles}`);
      expect(lines).toContain(`strandline_store_rows{kind="links"} ${counts.links}`);
      expect(lines).toContain('strandline_replay_articles{stage="stored"} 101');
      expect(lines.some((l) => l.startsWith('process_cpu_seconds_total '))).toBe(true);
    } finally {
      await app.close();
      await rt.close();
    }
  });

  it('counts webhook deliveries by outcome and times them', async () => {
    const m = new Metrics();
    m.attempted('desk', 'delivered', 0.12);
    m.attempted('desk', 'failed', 2);
    m.attempted('desk', 'delivered', 0.03);
    const text = await m.registry.metrics();
    expect(text).toContain('strandline_webhook_deliveries_total{subscriber="desk",outcome="delivered"} 2');
    expect(text).toContain('strandline_webhook_deliveries_total{subscriber="desk",outcome="failed"} 1');
    expect(text).toContain('strandline_webhook_delivery_seconds_bucket{le="0.05",subscriber="desk"} 1');
    expect(text).toContain('strandline_webhook_delivery_seconds_count{subscriber="desk"} 3');
  });
});
