import { mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { readReplayInput } from '../../src/ingest/replay-source.js';
import { createLogger } from '../../src/logger.js';
import { createRuntime } from '../../src/runtime.js';
import { openSqliteStore } from '../../src/store/sqlite/sqlite-store.js';
import { DEMO_DIR } from '../helpers/demo.js';
import { runArticles, testConfig } from '../helpers/runtime.js';
import { writeTinyModel } from '../helpers/tiny-model.js';

describe('the pipeline with the transformer embedder', () => {
  it('links the demo with dense vectors from a local model folder', async () => {
    const dir = join(mkdtempSync(join(tmpdir(), 'strandline-tmodel-')), 'model');
    writeTinyModel(dir, 16);
    const config = testConfig({ embed: { kind: 'transformer', modelPath: dir, batchSize: 8 } });
    const rt = await createRuntime(config, createLogger('silent'), openSqliteStore(':memory:'));
    try {
      const input = await readReplayInput([`${DEMO_DIR}feeds`], config.ingest);
      const outcomes = await runArticles(rt, input.articles.slice(0, 30));
      expect(outcomes.every((o) => o.status === 'stored')).toBe(true);
      const counts = await rt.store.counts();
      expect(counts.links).toBeGreaterThanOrEqual(counts.mentions);
      // With dense vectors the candidates come from the centroid index, so mentions do join events.
      expect(counts.events).toBeLessThan(counts.mentions);
    } finally {
      await rt.close();
    }
  });

  it('refuses to start when the configured model folder is empty', async () => {
    const empty = mkdtempSync(join(tmpdir(), 'strandline-nomodel-'));
    await expect(
      createRuntime(testConfig({ embed: { kind: 'transformer', modelPath: empty } }), createLogger('silent'), openSqliteStore(':memory:')),
    ).rejects.toThrow(/STRAND|no usable sentence-embedding model/);
  });
});
