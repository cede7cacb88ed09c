import { mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import Database from 'better-sqlite3';
import { beforeAll, describe, expect, it } from 'vitest';
import { vectorSpaceOf } from '../../src/embed/vector-space.js';
import { isStrandError } from '../../src/errors.js';
import { readReplayInput } from '../../src/ingest/replay-source.js';
import { createLogger } from '../../src/logger.js';
import type { Article } from '../../src/records.js';
import { createRuntime } from '../../src/runtime.js';
import { openSqliteStore } from '../../src/store/sqlite/sqlite-store.js';
import { DEMO_DIR } from '../helpers/demo.js';
import { runArticles, testConfig } from '../helpers/runtime.js';
import { writeTinyModel } from '../helpers/tiny-model.js';

const scratch = () => mkdtempSync(join(tmpdir(), 'strandline-space-'));

/** Opens a runtime on `file` with `embed` settings, runs `articles` through it, closes it. */
async function runOn(file: string, embed: Record<string, unknown>, articles: Article[] = []): Promise<void> {
  const config = testConfig({ embed });
  const rt = await createRuntime(config, createLogger('silent'), openSqliteStore(file));
  try {
    await runArticles(rt, articles);
  } finally {
    await rt.close();
  }
}

/** The error createRuntime gives on `file` with `embed` settings (the store it opened is closed by the caller). */
async function refusal(file: string, embed: Record<string, unknown>): Promise<Error> {
  const store = openSqliteStore(file);
  try {
    await createRuntime(testConfig({ embed }), createLogger('silent'), store);
  } catch (err) {
    return err as Error;
  } finally {
    await store.close();
  }
  throw new Error('the runtime started');
}

describe('the vector space a store was made in', () => {
  let articles: Article[];
  beforeAll(async () => {
    articles = (await readReplayInput([`${DEMO_DIR}feeds`], testConfig().ingest)).articles.slice(0, 5);
  });

  it('is recorded by the first process and accepted from then on', async () => {
    const file = join(scratch(), 'a.sqlite');
    await runOn(file, { hashBits: 18 }, articles);
    await runOn(file, { hashBits: 18 }, articles.slice(0, 1));
    const db = new Database(file, { readonly: true });
    expect(db.prepare(`SELECT value FROM meta WHERE key = 'vector_space'`).pluck().get()).toBe(
      'tfidf: hashed unigrams, 2^18 features, idf^2',
    );
    db.close();
  });

  it('refuses other TF-IDF settings, naming both', async () => {
    const file = join(scratch(), 'b.sqlite');
    await runOn(file, { hashBits: 18 }, articles);
    const err = await refusal(file, { hashBits: 20 });
    expect(isStrandError(err, 'STRAND_VECTOR_SPACE_CHANGED')).toBe(true);
    expect(err.message).toMatch(/2\^18 features.*2\^20 features/);
  });

  it('refuses a store made before the word-evidence settings, saying which settings keep it', async () => {
    const file = join(scratch(), 'e.sqlite');
    await runOn(file, { hashBits: 18, bigrams: true, idfPower: 1 }, articles);
    const db = new Database(file, { readonly: true });
    // The form stores recorded before embed.bigrams and embed.idfPower existed.
    expect(db.prepare(`SELECT value FROM meta WHERE key = 'vector_space'`).pluck().get()).toBe(
      'tfidf: hashed unigrams and bigrams, 2^18 features',
    );
    db.close();
    const err = await refusal(file, { hashBits: 18 });
    expect(isStrandError(err, 'STRAND_VECTOR_SPACE_CHANGED')).toBe(true);
    expect(err.message).toMatch(/set them to true and 1/);
  });

  it('refuses a transformer on TF-IDF vectors stored before the space was recorded', async () => {
    const file = join(scratch(), 'c.sqlite');
    await runOn(file, { hashBits: 18 }, articles);
    const db = new Database(file);
    db.prepare(`DELETE FROM meta WHERE key = 'vector_space'`).run();
    db.close();
    const model = join(scratch(), 'model');
    writeTinyModel(model, 8);
    const err = await refusal(file, { kind: 'transformer', modelPath: model });
    expect(isStrandError(err, 'STRAND_VECTOR_SPACE_CHANGED')).toBe(true);
    expect(err.message).toMatch(/tfidf/);
  });

  it('tells two models in the same folder apart by their weights', async () => {
    const model = join(scratch(), 'model');
    writeTinyModel(model, 8);
    const first = await vectorSpaceOf(testConfig({ embed: { kind: 'transformer', modelPath: model } }).embed);
    expect(await vectorSpaceOf(testConfig({ embed: { kind: 'transformer', modelPath: model } }).embed)).toBe(first);
    writeTinyModel(model, 16);
    expect(await vectorSpaceOf(testConfig({ embed: { kind: 'transformer', modelPath: model } }).embed)).not.toBe(first);
  });

  it('lets a process with the right settings open a store that a refused process left', async () => {
    const file = join(scratch(), 'd.sqlite');
    await runOn(file, { hashBits: 18 }, articles);
    await refusal(file, { hashBits: 19 });
    await runOn(file, { hashBits: 18 }, articles.slice(0, 1));
  });
});
